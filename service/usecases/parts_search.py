"""The parts counter against the database: fitting plugs for a head, interchanges for a plug.

The rules live in the pure engine (`service.fitment.search` says what a head's bounds
decide about a plug, and which plug replaces which); this
module applies them to a table of 100,000 plugs without reading it row by row.

A large stock list carries each plug design under many SKUs (pack sizes, branches,
bins), and the engine's answer depends on the design alone. So the candidates are read
grouped by design (`repository.plug_designs`, from one covering index), the rules run
once per design, and what comes out (a *ranking*: runs of designs of equal rank, each
with its number of plugs) depends only on the head, the options, the filters and the
plugs' designs. It is kept, with the stored head's port and the pages cut from it,
until a plug or head changes (`records_cache`, which says why that stays correct with
several workers and on PostgreSQL), so only the first request for a head after a
change pays for it.

fitting-plugs, for a head of thread T and seat S:

1. Rank (`rank_fitting`, once per head, options and filters until a plug changes):
   a. group the plugs of T and S that pass the filters by design, with their counts
      (kept too: every head of T and S starts from the same designs);
   b. drop the designs the head's bounds say certainly fail; check with the engine
      the designs whose reach, piston, valve or tool verdict is not certain (few), and every
      design inside the pass window (clean passes can only come from there);
   c. the designs left unchecked are outside the window and certain not to fail:
      certain to warn, so they are ranked without the engine;
   d. sort the passes, then the warnings, by rank key into classes (runs of designs
      with equal keys, whose plugs then follow in sku order).
2. Cut the page (`_cut`, kept with the ranking): walk the classes to the requested
   offset and read the skus of the classes the page overlaps, in sku order, only as
   many as the page needs (`repository.plugs_of_designs`).
3. Judge the page (`_judged`): a design not checked yet is checked now, so every listed
   plug has been checked by the engine, and a failure is never listed.

The ranking key (the thread end's distance from the break-outs, worst-case piston margin)
is computed from the design's numbers by `service.fitment.search.rank_key`; tests compare it with the engine's
geometry and the whole listing with a brute-force run of the engine over every plug.
"""
from __future__ import annotations

import logging
from collections.abc import Callable, Collection, Iterable
from dataclasses import dataclass, field
from itertools import groupby
from operator import itemgetter
from typing import Any, TypeVar

from schemas.specs import MAX_GASKET_MM, plug_spec, port_spec
from service.fitment import check_fit
from service.fitment.catalog import HEX_MATCH_MM, Catalog
from service.fitment.model import FitResult, Options, PlugSpec, PortSpec
from service.fitment.search import (
    FAIL,
    PASS,
    WARN,
    Comparison,
    FitBounds,
    RankKey,
    Tolerances,
    classify,
    compare,
    fit_bounds,
    position,
    rank_key,
)
from service.store import records_cache, repository
from service.store.records_cache import Memo, View
from service.store.repository import CounterRow, Design

log = logging.getLogger("plugfit.counter")

BOTH = frozenset({PASS, WARN})
Spec = TypeVar("Spec", PlugSpec, PortSpec)
# Pages kept per ranking, the most recently asked for (a clerk pages back and forth;
# at most 1,000 lines each).
PAGES_KEPT = 4


@dataclass(frozen=True)
class PlugFilters:
    """The counter's filters. Stock is a property of the inventory line (a row, counted
    by the database); hex and resistor are properties of the design, applied to whole
    designs after grouping (an equality on `resistor` in the grouping query would make
    SQLite sort instead of walking the index in order)."""

    in_stock: bool = False
    resistor: bool | None = None
    hex_mm: float | None = None

    def admits(self, spec: PlugSpec) -> bool:
        if self.resistor is not None and spec.resistor is not self.resistor:
            return False
        return not (self.hex_mm is not None and (spec.hex is None or abs(spec.hex - self.hex_mm) > HEX_MATCH_MM))


NO_FILTERS = PlugFilters()
DEFAULT_TOLERANCES = Tolerances()


