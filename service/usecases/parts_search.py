"""The parts counter against the database: fitting plugs for a head, interchanges for a plug.

The rules live in the pure engine (`service.fitment.counter` says what a head's bounds
decide about a plug, `service.fitment.interchange` which plug replaces which); this
module applies them to a table of 100,000 plugs without reading it row by row.

A large stock list carries each plug design under many SKUs (pack sizes, branches,
bins), and the engine's answer depends on the design alone. So the database groups the
candidates by design — every column the engine reads — from one covering index
(`ix_plugs_counter`, migration 0002), and the rules run once per design:

fitting-plugs, for a head of thread T and seat S:

1. Group the plugs of T and S that pass the filters by design, with their counts.
2. Drop the designs certain to fail; check with the engine the designs whose piston,
   valve or tool verdict is not certain (few). Everything left cannot fail, so the
   total is known.
3. Clean passes can only come from designs inside the pass window. They are checked
   best-ranked first, and only until the requested page is filled with passes; if the
   passes run out, every design in the window has been checked and the page continues
   with the warnings. Designs outside the window are certain to warn: ranked without
   the engine and checked only when they land on the page.
4. A page is cut from runs of designs with equal rank (a "class"): the SKUs of a class
   are read in sku order, only as many as the page needs.

The ranking key (|protrusion|, worst-case piston margin) is computed from the design's
numbers by `service.fitment.counter.rank_key_of`; tests compare it with the engine's
geometry and the whole listing with a brute-force run of the engine over every plug.
"""
from __future__ import annotations

import logging
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from typing import Any

from sqlalchemy import ColumnElement, func, select
from sqlalchemy.orm import Session

from schemas.specs import MAX_GASKET_MM
from service.fitment import check_fit
from service.fitment.catalog import HEX_MATCH_MM, Catalog
from service.fitment.counter import GROUP, PASS, WARN, RankKey, classify_position, fit_bounds, position_of, rank_key_of
from service.fitment.interchange import Comparison, Tolerances, compare, position
from service.fitment.model import Dim, FitResult, HeatRange, Options, PlugSpec, PortSpec
from service.store.models import Plug

log = logging.getLogger("plugfit.counter")

# The columns the engine reads, in PlugSpec order; a tuple of their values is a design.
# ix_plugs_counter holds exactly these, in this order, then quantity_on_hand.
ENGINE_COLUMNS = (
    Plug.thread, Plug.seat,
    Plug.reach_nominal_mm, Plug.reach_plus_mm, Plug.reach_minus_mm,
    Plug.gasket_thickness_nominal_mm, Plug.gasket_thickness_plus_mm, Plug.gasket_thickness_minus_mm,
    Plug.firing_end_nominal_mm, Plug.firing_end_plus_mm, Plug.firing_end_minus_mm,
    Plug.hex_mm, Plug.resistor,
    Plug.terminal_height_nominal_mm, Plug.terminal_height_plus_mm, Plug.terminal_height_minus_mm,
    Plug.heat_range_scale, Plug.heat_range_value, Plug.gap_mm,
)
# Positions in a design tuple.
REACH, REACH_PLUS, GASKET, GASKET_MINUS, FIRING, FIRING_PLUS, HEX, RESISTOR = 2, 3, 5, 7, 8, 9, 11, 12


def _dim(nominal: float | None, plus: float | None, minus: float | None) -> Dim | None:
    return None if nominal is None else Dim(nominal, plus or 0.0, minus or 0.0)


def spec_of(design: Sequence[Any]) -> PlugSpec:
    """The engine's record for a design tuple (values of ENGINE_COLUMNS, in order)."""
    (thread, seat, rn, rp, rm, gn, gp, gm, fn, fp, fm, hex_mm, resistor, tn, tp, tm,
     heat_scale, heat_value, gap) = design
    heat = HeatRange(heat_scale, heat_value) if heat_scale is not None and heat_value is not None else None
    return PlugSpec(thread, seat, reach=_dim(rn, rp, rm), gasket_thickness=_dim(gn, gp, gm),
                    firing_end=_dim(fn, fp, fm), hex=hex_mm, resistor=resistor,
                    terminal_height=_dim(tn, tp, tm), heat_range=heat, gap=gap)


