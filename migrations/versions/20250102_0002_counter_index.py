"""A covering index for the parts counter (fitting-plugs, interchanges).

The counter groups a head's candidate plugs by design (every column the fit engine
reads) and runs the engine once per design. With every such column in one index after
(thread, seat), SQLite and PostgreSQL answer that grouping from the index alone, in
index order, without reading the table or sorting: measured on 100,000 plugs, the
difference between a table scan of each candidate and a walk over the index
(benchmarks/bench_counter.py). sku follows the design's columns, so the plugs of one
design come out of the index already in sku order (a page is cut without sorting), and
quantity_on_hand is last so the in-stock filter is answered from the index too.

Revision ID: 0002
Revises: 0001
Create Date: 2025-01-02 00:00:00
"""
from __future__ import annotations

from typing import Sequence

from alembic import op

revision: str = "0002"
down_revision: str | Sequence[str] | None = "0001"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

# Kept literal (not imported from the models) so the migration never changes after the fact.
COUNTER_INDEX_COLUMNS = [
    "thread", "seat",
    "reach_nominal_mm", "reach_plus_mm", "reach_minus_mm",
    "gasket_thickness_nominal_mm", "gasket_thickness_plus_mm", "gasket_thickness_minus_mm",
    "firing_end_nominal_mm", "firing_end_plus_mm", "firing_end_minus_mm",
    "hex_mm", "resistor",
    "terminal_height_nominal_mm", "terminal_height_plus_mm", "terminal_height_minus_mm",
    "heat_range_scale", "heat_range_value", "gap_mm",
    "sku", "quantity_on_hand",
]


def upgrade() -> None:
    op.create_index("ix_plugs_counter", "plugs", COUNTER_INDEX_COLUMNS)


def downgrade() -> None:
    op.drop_index("ix_plugs_counter", table_name="plugs")