@dataclass(eq=False)
class _Design:
    """A candidate design: its columns, its engine record, its number of plugs, and the
    engine's answer once checked."""

    values: Design
    spec: PlugSpec
    count: int
    result: FitResult | None = None


@dataclass(frozen=True)
class _Class:
    """A run of designs with the same class key, and how many plugs they hold."""

    key: tuple
    designs: frozenset[Design]
    count: int


def _designs(session, thread: str, seat: str, in_stock: bool, **narrowing) -> list[tuple[Design, PlugSpec, int]]:
    """(design, its engine record, number of plugs) for the plugs of `thread` and `seat`."""
    return [(values, repository.design_spec(values), count)
            for values, count in repository.plug_designs(session, thread, seat, in_stock=in_stock, **narrowing)]


def _candidates(grouped: Iterable[tuple[Design, PlugSpec, int]], filters: PlugFilters) -> list[_Design]:
    """The designs that pass the filters, each ready to be judged."""
    return [_Design(values, spec, count) for values, spec, count in grouped if filters.admits(spec)]


def _classes(keyed: Iterable[tuple[tuple, _Design]]) -> list[_Class]:
    """(class key, design) pairs sorted by key, in runs of equal keys."""
    classes = []
    for key, run in groupby(sorted(keyed, key=itemgetter(0)), key=itemgetter(0)):
        designs = [design for _key, design in run]
        classes.append(_Class(key, frozenset(design.values for design in designs),
                              sum(design.count for design in designs)))
    return classes


def _kept_spec(view: View, key: tuple[str, str], document: Callable[[], dict | None],
               spec: Callable[[dict], Spec]) -> Spec | None:
    """The engine's record of a stored plug or head, kept like the rankings (None: no
    such record; not kept, so it is looked for again next time)."""
    def build() -> Spec | None:
        found = document()
        return None if found is None else spec(found)

    return view.get_or_build(key, build)


def _cut(session, classes: list[_Class], offset: int, limit: int, **row_filters) -> list[CounterRow]:
    """The plugs at positions offset .. offset + limit of the listing the classes make."""
    rows: list[CounterRow] = []
    start, end = offset, offset + limit
    position_ = 0
    for ranked in classes:
        if position_ >= end:
            break
        following = position_ + ranked.count
        if following > start:
            skip = max(0, start - position_)
            take = min(following, end) - max(position_, start)
            rows += repository.plugs_of_designs(session, ranked.designs, skip=skip, take=take, **row_filters)
        position_ = following
    return rows


# --- fitting plugs --------------------------------------------------------------------


@dataclass
class OnPage:
    """One plug on a counter page: the inventory line and its design's engine record."""

    row: CounterRow
    spec: PlugSpec

    @property
    def sku(self) -> str:
        return self.row.sku

    @property
    def plug_id(self) -> int:
        return self.row.plug_id


@dataclass
class Listed(OnPage):
    """A fitting plug: with its verdict and the engine's result."""

    verdict: str
    result: FitResult


@dataclass
class FitPage:
    items: list[Listed]
    total: int
    designs: int = 0   # distinct designs among the head's candidates
    checked: int = 0   # designs the engine has checked for this ranking so far
    plugs: int = 0     # candidate plugs of the head's thread and seat, after the filters
    # For what the caller derives from the items' results (the lines it writes), kept as
    # long as the ranking is: while it lives, a result is the same object on every page.
    derived: dict = field(default_factory=dict)


@dataclass
class _Judge:
    """Runs the engine on a design once, and counts how often it ran."""

    port: PortSpec
    options: Options
    catalog: Catalog
    checked: int = 0

    def __call__(self, design: _Design) -> FitResult:
        if design.result is None:
            design.result = check_fit(design.spec, self.port, self.options, self.catalog)
            self.checked += 1
        return design.result


