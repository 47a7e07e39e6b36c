"""Heads: the plug's inclination to the cylinder axis.

An inclined plug's shell edge reaches a flat crown before its electrode tip does, so the
piston margin needs the angle between the plug axis and the cylinder axis (degrees;
NULL: not given, 0 assumed and said so in the result's assumptions).

Revision ID: 0006
Revises: 0005
Create Date: 2025-01-06 00:00:00
"""
from __future__ import annotations

from typing import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0006"
down_revision: str | Sequence[str] | None = "0005"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

# Plain ALTER TABLE both ways, also on SQLite, as in 0005: a batch copy of the table would
# lose the generation triggers migration 0004 put on heads.


def upgrade() -> None:
    op.add_column("heads", sa.Column("plug_inclination_deg", sa.Float(), nullable=True))


def downgrade() -> None:
    # SQLite drops a column in place since 3.35.
    op.drop_column("heads", "plug_inclination_deg")
