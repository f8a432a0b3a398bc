"""history of panels, structures and spans: what a change concerns, four more columns

Revision ID: 0008
Revises: 0007
Create Date: 2026-12-03 12:30:00

`panel_id` (and `other_panel_id`, the second panel of a jumper), `structure_id` and `span_id`
name the panel, structure or span a change concerns, each with a partial index as the other
columns of the kind have. The rows already recorded get them from the record as it stands:
a thing whose row was removed since keeps them empty (nothing removes panels, structures,
spans, terminations or jumpers today).
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0008"
down_revision: str | None = "0007"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

CONCERNING = ("panel_id", "other_panel_id", "structure_id", "span_id")

# The recorded rows' new columns, from the record (each statement runs on SQLite and
# PostgreSQL alike: correlated subqueries, no UPDATE ... FROM).
BACKFILL = (
    "UPDATE change SET panel_id = entity_id WHERE entity = 'panel'",
    "UPDATE change SET structure_id = entity_id WHERE entity = 'structure'",
    "UPDATE change SET span_id = entity_id WHERE entity = 'span'",
    *(
        f"UPDATE change SET structure_id = (SELECT structure_id FROM {table}"  # noqa: S608
        f" WHERE {table}.id = change.entity_id) WHERE entity = '{table}'"
        for table in ("closure", "panel", "equipment")
    ),
    "UPDATE change SET panel_id = (SELECT port.panel_id FROM fiber_end"
    " JOIN port ON port.id = fiber_end.port_id WHERE fiber_end.id = change.entity_id)"
    " WHERE entity = 'termination'",
    "UPDATE change SET"
    " panel_id = (SELECT panel_id FROM port"
    " WHERE port.jumper_id = change.entity_id AND port.jumper_side = 1),"
    " other_panel_id = (SELECT panel_id FROM port"
    " WHERE port.jumper_id = change.entity_id AND port.jumper_side = 2)"
    " WHERE entity = 'jumper'",
    "UPDATE change SET panel_id = (SELECT panel_id FROM splitter"
    " WHERE splitter.id = change.entity_id) WHERE entity = 'splitter'",
)


def upgrade() -> None:
    for column in CONCERNING:
        op.add_column("change", sa.Column(column, sa.Integer(), nullable=True))
    for statement in BACKFILL:
        op.execute(statement)
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


def downgrade() -> None:
    for column in CONCERNING:
        op.drop_index(op.f(f"ix_change_{column}"), table_name="change")
    with op.batch_alter_table("change", schema=None) as batch_op:
        for column in reversed(CONCERNING):
            batch_op.drop_column(column)