@dataclass
class Ranking:
    """Every candidate design of a head that does not fail, ranked (module doc, step 1).
    Kept in the records cache with the pages cut from it (step 2), which are as current
    as the ranking: the cache drops both when a plug or head changes. Nothing read from it is
    ever changed, except that a design outside the pass window is checked (once) when
    it first lands on a page."""

    judge: _Judge
    passes: list[_Class]
    warnings: list[_Class]
    listed: dict[Design, _Design]
    designs: int
    plugs: int
    pages: Memo = field(default_factory=lambda: Memo(PAGES_KEPT))
    derived: dict = field(default_factory=dict)  # see FitPage.derived

    def classes(self, include: Collection[str]) -> list[_Class]:
        """The classes of the verdicts asked for: passes first, then warnings."""
        return (self.passes if PASS in include else []) + (self.warnings if WARN in include else [])


def _verdict(design: _Design, bounds: FitBounds, judge: _Judge) -> str:
    """The design's verdict where the head's bounds are certain, else the engine's
    (module doc, steps 1b and 1c). WARN without a result: certain, not yet checked."""
    rule = classify(design.spec, bounds)
    if rule.certain_fail:
        return FAIL
    if rule.may_pass or not rule.certain_no_fail:
        return judge(design).verdict
    return WARN


def _class_key(design: _Design, bounds: FitBounds, verdict: str) -> tuple:
    key: RankKey = rank_key(design.spec, bounds)
    return key.class_key(0 if verdict == PASS else 1)


def rank_fitting(session, port: PortSpec, options: Options, catalog: Catalog,
                 filters: PlugFilters = NO_FILTERS, view: View | None = None) -> Ranking:
    """The ranking of every plug of `port`'s thread and seat that does not fail."""
    bounds = fit_bounds(port, options, catalog)
    judge = _Judge(port, options, catalog)
    # The same for every head of this thread and seat: kept apart, so the next head
    # asked for need not group the plugs again.
    grouped = (view or records_cache.view(session)).get_or_build(
        ("designs", port.thread, port.seat, filters.in_stock),
        lambda: _designs(session, port.thread, port.seat, filters.in_stock))
    candidates = _candidates(grouped, filters)
    passes: list[tuple[tuple, _Design]] = []
    warnings: list[tuple[tuple, _Design]] = []
    for design in candidates:
        verdict = _verdict(design, bounds, judge)
        if verdict != FAIL:
            (passes if verdict == PASS else warnings).append((_class_key(design, bounds, verdict), design))
    return Ranking(judge, _classes(passes), _classes(warnings),
                   listed={design.values: design for _key, design in passes + warnings},
                   designs=len(candidates), plugs=sum(design.count for design in candidates))


def _judged(rows: list[CounterRow], ranking: Ranking, include: Collection[str]) -> list[Listed]:
    """The page's plugs with their checked results (module doc, step 3)."""
    items = []
    for row in rows:
        design = ranking.listed[row.design]
        result = ranking.judge(design)
        if result.verdict not in include:  # the bounds disagreed with the engine: never list a failure
            log.warning("counter rule disagreed with the engine",
                        extra={"fields": {"sku": row.sku, "verdict": result.verdict}})
            continue
        items.append(Listed(row, design.spec, result.verdict, result))
    return items


def fitting_plugs(session, port: PortSpec, options: Options, catalog: Catalog, *,
                  filters: PlugFilters = NO_FILTERS, include: Collection[str] = BOTH,
                  offset: int = 0, limit: int = 50, view: View | None = None) -> FitPage:
    """One page of the inventory plugs that fit `port`, best first (see the module doc).
    `view`: the request's view of the records cache, if it has opened one."""
    view = view or records_cache.view(session)
    ranking = view.get_or_build(("fitting-plugs", port, options, catalog.version, filters),
                                lambda: rank_fitting(session, port, options, catalog, filters, view))
    classes = ranking.classes(include)
    items = ranking.pages.get_or_build(
        (frozenset(include), offset, limit),
        lambda: _judged(_cut(session, classes, offset, limit, in_stock=filters.in_stock), ranking, include))
    return FitPage(items, total=sum(ranked.count for ranked in classes), designs=ranking.designs,
                   checked=ranking.judge.checked, plugs=ranking.plugs, derived=ranking.derived)


