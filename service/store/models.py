"""Tables, as SQLAlchemy 2 declarative classes.

A length is three columns (`<name>_nominal_mm`, `<name>_plus_mm`, `<name>_minus_mm`)
because the contract keeps every tolerance a client sends; a length never given is
three NULLs, never a silent default. The schema itself changes only through Alembic
(`migrations/versions/`); these classes must match the newest migration, which
`tests/integration/test_migrations.py` checks.
"""
from __future__ import annotations

from datetime import UTC, datetime
from typing import Any, ClassVar

from sqlalchemy import JSON, BigInteger, Boolean, DateTime, Float, Index, Integer, MetaData, String, false
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column

IDENTIFIER_LENGTH = 64

# Stable constraint names so migrations can alter them on every backend.
NAMING_CONVENTION = {
    "ix": "ix_%(table_name)s_%(column_0_N_name)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


def utc_now() -> datetime:
    return datetime.now(UTC)


class Base(DeclarativeBase):
    metadata = MetaData(naming_convention=NAMING_CONVENTION)


def _length(nullable: bool = True) -> Mapped[float | None]:
    return mapped_column(Float, nullable=nullable)


class Timestamped:
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utc_now, nullable=False)
    updated_at: Mapped[datetime] = mapped_column(
        DateTime(timezone=True), default=utc_now, onupdate=utc_now, nullable=False
    )


class Plug(Timestamped, Base):
    """One inventory line: a plug design under the shop's own `sku`."""

    __tablename__ = "plugs"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    sku: Mapped[str] = mapped_column(String(IDENTIFIER_LENGTH), unique=True, nullable=False)
    description: Mapped[str | None] = mapped_column(String(500))
    thread: Mapped[str] = mapped_column(String(32), nullable=False)
    # Accept a thread the catalogue does not list (the client said so explicitly).
    nonstandard_thread: Mapped[bool] = mapped_column(Boolean, nullable=False, default=False, server_default=false())
    seat: Mapped[str] = mapped_column(String(16), nullable=False)
    reach_nominal_mm: Mapped[float | None] = _length()
    reach_plus_mm: Mapped[float | None] = _length()
    reach_minus_mm: Mapped[float | None] = _length()
    gasket_thickness_nominal_mm: Mapped[float | None] = _length()
    gasket_thickness_plus_mm: Mapped[float | None] = _length()
    gasket_thickness_minus_mm: Mapped[float | None] = _length()
    firing_end_nominal_mm: Mapped[float | None] = _length()
    firing_end_plus_mm: Mapped[float | None] = _length()
    firing_end_minus_mm: Mapped[float | None] = _length()
    terminal_height_nominal_mm: Mapped[float | None] = _length()
    terminal_height_plus_mm: Mapped[float | None] = _length()
    terminal_height_minus_mm: Mapped[float | None] = _length()
    hex_mm: Mapped[float | None] = _length()
    resistor: Mapped[bool | None] = mapped_column(Boolean)
    heat_range_scale: Mapped[str | None] = mapped_column(String(32))
    heat_range_value: Mapped[float | None] = mapped_column(Float)
    gap_mm: Mapped[float | None] = _length()
    gasket_outside_diameter_mm: Mapped[float | None] = _length()  # migration 0008
    seat_angle_deg: Mapped[float | None] = mapped_column(Float)  # migration 0008
    seat_diameter_mm: Mapped[float | None] = _length()  # migration 0008
    quantity_on_hand: Mapped[int] = mapped_column(Integer, nullable=False, default=0, server_default="0")
    location: Mapped[str | None] = mapped_column(String(100))
    # Bumped on every UPDATE (SQLAlchemy checks it, so two writers cannot both win);
    # the ETag is derived from it.
    version: Mapped[int] = mapped_column(Integer, nullable=False, default=1, server_default="1")

    __mapper_args__: ClassVar[dict[str, Any]] = {"version_id_col": version}
    __table_args__ = (
        # The fitting-plugs search narrows 100,000 plugs by thread and seat first.
        Index("ix_plugs_thread_seat", "thread", "seat"),
        # The parts counter groups candidates by design from this index alone
        # (migration 0002, widened by 0008; repository.DESIGN_COLUMNS, then sku and stock).
        Index("ix_plugs_counter", "thread", "seat",
              "reach_nominal_mm", "reach_plus_mm", "reach_minus_mm",
              "gasket_thickness_nominal_mm", "gasket_thickness_plus_mm", "gasket_thickness_minus_mm",
              "firing_end_nominal_mm", "firing_end_plus_mm", "firing_end_minus_mm",
              "hex_mm", "resistor",
              "terminal_height_nominal_mm", "terminal_height_plus_mm", "terminal_height_minus_mm",
              "heat_range_scale", "heat_range_value", "gap_mm",
              "gasket_outside_diameter_mm", "seat_angle_deg", "seat_diameter_mm", "sku", "quantity_on_hand"),
    )


