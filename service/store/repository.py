"""Plugs and heads in the database: every read of them, and the writes of one record.

The schemas (`schemas.specs.StoredPlugSchema`, `StoredHeadSchema`) load a request into
a dict of canonical values (lengths as `Dim` in mm); this module writes such a dict into
a row and reads a row back into the same dict, so the API, the batch and the fit engine
(`schemas.specs.plug_spec`) all share one representation and nothing a client sent is
dropped: every tolerance is kept, absent values stay absent.

The reads, by who asks:

- one record, or a page of a filtered list (`Repository`, `plug_query`, `head_query`);
- every plug and head a build list names, a few thousand per query (`fetch_documents`);
- the parts counter: the plugs of a thread and seat grouped by design, the plugs of
  chosen designs in sku order (`plug_designs`, `plugs_of_designs`), and the tables'
  generations, which tell a cache whether any plug or head changed (`records_generation`).
"""
from __future__ import annotations

from collections.abc import Collection, Iterable, Sequence
from dataclasses import dataclass
from typing import Any, Generic, TypeVar

from sqlalchemy import Select, func, or_, select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from service.fitment.catalog import HEX_MATCH_MM
from service.fitment.model import Dim, HeatRange, PlugSpec
from service.store.models import Head, Plug, TableGeneration

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
             ("location", "location"), ("gasket_outside_diameter", "gasket_outside_diameter_mm"),
             ("seat_angle", "seat_angle_deg"), ("seat_diameter", "seat_diameter_mm")),
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
             ("boost_pressure", "boost_pressure_bar"), ("forced_induction", "forced_induction"),
             ("intake_temperature", "intake_temperature_k"), ("peak_pressure", "peak_pressure_bar"),
             ("ignition_voltage", "ignition_voltage_kv"), ("bore", "bore_mm"), ("stroke", "stroke_mm"),
             ("rod_length", "rod_length_mm"), ("spark_advance", "spark_advance_deg"),
             ("plug_inclination", "plug_inclination_deg"), ("max_rpm", "max_rpm"), ("rod_material", "rod_material"),
             ("reciprocating_mass", "reciprocating_mass_g"), ("rod_section_area", "rod_section_area_mm2"),
             ("spot_face_diameter", "spot_face_diameter_mm"), ("counterbore_diameter", "counterbore_diameter_mm"),
             ("seat_angle", "seat_angle_deg")),
    nested=(
        Nested("heat_range_band", (("scale", "heat_range_band_scale", False), ("min", "heat_range_band_min", False),
                                   ("max", "heat_range_band_max", False)), required=("scale", "min", "max")),
        Nested("boot_range", (("min", "boot_range_min", True), ("max", "boot_range_max", True)),
               required=("min", "max")),
        Nested("insert", (("kind", "insert_kind", False), ("length", "insert_length", True),
                          ("outer_thread", "insert_outer_thread", False), ("material", "insert_material", False)),
               required=("kind",)),
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


# --- every plug and head a build list names -------------------------------------------

# Identifiers per IN (...) query: far below SQLite's 32,766 and PostgreSQL's 65,535
# bound parameters, so a list naming 50,000 distinct skus still needs only ten queries.
REFERENCE_CHUNK = 5000


def _chunks(identifiers: Iterable[str]) -> Iterable[list[str]]:
    ordered = sorted(identifiers)
    for start in range(0, len(ordered), REFERENCE_CHUNK):
        yield ordered[start:start + REFERENCE_CHUNK]


def fetch_documents(session: Session, skus: set[str], head_ids: set[str]
                    ) -> tuple[dict[str, dict[str, Any]], dict[str, dict[str, Any]]]:
    """The stored documents of every sku and head_id found, fetched all at once.

    A build list of 10,000 lines may name a few hundred skus; one query per line would
    be 10,000 round trips. Every distinct identifier is fetched with `IN (...)`, a few
    thousand per query, so a list needs one or two queries whatever its length. Shared
    by the batch endpoint (the request's session) and the embedded CLI (its own session).
    """
    plugs: dict[str, dict[str, Any]] = {}
    for chunk in _chunks(skus):
        for row in session.scalars(select(Plug).where(Plug.sku.in_(chunk))):
            plugs[row.sku] = PLUGS.document_of(row)
    heads: dict[str, dict[str, Any]] = {}
    for chunk in _chunks(head_ids):
        for row in session.scalars(select(Head).where(Head.head_id.in_(chunk))):
            heads[row.head_id] = HEADS.document_of(row)
    return plugs, heads


def plug_documents_by_id(session: Session, plug_ids: Collection[int]) -> dict[int, dict[str, Any]]:
    """The stored documents of the plugs with these row ids (a counter page)."""
    if not plug_ids:
        return {}
    return {row.id: PLUGS.document_of(row) for row in session.scalars(select(Plug).where(Plug.id.in_(plug_ids)))}


# --- the parts counter: plugs grouped by design ---------------------------------------
#
# A large stock list carries each plug design under many skus (pack sizes, branches,
# bins), and the fit engine's answer depends on the design alone. So the counter reads
# the candidates grouped by design, from one covering index (`ix_plugs_counter`,
# migration 0002), and reads skus only for the designs a page shows.

# The columns the engine reads, in `design_spec`'s order; a tuple of their values is a
# design. ix_plugs_counter holds exactly these, in this order, then sku and quantity_on_hand.
DESIGN_COLUMNS = (
    Plug.thread, Plug.seat,
    Plug.reach_nominal_mm, Plug.reach_plus_mm, Plug.reach_minus_mm,
    Plug.gasket_thickness_nominal_mm, Plug.gasket_thickness_plus_mm, Plug.gasket_thickness_minus_mm,
    Plug.firing_end_nominal_mm, Plug.firing_end_plus_mm, Plug.firing_end_minus_mm,
    Plug.hex_mm, Plug.resistor,
    Plug.terminal_height_nominal_mm, Plug.terminal_height_plus_mm, Plug.terminal_height_minus_mm,
    Plug.heat_range_scale, Plug.heat_range_value, Plug.gap_mm,
    Plug.gasket_outside_diameter_mm, Plug.seat_angle_deg, Plug.seat_diameter_mm,
)
_DESIGN_COLUMN_NAMES = tuple(column.key for column in DESIGN_COLUMNS)

Design = tuple  # the values of DESIGN_COLUMNS, in order


def _design_dim(nominal: float | None, plus: float | None, minus: float | None) -> Dim | None:
    return None if nominal is None else Dim(nominal, plus or 0.0, minus or 0.0)


def design_spec(design: Design) -> PlugSpec:
    """The engine's record for a design (read as `PLUGS.document_of` and
    `schemas.specs.plug_spec` would read one of its rows)."""
    (thread, seat, rn, rp, rm, gn, gp, gm, fn, fp, fm, hex_mm, resistor, tn, tp, tm,
     heat_scale, heat_value, gap, gasket_outside, seat_angle, seat_diameter) = design
    heat = HeatRange(heat_scale, heat_value) if heat_scale is not None and heat_value is not None else None
    return PlugSpec(thread, seat, reach=_design_dim(rn, rp, rm), gasket_thickness=_design_dim(gn, gp, gm),
                    firing_end=_design_dim(fn, fp, fm), hex=hex_mm, resistor=resistor,
                    terminal_height=_design_dim(tn, tp, tm), heat_range=heat, gap=gap,
                    gasket_outside_diameter=gasket_outside, seat_angle_deg=seat_angle, seat_diameter=seat_diameter)


def plug_designs(session: Session, thread: str, seat: str, *, in_stock: bool = False,
                 reach_between: tuple[float, float] | None = None,
                 exclude_sku: str | None = None) -> list[tuple[Design, int]]:
    """(design, number of plugs) for the plugs of `thread` and `seat`, from the covering
    index: `in_stock` counts only plugs with quantity_on_hand above zero,
    `reach_between` narrows the nominal reach (inclusive), `exclude_sku` leaves one out."""
    query = select(*DESIGN_COLUMNS, func.count()).where(Plug.thread == thread, Plug.seat == seat)
    if reach_between is not None:
        query = query.where(Plug.reach_nominal_mm.between(*reach_between))
    if exclude_sku is not None:
        query = query.where(Plug.sku != exclude_sku)
    if in_stock:
        query = query.where(Plug.quantity_on_hand > 0)
    query = query.group_by(*DESIGN_COLUMNS)
    return [(tuple(row[:-1]), row[-1]) for row in session.connection().execute(query).all()]


@dataclass(frozen=True, slots=True)
class CounterRow:
    """One plug as the counter lists it: the inventory line's own fields and its design."""

    plug_id: int
    sku: str
    description: str | None
    quantity_on_hand: int
    location: str | None
    design: Design


# Designs per statement when a page is read (each is one arm of a UNION ALL; SQLite
# allows 500 arms, and 200 arms of about 20 parameters stay far below its 32,766).
DESIGNS_PER_STATEMENT = 200


def _design_condition(design: Design, mark: str) -> tuple[str, list[Any]]:
    """SQL that matches the plugs of one design (`IS NULL` where a value is missing), and
    its parameters."""
    conditions, parameters = [], []
    for name, value in zip(_DESIGN_COLUMN_NAMES, design, strict=True):
        if value is None:
            conditions.append(f"{name} IS NULL")
        else:
            conditions.append(f"{name} = {mark}")
            parameters.append(value)
    return " AND ".join(conditions), parameters


def plugs_of_designs(session: Session, designs: Collection[Design], *, skip: int, take: int,
                     in_stock: bool = False, exclude_sku: str | None = None) -> list[CounterRow]:
    """`take` plugs of the given designs in sku order, after the first `skip`.

    Each design is one seek in ix_plugs_counter, whose entries for a design are already
    in sku order, so each arm reads at most skip + take entries. Written as SQL text:
    building hundreds of equality expressions per request costs more than the query.
    sku order is byte order on every backend, as Python sorts (PostgreSQL's default
    collation would order by locale).
    """
    postgres = session.get_bind().dialect.name == "postgresql"
    mark, collate = ("%s", ' COLLATE "C"') if postgres else ("?", "")
    row_sql, row_parameters = "", []
    if in_stock:
        row_sql += " AND quantity_on_hand > 0"
    if exclude_sku is not None:
        row_sql += f" AND sku <> {mark}"
        row_parameters.append(exclude_sku)
    wanted = skip + take
    found: list[tuple[str, tuple, Design]] = []
    listed = list(designs)
    for start in range(0, len(listed), DESIGNS_PER_STATEMENT):
        chunk = listed[start:start + DESIGNS_PER_STATEMENT]
        arms, parameters = [], []
        for number, design in enumerate(chunk):
            condition, values = _design_condition(design, mark)
            parameters += values + row_parameters
            arms.append(f"SELECT id, sku, description, quantity_on_hand, location, {number} AS design "
                        f"FROM (SELECT id, sku, description, quantity_on_hand, location FROM plugs WHERE "
                        f"{condition}{row_sql} ORDER BY sku{collate} LIMIT {wanted}) AS arm{number}")
        statement = (f"SELECT id, sku, description, quantity_on_hand, location, design "
                     f"FROM ({' UNION ALL '.join(arms)}) AS merged ORDER BY sku{collate} LIMIT {wanted}")
        rows = session.connection().exec_driver_sql(statement, tuple(parameters)).all()
        found += [(row[1], tuple(row[:5]), chunk[row[5]]) for row in rows]
    found.sort(key=lambda entry: entry[0])
    return [CounterRow(*fields, design) for _sku, fields, design in found[skip:wanted]]


GENERATION_TABLES = ("plugs", "heads")


def records_generation(session: Session) -> tuple[int, ...] | None:
    """The generations of the plugs and heads tables: database triggers (migration 0004)
    raise a table's number in the same transaction as every insert, update and delete
    of its rows, whoever makes it (the API, an import, a script). None when a counter
    row is missing (the table was emptied by hand): then nothing derived from plugs or
    heads may be reused."""
    rows = session.execute(select(TableGeneration.name, TableGeneration.generation)
                           .where(TableGeneration.name.in_(GENERATION_TABLES))).all()
    generations = dict(rows)
    if len(generations) < len(GENERATION_TABLES):
        return None
    return tuple(generations[name] for name in GENERATION_TABLES)