def fitting_plugs_of_head(session, head_id: str, options: Options, catalog: Catalog,
                          **page: Any) -> FitPage | None:
    """`fitting_plugs` for a stored head (`page`: its keyword arguments); None when no
    head has this head_id."""
    view = records_cache.view(session)
    port = _kept_spec(view, ("head", head_id), lambda: repository.heads(session).document(head_id), port_spec)
    return None if port is None else fitting_plugs(session, port, options, catalog, view=view, **page)


def stored_plugs(session, items: Iterable[OnPage]) -> dict[int, dict[str, Any]]:
    """The stored documents of a page's plugs, by row id (`?detail=full`)."""
    return repository.plug_documents_by_id(session, [item.plug_id for item in items])


# --- interchanges ---------------------------------------------------------------------


@dataclass
class Interchange(OnPage):
    """A plug that can replace the original: with how it differs."""

    comparison: Comparison


@dataclass
class InterchangePage:
    items: list[Interchange]
    total: int
    designs: int = 0


@dataclass(frozen=True)
class InterchangeRanking:
    """The designs that can replace a plug, closest first, with their comparisons."""

    classes: list[_Class]
    comparisons: dict[Design, tuple[PlugSpec, Comparison]] = field(default_factory=dict)
    designs: int = 0
    pages: Memo = field(default_factory=lambda: Memo(PAGES_KEPT))


def rank_interchanges(session, original: PlugSpec, original_sku: str, catalog: Catalog,
                      filters: PlugFilters = NO_FILTERS, tolerances: Tolerances = DEFAULT_TOLERANCES
                      ) -> InterchangeRanking:
    """Every design that can replace `original`, ranked (`service.fitment.search`)."""
    here = position(original, catalog)
    if here is None:
        return InterchangeRanking([])
    # The thread end is reach less the gasket (0 to MAX_GASKET_MM), so the reach of a
    # candidate lies in this range: an index range on reach, before the exact rule.
    gasket_span = 0.0 if original.seat == "conical" else MAX_GASKET_MM
    low, high = here.thread_end - tolerances.thread_end_mm, here.thread_end + tolerances.thread_end_mm
    candidates = _candidates(_designs(session, original.thread, original.seat, filters.in_stock,
                                      reach_between=(low - 1e-6, high + gasket_span + 1e-6),
                                      exclude_sku=original_sku), filters)
    comparisons: dict[Design, tuple[PlugSpec, Comparison]] = {}
    matches: list[tuple[tuple, _Design]] = []
    for design in candidates:
        comparison = compare(original, design.spec, catalog, tolerances, here)
        if comparison is not None:
            comparisons[design.values] = (design.spec, comparison)
            matches.append((comparison.class_key(), design))
    return InterchangeRanking(_classes(matches), comparisons, len(candidates))


def interchanges(session, original: PlugSpec, original_sku: str, catalog: Catalog, *,
                 filters: PlugFilters = NO_FILTERS, tolerances: Tolerances = DEFAULT_TOLERANCES,
                 offset: int = 0, limit: int = 50, view: View | None = None) -> InterchangePage:
    """Inventory plugs that can replace `original`, closest first (see
    `service.fitment.search` for the rule and its tolerances)."""
    ranking = (view or records_cache.view(session)).get_or_build(
        ("interchanges", original, original_sku, catalog.version, filters, tolerances),
        lambda: rank_interchanges(session, original, original_sku, catalog, filters, tolerances))
    items = ranking.pages.get_or_build((offset, limit), lambda: [
        Interchange(row, *ranking.comparisons[row.design])
        for row in _cut(session, ranking.classes, offset, limit, in_stock=filters.in_stock, exclude_sku=original_sku)])
    return InterchangePage(items, sum(ranked.count for ranked in ranking.classes), ranking.designs)


def interchanges_of_plug(session, sku: str, catalog: Catalog, **page: Any) -> InterchangePage | None:
    """`interchanges` for a stored plug (`page`: its keyword arguments); None when no plug
    has this sku."""
    view = records_cache.view(session)
    original = _kept_spec(view, ("plug", sku), lambda: repository.plugs(session).document(sku), plug_spec)
    return None if original is None else interchanges(session, original, sku, catalog, view=view, **page)
