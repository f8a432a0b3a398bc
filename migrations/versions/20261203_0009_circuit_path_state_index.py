"""circuit path state index

Circuits whose paths cannot be walked are named by every dispatcher answer, so they are
looked up by their path state. Circuits with no Z end now keep the steps their A end reaches
(as broken ones always did): `plantdb check` re-traces every circuit and fills them in.

Revision ID: 0009
Revises: 0008
Create Date: 2026-12-03 12:40:00
"""

from __future__ import annotations

from collections.abc import Sequence

from alembic import op

revision: str = "0009"
down_revision: str | None = "0008"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("circuit", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_circuit_path_state"), ["path_state"], unique=False)


def downgrade() -> None:
    with op.batch_alter_table("circuit", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_circuit_path_state"))
