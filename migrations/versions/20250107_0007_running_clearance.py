"""Heads: the engine's highest speed and its connecting rod, for the running clearance.

At speed the piston comes nearer the head than at rest (the rod stretches under the
piston's inertia, the bearing clearances are taken up): with `max_rpm`, `rod_material`,
`reciprocating_mass_g` and `rod_section_area_mm2` (and the existing stroke and rod length)
the piston margin takes off an estimate of it. All NULL: not given.

Revision ID: 0007
Revises: 0006
Create Date: 2025-01-07 00:00:00
"""
from __future__ import annotations

from typing import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0007"
down_revision: str | Sequence[str] | None = "0006"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

# Plain ALTER TABLE both ways, also on SQLite, as in 0005 and 0006: a batch copy of the
# table would lose the generation triggers migration 0004 put on heads.
_COLUMNS = (
    ("max_rpm", sa.Float()),
    ("rod_material", sa.String(length=16)),
    ("reciprocating_mass_g", sa.Float()),
    ("rod_section_area_mm2", sa.Float()),
)


def upgrade() -> None:
    for name, column_type in _COLUMNS:
        op.add_column("heads", sa.Column(name, column_type, nullable=True))


def downgrade() -> None:
    # SQLite drops a column in place since 3.35.
    for name, _column_type in reversed(_COLUMNS):
        op.drop_column("heads", name)