@dataclass(frozen=True)
class PlugFilters:
    """The counter's filters. Stock is a property of the inventory line (a row); hex and
    resistor are properties of the design, applied to whole designs after grouping
    (an equality on `resistor` in the grouping query would make SQLite sort instead of
    walking the index in order)."""

    in_stock: bool = False
    resistor: bool | None = None
    hex_mm: float | None = None

    def row_clauses(self) -> list[ColumnElement]:
        return [Plug.quantity_on_hand > 0] if self.in_stock else []

    def row_sql(self) -> str:
        return " AND quantity_on_hand > 0" if self.in_stock else ""

    def admits(self, design: tuple) -> bool:
        if self.resistor is not None and design[RESISTOR] is not self.resistor:
            return False
        return not (self.hex_mm is not None and (design[HEX] is None or abs(design[HEX] - self.hex_mm) > HEX_MATCH_MM))


NO_FILTERS = PlugFilters()
DEFAULT_TOLERANCES = Tolerances()


def _designs(session: Session, clauses: list[ColumnElement], filters: PlugFilters) -> list[tuple[tuple, int]]:
    """(design, number of plugs) for the plugs matching `clauses`, from the covering index."""
    query = select(*ENGINE_COLUMNS, func.count()).where(*clauses, *filters.row_clauses()).group_by(*ENGINE_COLUMNS)
    designs = [(tuple(row[:-1]), row[-1]) for row in session.connection().execute(query).all()]
    return [(design, count) for design, count in designs if filters.admits(design)]


def _placeholder(session: Session) -> str:
    return "?" if session.get_bind().dialect.paramstyle == "qmark" else "%s"


def _collation(session: Session) -> str:
    """sku in byte order on every backend, as Python sorts it (PostgreSQL's default
    collation would order by locale)."""
    return ' COLLATE "C"' if session.get_bind().dialect.name == "postgresql" else ""


# Designs per statement when a page is read (each is one arm of a UNION ALL; SQLite
# allows 500 arms, and 200 arms of about 20 parameters stay far below its 32,766).
DESIGNS_PER_STATEMENT = 200
_COLUMN_NAMES = tuple(column.key for column in ENGINE_COLUMNS)


def _plugs_of_designs(session: Session, row_sql: str, row_parameters: list[Any], designs: set[tuple],
                      skip: int, take: int) -> list[tuple[int, str, tuple]]:
    """`take` plugs of the given designs in sku order, after the first `skip`.

    Each design is one seek in ix_plugs_counter, whose entries for a design are already
    in sku order, so each arm reads at most skip + take entries. Written as SQL text:
    building hundreds of equality expressions per request costs more than the query.
    `row_sql` adds conditions on the row (stock, an excluded sku) with `row_parameters`.
    """
    mark, collate = _placeholder(session), _collation(session)
    wanted = skip + take
    found: list[tuple[str, int, tuple]] = []
    listed = list(designs)
    for start in range(0, len(listed), DESIGNS_PER_STATEMENT):
        chunk = listed[start:start + DESIGNS_PER_STATEMENT]
        arms, parameters = [], []
        for number, design in enumerate(chunk):
            conditions = []
            for name, value in zip(_COLUMN_NAMES, design, strict=False):
                if value is None:
                    conditions.append(f"{name} IS NULL")
                else:
                    conditions.append(f"{name} = {mark}")
                    parameters.append(value)
            parameters += row_parameters
            arms.append(f"SELECT id, sku, {number} AS design FROM (SELECT id, sku FROM plugs WHERE "
                        f"{' AND '.join(conditions)}{row_sql} ORDER BY sku{collate} LIMIT {wanted}) AS arm{number}")
        statement = (f"SELECT id, sku, design FROM ({' UNION ALL '.join(arms)}) AS merged "
                     f"ORDER BY sku{collate} LIMIT {wanted}")
        rows = session.connection().exec_driver_sql(statement, tuple(parameters)).all()
        found += [(sku, plug_id, chunk[number]) for plug_id, sku, number in rows]
    found.sort(key=lambda entry: entry[0])
    return [(plug_id, sku, design) for sku, plug_id, design in found[skip:wanted]]


