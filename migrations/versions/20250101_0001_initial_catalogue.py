"""Initial tables: plug inventory, head ports, API keys.

Revision ID: 0001
Revises:
Create Date: 2025-01-01 00:00:00
"""
from __future__ import annotations

from typing import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0001"
down_revision: str | Sequence[str] | None = None
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def _length_columns(name: str) -> list[sa.Column]:
    """A length with its tolerance: nominal, plus and minus, in millimetres."""
    return [sa.Column(f"{name}_{part}_mm", sa.Float(), nullable=True) for part in ("nominal", "plus", "minus")]


def _timestamps_and_version() -> list[sa.Column]:
    return [
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("version", sa.Integer(), server_default="1", nullable=False),
    ]


def upgrade() -> None:
    op.create_table(
        "plugs",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("sku", sa.String(64), nullable=False),
        sa.Column("description", sa.String(500), nullable=True),
        sa.Column("thread", sa.String(32), nullable=False),
        sa.Column("nonstandard_thread", sa.Boolean(), server_default=sa.false(), nullable=False),
        sa.Column("seat", sa.String(16), nullable=False),
        *_length_columns("reach"),
        *_length_columns("gasket_thickness"),
        *_length_columns("firing_end"),
        *_length_columns("terminal_height"),
        sa.Column("hex_mm", sa.Float(), nullable=True),
        sa.Column("resistor", sa.Boolean(), nullable=True),
        sa.Column("heat_range_scale", sa.String(32), nullable=True),
        sa.Column("heat_range_value", sa.Float(), nullable=True),
        sa.Column("gap_mm", sa.Float(), nullable=True),
        sa.Column("quantity_on_hand", sa.Integer(), server_default="0", nullable=False),
        sa.Column("location", sa.String(100), nullable=True),
        *_timestamps_and_version(),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_plugs")),
        sa.UniqueConstraint("sku", name=op.f("uq_plugs_sku")),
    )
    # The fitting-plugs search narrows 100,000 plugs by thread and seat first.
    op.create_index("ix_plugs_thread_seat", "plugs", ["thread", "seat"])

    op.create_table(
        "heads",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("head_id", sa.String(64), nullable=False),
        sa.Column("description", sa.String(500), nullable=True),
        sa.Column("thread", sa.String(32), nullable=False),
        sa.Column("nonstandard_thread", sa.Boolean(), server_default=sa.false(), nullable=False),
        sa.Column("seat", sa.String(16), nullable=False),
        *_length_columns("port_depth"),
        *_length_columns("design_reach"),
        *_length_columns("port_depth_long_side"),
        *_length_columns("piston_clearance"),
        *_length_columns("seat_to_piston"),
        *_length_columns("valve_clearance"),
        *_length_columns("seat_to_valve"),
        sa.Column("well_bore_mm", sa.Float(), nullable=True),
        sa.Column("hex_mm", sa.Float(), nullable=True),
        sa.Column("resistor_required", sa.Boolean(), nullable=True),
        sa.Column("material", sa.String(16), nullable=True),
        sa.Column("heat_range_band_scale", sa.String(32), nullable=True),
        sa.Column("heat_range_band_min", sa.Float(), nullable=True),
        sa.Column("heat_range_band_max", sa.Float(), nullable=True),
        *_length_columns("boot_range_min"),
        *_length_columns("boot_range_max"),
        sa.Column("compression_ratio", sa.Float(), nullable=True),
        sa.Column("intake_pressure_bar", sa.Float(), nullable=True),
        sa.Column("intake_temperature_k", sa.Float(), nullable=True),
        sa.Column("peak_pressure_bar", sa.Float(), nullable=True),
        sa.Column("ignition_voltage_kv", sa.Float(), nullable=True),
        sa.Column("bore_mm", sa.Float(), nullable=True),
        sa.Column("stroke_mm", sa.Float(), nullable=True),
        sa.Column("rod_length_mm", sa.Float(), nullable=True),
        sa.Column("spark_advance_deg", sa.Float(), nullable=True),
        *_timestamps_and_version(),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_heads")),
        sa.UniqueConstraint("head_id", name=op.f("uq_heads_head_id")),
    )

    op.create_table(
        "api_keys",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(100), nullable=False),
        sa.Column("prefix", sa.String(16), nullable=False),
        sa.Column("key_hash", sa.String(64), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_api_keys")),
        sa.UniqueConstraint("name", name=op.f("uq_api_keys_name")),
        sa.UniqueConstraint("key_hash", name=op.f("uq_api_keys_key_hash")),
    )
    op.create_index(op.f("ix_api_keys_prefix"), "api_keys", ["prefix"])


def downgrade() -> None:
    op.drop_index(op.f("ix_api_keys_prefix"), table_name="api_keys")
    op.drop_table("api_keys")
    op.drop_table("heads")
    op.drop_index("ix_plugs_thread_seat", table_name="plugs")
    op.drop_table("plugs")
