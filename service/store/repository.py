"""Plugs and heads in the database, as the dicts the schemas load and dump.

The schemas (`schemas.specs.StoredPlugSchema`, `StoredHeadSchema`) load a request into
a dict of canonical values (lengths as `Dim` in mm); this module writes such a dict into
a row and reads a row back into the same dict, so the API, the batch and the fit engine
(`schemas.specs.plug_spec`) all share one representation and nothing a client sent is
dropped: every tolerance is kept, absent values stay absent.
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Generic, TypeVar

from sqlalchemy import Select, func, or_, select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from service.fitment.catalog import HEX_MATCH_MM
from service.fitment.model import Dim
from service.store.models import Head, Plug

# A reach filter matches within this many mm, so `reach=19` finds a 3/4 in (19.05 mm)
# plug: the trade calls both the same reach.
REACH_MATCH_MM = 0.1


class DuplicateIdentifier(Exception):
    """Creating a record whose identifier exists."""

    def __init__(self, field: str, identifier: str) -> None:
        super().__init__(f"{field} {identifier!r} exists")
        self.field = field
        self.identifier = identifier


M = TypeVar("M", Plug, Head)

ADDED, CHANGED, UNCHANGED = "added", "changed", "unchanged"


@dataclass(frozen=True)
class Nested:
    """A nested object of the document kept in flat columns: member → (column stem, is_length)."""

    name: str
    members: tuple[tuple[str, str, bool], ...]
    required: tuple[str, ...]


@dataclass(frozen=True)
class RecordMapping(Generic[M]):
    """How one resource's document maps to its table."""

    model: type[M]
    key: str
    lengths: tuple[str, ...]
    scalars: tuple[tuple[str, str], ...]
    nested: tuple[Nested, ...]

    # --- document → row -----------------------------------------------------------------
    def columns_from(self, document: dict[str, Any]) -> dict[str, Any]:
        """Every column's value for `document`; what the document lacks becomes NULL, so
        writing these is a full replacement."""
        values: dict[str, Any] = {}
        for name in self.lengths:
            values.update(_length_columns(name, document.get(name)))
        for name, column in self.scalars:
            values[column] = document.get(name)
        for nested in self.nested:
            given = document.get(nested.name) or {}
            for member, stem, is_length in nested.members:
                if is_length:
                    values.update(_length_columns(stem, given.get(member)))
                else:
                    values[stem] = given.get(member)
        return values

    # --- row → document -----------------------------------------------------------------
    def document_of(self, row: M) -> dict[str, Any]:
        """The loaded-schema dict of a row; absent values are left out (so the dump can be
        sent back unchanged)."""
        document: dict[str, Any] = {}
        for name, column in self.scalars:
            value = getattr(row, column)
            if value is not None:
                document[name] = value
        for name in self.lengths:
            dim = _dim_of(row, name)
            if dim is not None:
                document[name] = dim
        for nested in self.nested:
            members: dict[str, Any] = {}
            for member, stem, is_length in nested.members:
                value = _dim_of(row, stem) if is_length else getattr(row, stem)
                if value is not None:
                    members[member] = value
            if all(required in members for required in nested.required):
                document[nested.name] = members
        return document


def _length_columns(stem: str, dim: Dim | None) -> dict[str, float | None]:
    if dim is None:
        return {f"{stem}_nominal_mm": None, f"{stem}_plus_mm": None, f"{stem}_minus_mm": None}
    return {f"{stem}_nominal_mm": dim.nominal, f"{stem}_plus_mm": dim.plus, f"{stem}_minus_mm": dim.minus}


def _dim_of(row: Any, stem: str) -> Dim | None:
    nominal = getattr(row, f"{stem}_nominal_mm")
    if nominal is None:
        return None
    return Dim(nominal, getattr(row, f"{stem}_plus_mm") or 0.0, getattr(row, f"{stem}_minus_mm") or 0.0)


PLUGS: RecordMapping[Plug] = RecordMapping(
    model=Plug,
    key="sku",
    lengths=("reach", "gasket_thickness", "firing_end", "terminal_height"),
    scalars=(("sku", "sku"), ("description", "description"), ("thread", "thread"),
             ("nonstandard_thread", "nonstandard_thread"), ("seat", "seat"), ("hex", "hex_mm"),
             ("resistor", "resistor"), ("gap", "gap_mm"), ("quantity_on_hand", "quantity_on_hand"),
             ("location", "location")),
    nested=(Nested("heat_range", (("scale", "heat_range_scale", False), ("value", "heat_range_value", False)),
                   required=("scale", "value")),),
)