@dataclass
class _Ranked:
    """A run of designs with the same class key, and how many plugs they hold."""

    key: tuple
    designs: set[tuple]
    count: int


def _classes(entries: Iterator[tuple[tuple, tuple, int]]) -> list[_Ranked]:
    """Group (class key, design, count) entries, already sorted by class key, into runs."""
    classes: list[_Ranked] = []
    for key, design, count in entries:
        if classes and classes[-1].key == key:
            classes[-1].designs.add(design)
            classes[-1].count += count
        else:
            classes.append(_Ranked(key, {design}, count))
    return classes


def _cut(session: Session, row_sql: str, row_parameters: list[Any], classes: list[_Ranked],
         offset: int, limit: int) -> list[tuple[int, str, tuple]]:
    """The plugs at positions offset .. offset+limit of the listing the classes make."""
    rows: list[tuple[int, str, tuple]] = []
    start, end = offset, offset + limit
    position_ = 0
    for ranked in classes:
        if position_ >= end:
            break
        following = position_ + ranked.count
        if following > start:
            skip = max(0, start - position_)
            take = min(following, end) - max(position_, start)
            rows += _plugs_of_designs(session, row_sql, row_parameters, ranked.designs, skip, take)
        position_ = following
    return rows


# --- fitting plugs --------------------------------------------------------------------


@dataclass
class Listed:
    """One plug on a page: its row id, sku, verdict and the engine's result."""

    plug_id: int
    sku: str
    verdict: str
    result: FitResult


@dataclass
class FitPage:
    items: list[Listed]
    total: int
    designs: int = 0   # distinct designs among the head's candidates
    checked: int = 0   # designs the engine checked for this answer
    plugs: int = 0     # candidate plugs of the head's thread and seat, after the filters


@dataclass
class _Design:
    values: tuple
    count: int
    key: RankKey
    may_pass: bool
    certain_no_fail: bool
    result: FitResult | None = None


