"""Heads say how their intake is charged: boost_pressure (gauge) and forced_induction.

A boosted head could only give its absolute intake_pressure, and a head that gave none was
estimated at the atmosphere, so a boosted engine's gap check passed on a charge far thinner
than it runs on. boost_pressure is the gauge reading (above the atmosphere) a tuner knows;
forced_induction true with neither pressure makes the gap check NOT_CHECKED. Both columns
are nullable: existing heads keep their meaning (no boost stated).

Revision ID: 0005
Revises: 0004
Create Date: 2025-01-05 00:00:00
"""
from __future__ import annotations

from typing import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0005"
down_revision: str | Sequence[str] | None = "0004"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


# Plain ALTER TABLE both ways, also on SQLite: a batch copy of the table (alembic's way of
# dropping a column there) would lose the generation triggers migration 0004 put on heads.


def upgrade() -> None:
    op.add_column("heads", sa.Column("boost_pressure_bar", sa.Float(), nullable=True))
    op.add_column("heads", sa.Column("forced_induction", sa.Boolean(), nullable=True))


def downgrade() -> None:
    # SQLite drops a column in place since 3.35.
    op.drop_column("heads", "forced_induction")
    op.drop_column("heads", "boost_pressure_bar")
