"""Plugs and heads: the seat's diameters and angle, and thread-repair inserts (issue 18).

Plugs gain the gasket's outside diameter, a conical seat's included angle and its largest
diameter; heads gain the spot face, a counterbore, a conical seat's angle and the insert
(kind, length with its tolerance, a solid insert's outer thread, material). NULL: not
given. The parts counter's covering index takes the three plug columns before sku and
stock, since the fit engine now reads them (repository.DESIGN_COLUMNS).

Revision ID: 0008
Revises: 0007
Create Date: 2025-01-08 00:00:00
"""
from __future__ import annotations

from typing import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0008"
down_revision: str | Sequence[str] | None = "0007"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

# Plain ALTER TABLE both ways, also on SQLite, as in 0005 and 0006: a batch copy of the
# tables would lose the generation triggers migration 0004 put on plugs and heads. An
# index is dropped and created on its own, which rebuilds no table.

PLUG_COLUMNS = (("gasket_outside_diameter_mm", sa.Float()), ("seat_angle_deg", sa.Float()),
                ("seat_diameter_mm", sa.Float()))
HEAD_COLUMNS = (("spot_face_diameter_mm", sa.Float()), ("counterbore_diameter_mm", sa.Float()),
                ("seat_angle_deg", sa.Float()), ("insert_kind", sa.String(16)),
                ("insert_length_nominal_mm", sa.Float()), ("insert_length_plus_mm", sa.Float()),
                ("insert_length_minus_mm", sa.Float()), ("insert_outer_thread", sa.String(32)),
                ("insert_material", sa.String(32)))

# Kept literal (not imported from the models or 0002) so the migration never changes after the fact.
COUNTER_INDEX_BEFORE = [
    "thread", "seat",
    "reach_nominal_mm", "reach_plus_mm", "reach_minus_mm",
    "gasket_thickness_nominal_mm", "gasket_thickness_plus_mm", "gasket_thickness_minus_mm",
    "firing_end_nominal_mm", "firing_end_plus_mm", "firing_end_minus_mm",
    "hex_mm", "resistor",
    "terminal_height_nominal_mm", "terminal_height_plus_mm", "terminal_height_minus_mm",
    "heat_range_scale", "heat_range_value", "gap_mm",
    "sku", "quantity_on_hand",
]
COUNTER_INDEX_AFTER = [
    *COUNTER_INDEX_BEFORE[:-2],
    "gasket_outside_diameter_mm", "seat_angle_deg", "seat_diameter_mm",
    "sku", "quantity_on_hand",
]


def upgrade() -> None:
    for name, column_type in PLUG_COLUMNS:
        op.add_column("plugs", sa.Column(name, column_type, nullable=True))
    for name, column_type in HEAD_COLUMNS:
        op.add_column("heads", sa.Column(name, column_type, nullable=True))
    op.drop_index("ix_plugs_counter", table_name="plugs")
    op.create_index("ix_plugs_counter", "plugs", COUNTER_INDEX_AFTER)


def downgrade() -> None:
    op.drop_index("ix_plugs_counter", table_name="plugs")
    op.create_index("ix_plugs_counter", "plugs", COUNTER_INDEX_BEFORE)
    # SQLite drops a column in place since 3.35 (no indexed column is dropped here).
    for name, _type in reversed(HEAD_COLUMNS):
        op.drop_column("heads", name)
    for name, _type in reversed(PLUG_COLUMNS):
        op.drop_column("plugs", name)