def fitting_plugs(session: Session, port: PortSpec, options: Options, catalog: Catalog, *,
                  filters: PlugFilters = NO_FILTERS, include: frozenset[str] = frozenset({PASS, WARN}),
                  offset: int = 0, limit: int = 50) -> FitPage:
    """One page of the inventory plugs that fit `port`, best first (see the module doc)."""
    bounds = fit_bounds(port, options, catalog)
    grouped = _designs(session, [Plug.thread == port.thread, Plug.seat == port.seat], filters)
    page = FitPage(items=[], total=0, designs=len(grouped), plugs=sum(count for _design, count in grouped))

    def check(design: _Design) -> FitResult:
        if design.result is None:
            design.result = check_fit(spec_of(design.values), port, options, catalog)
            page.checked += 1
        return design.result

    window: list[_Design] = []   # may be clean passes
    outside: list[_Design] = []  # certain to warn, if they do not fail
    for values, count in grouped:
        at = position_of(values[REACH], values[REACH_PLUS] or 0.0, values[GASKET], values[GASKET_MINUS] or 0.0,
                         values[FIRING], values[FIRING_PLUS] or 0.0, bounds)
        rule = classify_position(at, values[HEX], values[RESISTOR], bounds)
        if rule.certain_fail:
            continue
        design = _Design(values, count, rank_key_of(at, bounds), rule.may_pass, rule.certain_no_fail)
        if not rule.certain_no_fail and check(design).verdict not in (PASS, WARN):
            continue  # it fails
        (window if rule.may_pass else outside).append(design)

    window.sort(key=lambda design: design.key.class_key(0))
    everything = sum(design.count for design in window) + sum(design.count for design in outside)
    listing: list[tuple[tuple, tuple, int]] = []
    if include == frozenset({PASS, WARN}):
        # Passes first, checked in rank order only until the page is full of them.
        end, passes, index = offset + limit, 0, 0
        while index < len(window) and passes < end:
            key = window[index].key.class_key(0)
            while index < len(window) and window[index].key.class_key(0) == key:  # a whole class
                if check(window[index]).verdict == PASS:
                    passes += window[index].count
                    listing.append((key, window[index].values, window[index].count))
                index += 1
        if index == len(window):  # every pass is listed: the warnings follow
            warns = [design for design in window if design.result.verdict == WARN] + outside
            listing += sorted(((design.key.class_key(1), design.values, design.count) for design in warns),
                              key=lambda entry: entry[0])
        # else the page is all passes, and what follows them need not be known
        page.total = everything
    else:
        for design in window:
            check(design)
        chosen = [design for design in window if design.result.verdict in include]
        if WARN in include:
            chosen += outside
        listing = sorted(((design.key.class_key(GROUP[design.result.verdict if design.result else WARN]),
                           design.values, design.count) for design in chosen), key=lambda entry: entry[0])
        page.total = sum(entry[2] for entry in listing)

    by_values = {design.values: design for design in window + outside}
    for plug_id, sku, values in _cut(session, filters.row_sql(), [], _classes(iter(listing)), offset, limit):
        result = check(by_values[values])
        if result.verdict not in include:  # cannot happen by construction; never list a failure
            log.warning("counter rule disagreed with the engine",
                        extra={"fields": {"sku": sku, "verdict": result.verdict}})
            continue
        page.items.append(Listed(plug_id, sku, result.verdict, result))
    return page


# --- interchanges ---------------------------------------------------------------------


@dataclass
class Interchange:
    plug_id: int
    sku: str
    comparison: Comparison


@dataclass
class InterchangePage:
    items: list[Interchange]
    total: int
    designs: int = 0


def interchanges(session: Session, original: PlugSpec, original_sku: str, catalog: Catalog, *,
                 filters: PlugFilters = NO_FILTERS, tolerances: Tolerances = DEFAULT_TOLERANCES,
                 offset: int = 0, limit: int = 50) -> InterchangePage:
    """Inventory plugs that can replace `original`, closest first (see
    `service.fitment.interchange` for the rule and its tolerances)."""
    here = position(original, catalog)
    if here is None:
        return InterchangePage([], 0)
    # The thread end is reach less the gasket (0 to MAX_GASKET_MM), so the reach of a
    # candidate lies in this range: an index range on reach, before the exact rule.
    gasket_span = 0.0 if original.seat == "conical" else MAX_GASKET_MM
    low, high = here.thread_end - tolerances.thread_end_mm, here.thread_end + tolerances.thread_end_mm
    clauses = [Plug.thread == original.thread, Plug.seat == original.seat,
               Plug.reach_nominal_mm.between(low - 1e-6, high + gasket_span + 1e-6), Plug.sku != original_sku]
    grouped = _designs(session, clauses, filters)
    matches: list[tuple[tuple, tuple, int]] = []
    comparisons: dict[tuple, Comparison] = {}
    for values, count in grouped:
        comparison = compare(original, spec_of(values), catalog, tolerances, here)
        if comparison is not None:
            comparisons[values] = comparison
            matches.append((comparison.class_key(), values, count))
    matches.sort(key=lambda entry: entry[0])
    rows = _cut(session, filters.row_sql() + f" AND sku <> {_placeholder(session)}", [original_sku],
                _classes(iter(matches)), offset, limit)
    return InterchangePage([Interchange(plug_id, sku, comparisons[values]) for plug_id, sku, values in rows],
                           sum(entry[2] for entry in matches), len(grouped))
