"""index of the circuits no walk can place

Circuits whose paths cannot be walked are named by every dispatcher answer, so they are
found through a partial index of those circuits alone. Circuits with no Z end now keep the
steps their A end reaches (as broken ones always did): `plantdb check` re-traces every
circuit and fills them in.

Revision ID: 0009
Revises: 0008
Create Date: 2026-12-03 12:40:00
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0009"
down_revision: str | None = "0008"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


UNTRACED = "path_state = 'records_error'"


def upgrade() -> None:
    with op.batch_alter_table("circuit", schema=None) as batch_op:
        batch_op.create_index(
            "ix_circuit_untraced",
            ["label"],
            unique=False,
            sqlite_where=sa.text(UNTRACED),
            postgresql_where=sa.text(UNTRACED),
        )


def downgrade() -> None:
    with op.batch_alter_table("circuit", schema=None) as batch_op:
        batch_op.drop_index("ix_circuit_untraced")