class Head(Timestamped, Base):
    """One cylinder-head design's plug port, plus the engine conditions at the plug."""

    __tablename__ = "heads"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    head_id: Mapped[str] = mapped_column(String(IDENTIFIER_LENGTH), unique=True, nullable=False)
    description: Mapped[str | None] = mapped_column(String(500))
    thread: Mapped[str] = mapped_column(String(32), nullable=False)
    # Accept a thread the catalogue does not list (the client said so explicitly).
    nonstandard_thread: Mapped[bool] = mapped_column(Boolean, nullable=False, default=False, server_default=false())
    seat: Mapped[str] = mapped_column(String(16), nullable=False)
    port_depth_nominal_mm: Mapped[float | None] = _length()
    port_depth_plus_mm: Mapped[float | None] = _length()
    port_depth_minus_mm: Mapped[float | None] = _length()
    design_reach_nominal_mm: Mapped[float | None] = _length()
    design_reach_plus_mm: Mapped[float | None] = _length()
    design_reach_minus_mm: Mapped[float | None] = _length()
    port_depth_long_side_nominal_mm: Mapped[float | None] = _length()
    port_depth_long_side_plus_mm: Mapped[float | None] = _length()
    port_depth_long_side_minus_mm: Mapped[float | None] = _length()
    piston_clearance_nominal_mm: Mapped[float | None] = _length()
    piston_clearance_plus_mm: Mapped[float | None] = _length()
    piston_clearance_minus_mm: Mapped[float | None] = _length()
    seat_to_piston_nominal_mm: Mapped[float | None] = _length()
    seat_to_piston_plus_mm: Mapped[float | None] = _length()
    seat_to_piston_minus_mm: Mapped[float | None] = _length()
    valve_clearance_nominal_mm: Mapped[float | None] = _length()
    valve_clearance_plus_mm: Mapped[float | None] = _length()
    valve_clearance_minus_mm: Mapped[float | None] = _length()
    seat_to_valve_nominal_mm: Mapped[float | None] = _length()
    seat_to_valve_plus_mm: Mapped[float | None] = _length()
    seat_to_valve_minus_mm: Mapped[float | None] = _length()
    plug_inclination_deg: Mapped[float | None] = mapped_column(Float)  # migration 0006
    well_bore_mm: Mapped[float | None] = _length()
    hex_mm: Mapped[float | None] = _length()
    resistor_required: Mapped[bool | None] = mapped_column(Boolean)
    material: Mapped[str | None] = mapped_column(String(16))
    heat_range_band_scale: Mapped[str | None] = mapped_column(String(32))
    heat_range_band_min: Mapped[float | None] = mapped_column(Float)
    heat_range_band_max: Mapped[float | None] = mapped_column(Float)
    boot_range_min_nominal_mm: Mapped[float | None] = _length()
    boot_range_min_plus_mm: Mapped[float | None] = _length()
    boot_range_min_minus_mm: Mapped[float | None] = _length()
    boot_range_max_nominal_mm: Mapped[float | None] = _length()
    boot_range_max_plus_mm: Mapped[float | None] = _length()
    boot_range_max_minus_mm: Mapped[float | None] = _length()
    compression_ratio: Mapped[float | None] = mapped_column(Float)
    intake_pressure_bar: Mapped[float | None] = mapped_column(Float)  # absolute
    boost_pressure_bar: Mapped[float | None] = mapped_column(Float)  # gauge
    forced_induction: Mapped[bool | None] = mapped_column(Boolean)
    intake_temperature_k: Mapped[float | None] = mapped_column(Float)
    peak_pressure_bar: Mapped[float | None] = mapped_column(Float)
    ignition_voltage_kv: Mapped[float | None] = mapped_column(Float)
    bore_mm: Mapped[float | None] = _length()
    stroke_mm: Mapped[float | None] = _length()
    rod_length_mm: Mapped[float | None] = _length()
    spark_advance_deg: Mapped[float | None] = mapped_column(Float)
    # The running clearance (migration 0007): highest speed, rod material, reciprocating
    # mass (g, one cylinder) and the rod's smallest section (mm²).
    max_rpm: Mapped[float | None] = mapped_column(Float)
    rod_material: Mapped[str | None] = mapped_column(String(16))
    reciprocating_mass_g: Mapped[float | None] = mapped_column(Float)
    rod_section_area_mm2: Mapped[float | None] = mapped_column(Float)
    # The seat's machining and a thread-repair insert (migration 0008).
    spot_face_diameter_mm: Mapped[float | None] = _length()
    counterbore_diameter_mm: Mapped[float | None] = _length()
    seat_angle_deg: Mapped[float | None] = mapped_column(Float)
    insert_kind: Mapped[str | None] = mapped_column(String(16))
    insert_length_nominal_mm: Mapped[float | None] = _length()
    insert_length_plus_mm: Mapped[float | None] = _length()
    insert_length_minus_mm: Mapped[float | None] = _length()
    insert_outer_thread: Mapped[str | None] = mapped_column(String(32))
    insert_material: Mapped[str | None] = mapped_column(String(32))
    version: Mapped[int] = mapped_column(Integer, nullable=False, default=1, server_default="1")

    __mapper_args__: ClassVar[dict[str, Any]] = {"version_id_col": version}