HEADS: RecordMapping[Head] = RecordMapping(
    model=Head,
    key="head_id",
    lengths=("port_depth", "design_reach", "port_depth_long_side", "piston_clearance", "seat_to_piston",
             "valve_clearance", "seat_to_valve"),
    scalars=(("head_id", "head_id"), ("description", "description"), ("thread", "thread"),
             ("nonstandard_thread", "nonstandard_thread"), ("seat", "seat"), ("well_bore", "well_bore_mm"),
             ("hex", "hex_mm"), ("resistor_required", "resistor_required"), ("material", "material"),
             ("compression_ratio", "compression_ratio"), ("intake_pressure", "intake_pressure_bar"),
             ("intake_temperature", "intake_temperature_k"), ("peak_pressure", "peak_pressure_bar"),
             ("ignition_voltage", "ignition_voltage_kv"), ("bore", "bore_mm"), ("stroke", "stroke_mm"),
             ("rod_length", "rod_length_mm"), ("spark_advance", "spark_advance_deg")),
    nested=(
        Nested("heat_range_band", (("scale", "heat_range_band_scale", False), ("min", "heat_range_band_min", False),
                                   ("max", "heat_range_band_max", False)), required=("scale", "min", "max")),
        Nested("boot_range", (("min", "boot_range_min", True), ("max", "boot_range_max", True)),
               required=("min", "max")),
    ),
)


class Repository(Generic[M]):
    """Reads and writes one resource. The caller owns the session and commits."""

    def __init__(self, session: Session, mapping: RecordMapping[M]) -> None:
        self.session = session
        self.mapping = mapping

    @property
    def _key_column(self):
        return getattr(self.mapping.model, self.mapping.key)

    def get(self, identifier: str) -> M | None:
        return self.session.scalars(select(self.mapping.model).where(self._key_column == identifier)).one_or_none()

    def document(self, identifier: str) -> dict[str, Any] | None:
        """The stored document for `identifier`, or None (the fit-check lookups)."""
        row = self.get(identifier)
        return None if row is None else self.mapping.document_of(row)

    def page(self, query: Select, offset: int, limit: int) -> tuple[Sequence[M], int]:
        """One page of `query` (ordered by identifier) and the total it pages through."""
        total = self.session.scalar(select(func.count()).select_from(query.order_by(None).subquery())) or 0
        rows = self.session.scalars(query.order_by(self._key_column).offset(offset).limit(limit)).all()
        return rows, total

    def add(self, document: dict[str, Any]) -> M:
        identifier = document[self.mapping.key]
        if self.get(identifier) is not None:
            raise DuplicateIdentifier(self.mapping.key, identifier)
        row = self.mapping.model(**self.mapping.columns_from(document))
        self.session.add(row)
        try:
            self.session.flush()
        except IntegrityError:  # created by someone else between the check and the insert
            self.session.rollback()
            raise DuplicateIdentifier(self.mapping.key, identifier) from None
        return row

    def replace(self, row: M, document: dict[str, Any]) -> M:
        """Overwrite every column of `row` from `document` (the identifier stays)."""
        for column, value in self.mapping.columns_from(document).items():
            if column != self.mapping.key:
                setattr(row, column, value)
        self.session.flush()
        return row

    def upsert(self, document: dict[str, Any]) -> tuple[M, str]:
        """Insert or replace by identifier; the outcome is ADDED, CHANGED or UNCHANGED.
        Writing identical values changes nothing, not even the version."""
        row = self.get(document[self.mapping.key])
        if row is None:
            return self.add(document), ADDED
        if self.mapping.document_of(row) == self.mapping.document_of(_Detached(self.mapping, document)):
            return row, UNCHANGED
        return self.replace(row, document), CHANGED

    def delete(self, row: M) -> None:
        self.session.delete(row)
        self.session.flush()


class _Detached:
    """A row-shaped view of a document, so documents compare the way rows read back."""

    def __init__(self, mapping: RecordMapping, document: dict[str, Any]) -> None:
        self.__dict__.update(mapping.columns_from(document))


def plugs(session: Session) -> Repository[Plug]:
    return Repository(session, PLUGS)


def heads(session: Session) -> Repository[Head]:
    return Repository(session, HEADS)


# --- list filters ---------------------------------------------------------------------

def plug_query(*, thread: str | None = None, seat: str | None = None, reach_mm: float | None = None,
               hex_mm: float | None = None, resistor: bool | None = None) -> Select:
    """Plugs matching every filter given. Reach matches within REACH_MATCH_MM and hex
    within the catalogue's HEX_MATCH_MM, so metric and inch sizes of one family match."""
    query = select(Plug)
    if thread is not None:
        query = query.where(Plug.thread == thread)
    if seat is not None:
        query = query.where(Plug.seat == seat)
    if reach_mm is not None:
        query = query.where(Plug.reach_nominal_mm.between(reach_mm - REACH_MATCH_MM, reach_mm + REACH_MATCH_MM))
    if hex_mm is not None:
        query = query.where(Plug.hex_mm.between(hex_mm - HEX_MATCH_MM, hex_mm + HEX_MATCH_MM))
    if resistor is not None:
        query = query.where(Plug.resistor.is_(resistor))
    return query


def head_query(*, text: str | None = None, thread: str | None = None, seat: str | None = None) -> Select:
    """Heads whose description or head_id contains `text` (any case), and thread/seat."""
    query = select(Head)
    if text:
        needle = text.lower()
        query = query.where(or_(func.lower(Head.description).contains(needle, autoescape=True),
                                func.lower(Head.head_id).contains(needle, autoescape=True)))
    if thread is not None:
        query = query.where(Head.thread == thread)
    if seat is not None:
        query = query.where(Head.seat == seat)
    return query
