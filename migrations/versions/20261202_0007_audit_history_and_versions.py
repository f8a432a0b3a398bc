"""audit history and versions: the change table; circuit and splice versions

Revision ID: 0007
Revises: 0006
Create Date: 2026-12-02 05:50:44.686659
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0007"
down_revision: str | None = "0006"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

CONCERNING = ("closure_id", "cable_id", "other_cable_id", "circuit_id")


def upgrade() -> None:
    op.create_table(
        "change",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("at", sa.DateTime(), nullable=False),
        sa.Column("actor", sa.String(length=100), nullable=False),
        sa.Column(
            "action",
            sa.Enum(
                "insert",
                "update",
                "delete",
                name="action",
                native_enum=False,
                create_constraint=True,
            ),
            nullable=False,
        ),
        sa.Column("entity", sa.String(length=32), nullable=False),
        sa.Column("entity_id", sa.Integer(), nullable=True),
        sa.Column("label", sa.String(length=200), nullable=False),
        sa.Column("closure_id", sa.Integer(), nullable=True),
        sa.Column("cable_id", sa.Integer(), nullable=True),
        sa.Column("other_cable_id", sa.Integer(), nullable=True),
        sa.Column("circuit_id", sa.Integer(), nullable=True),
        sa.Column("before", sa.JSON(none_as_null=True), nullable=True),
        sa.Column("after", sa.JSON(none_as_null=True), nullable=True),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_change")),
    )
    # Partial indexes: a change concerns one or two of these; NULLs are not indexed.
    for column in CONCERNING:
        where = sa.text(f"{column} IS NOT NULL")
        op.create_index(
            op.f(f"ix_change_{column}"),
            "change",
            [column],
            unique=False,
            sqlite_where=where,
            postgresql_where=where,
        )

    with op.batch_alter_table("circuit", schema=None) as batch_op:
        batch_op.add_column(
            sa.Column("version", sa.Integer(), server_default=sa.text("1"), nullable=False)
        )

    # On SQLite the splice table is rebuilt with AUTOINCREMENT, so a removed splice's id is
    # never given to a new one (PostgreSQL's sequences never reuse an id anyway).
    sqlite = op.get_bind().dialect.name == "sqlite"
    with op.batch_alter_table(
        "splice",
        schema=None,
        recreate="always" if sqlite else "auto",
        table_kwargs={"sqlite_autoincrement": True} if sqlite else {},
    ) as batch_op:
        batch_op.add_column(
            sa.Column("version", sa.Integer(), server_default=sa.text("1"), nullable=False)
        )


def downgrade() -> None:
    with op.batch_alter_table("splice", schema=None) as batch_op:
        batch_op.drop_column("version")

    with op.batch_alter_table("circuit", schema=None) as batch_op:
        batch_op.drop_column("version")

    for column in CONCERNING:
        op.drop_index(op.f(f"ix_change_{column}"), table_name="change")
    op.drop_table("change")