class ApiKey(Base):
    """A key for writes. Only the SHA-256 of the key is kept; `prefix` (the first
    characters of the key, not secret) finds the row and tells an operator which key
    is which."""

    __tablename__ = "api_keys"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(100), unique=True, nullable=False)
    prefix: Mapped[str] = mapped_column(String(16), nullable=False, index=True)
    key_hash: Mapped[str] = mapped_column(String(64), unique=True, nullable=False)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utc_now, nullable=False)


class ChangeRecord(Base):
    """One change to a plug or head: who, when, what it was before and after.

    Append-only (service/store/history.py writes it in the same transaction as the change;
    database triggers from migration 0003 refuse UPDATE and DELETE). Keyed by the
    record's identifier, not its row id, so a deleted record's history stays readable.
    """

    __tablename__ = "change_history"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    resource: Mapped[str] = mapped_column(String(8), nullable=False)
    identifier: Mapped[str] = mapped_column(String(IDENTIFIER_LENGTH), nullable=False)
    action: Mapped[str] = mapped_column(String(16), nullable=False)
    actor: Mapped[str] = mapped_column(String(100), nullable=False)
    source: Mapped[str] = mapped_column(String(16), nullable=False)
    changed_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), nullable=False)
    version_before: Mapped[int | None] = mapped_column(Integer)
    version_after: Mapped[int | None] = mapped_column(Integer)
    before: Mapped[dict | None] = mapped_column(JSON)
    after: Mapped[dict | None] = mapped_column(JSON)

    __table_args__ = (
        # A record's history page: its entries in order.
        Index("ix_change_history_record", "resource", "identifier", "id"),
    )


class TableGeneration(Base):
    """How many times a table has changed: database triggers (migration 0004) raise
    `generation` in the same transaction as every insert, update and delete of the
    table named (`plugs`, `heads`), so a process can tell whether what it derived from
    those tables is still current (`repository.records_generation`)."""

    __tablename__ = "table_generations"

    name: Mapped[str] = mapped_column(String(32), primary_key=True)
    generation: Mapped[int] = mapped_column(BigInteger, nullable=False, default=0, server_default="0")
