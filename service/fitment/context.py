"""The state one fit check builds up: inputs, derived geometry, and what checks found.

Checks read the inputs and the geometry and append to `findings`, `analysis` and
`assumptions` through the small helpers here, so every check reports missing data,
defaults and requirements the same way.
"""
from __future__ import annotations

from functools import lru_cache
from operator import itemgetter
from typing import NamedTuple

from .catalog import Catalog, TorqueGuide
from .defaults import (
    CAUTIONS,
    DYNAMIC_ALLOWANCE_MM,
    FLUSH_TOLERANCE_MM,
    MAX_PROTRUSION_PITCHES,
    MAX_RECESS_PITCHES,
    MIN_CLEARANCE_MM,
    Default,
)
from .designation import parse_designation
from .model import Analysis, Finding, Options, PlugSpec, PortSpec, SourcedValue, Value
from .stack import Bounds, Stack


class Skip(NamedTuple):
    """A check's NOT_CHECKED finding for one reason, made once in both severities: `info`,
    or `fail` when the request requires the check. Findings are immutable, so every
    result shares them; checks whose reasons are fixed build theirs at import."""

    check: str
    info: Finding
    fail: Finding


@lru_cache(maxsize=1024)
def skip_reason(check: str, missing: str) -> Skip:
    message = f"The {check.replace('_', ' ')} check was not made: {missing}."
    return Skip(check, Finding("NOT_CHECKED", check, "info", message, {}),
                Finding("NOT_CHECKED", check, "fail", message, {}))


def _default_note(name: str, default: Default) -> str:
    return f"{name} not given: {default.value:g} mm used ({default.source})"


_MIN_CLEARANCE_NOTE = _default_note("min_clearance", MIN_CLEARANCE_MM)
_FLUSH_TOLERANCE_NOTE = _default_note("flush_tolerance", FLUSH_TOLERANCE_MM)
_DYNAMIC_ALLOWANCE_NOTE = _default_note("dynamic_allowance", DYNAMIC_ALLOWANCE_MM)


@lru_cache(maxsize=64)
def _default_reach_limits(thread: str) -> tuple[tuple[float | None, str | None], tuple[float | None, str | None]]:
    """The default `max_protrusion` and `max_recess` of a port thread, counted in its
    pitches, each with the assumption that says so; (None, None) when the designation
    gives no pitch. Keyed by the designation alone, so the look-up hashes one string."""
    pitch = (parse_designation(thread) or (0.0, None))[1]

    def default(name: str, pitches: Default) -> tuple[float | None, str | None]:
        if pitch is None:
            return None, None
        value = pitches.value * pitch
        return value, f"{name} not given: {value:g} mm used, {pitches.source}"

    return default("max_protrusion", MAX_PROTRUSION_PITCHES), default("max_recess", MAX_RECESS_PITCHES)


# Which entry of a `Bounds` a verdict reads, per stack option (see `FitContext.low`).
_WORST_CASE_LOW, _WORST_CASE_HIGH = itemgetter(1), itemgetter(2)  # Bounds.min, Bounds.max
_RSS_LOW, _RSS_HIGH = itemgetter(3), itemgetter(4)  # Bounds.rss_min, Bounds.rss_max

_SEVERITY_RANK = {"info": 0, "warn": 1, "fail": 2}
_new = tuple.__new__


class FitContext:
    __slots__ = (
        "analysis",
        "assumptions",
        "catalog",
        "cautions",
        "findings",
        "gasket",
        "geometry",
        "high",
        "installable",
        "low",
        "options",
        "plug",
        "port",
        "port_depth",
        "port_depth_long",
        "shell_edge_margin",
        "shell_edge_offset",
        "thread_end",
        "tip",
        "tip_margin",
        "torque",
        "worst",
    )

    def __init__(self, plug: PlugSpec, port: PortSpec, options: Options, catalog: Catalog) -> None:
        self.plug = plug
        self.port = port
        self.options = options
        self.catalog = catalog
        self.findings: list[Finding] = []
        self.analysis: Analysis = {}
        self.assumptions: list[str] = []
        self.torque: TorqueGuide | None = None
        # The result's cautions: the general ones, and more when a check finds a reason.
        self.cautions: tuple[str, ...] = CAUTIONS
        self.geometry: dict[str, Bounds] = {}
        # Stacks along the plug axis (mm from the head's seat face); None when the
        # inputs needed for them are missing. Filled by `geometry.derive`.
        self.gasket: Stack | None = None
        self.port_depth: Stack | None = None
        self.port_depth_long: Stack | None = None
        self.thread_end: Stack | None = None  # e
        self.tip: Stack | None = None  # t
        # The two features the piston margin is the smaller of, and r·tan θ.
        self.tip_margin: Bounds | None = None
        self.shell_edge_margin: Bounds | None = None
        self.shell_edge_offset = 0.0
        # A plug of another thread or seat cannot be installed: no position, no torque.
        self.installable = plug.thread == port.thread and plug.seat == port.seat
        # The worst severity found so far (0 info, 1 warn, 2 fail), kept as findings are
        # added so the verdict needs no second pass over them.
        self.worst = 0
        # `low(entry)` and `high(entry)`: the bounds a verdict uses, worst case unless the
        # request asked for RSS. Chosen once here as C-level getters, because the checks
        # call them several times per fit and a method call costs more than the lookup.
        if options.stack == "rss":
            self.low, self.high = _RSS_LOW, _RSS_HIGH
        else:
            self.low, self.high = _WORST_CASE_LOW, _WORST_CASE_HIGH

    # --- reporting -------------------------------------------------------------------
    def add(self, code: str, check: str, severity: str, message: str, **values: Value | SourcedValue) -> None:
        rank = _SEVERITY_RANK[severity]
        self.worst = max(self.worst, rank)
        # tuple.__new__ skips the NamedTuple's Python-level __new__; same fields, same order.
        self.findings.append(_new(Finding, (code, check, severity, message, values)))

    def not_checked(self, check: str, missing: str) -> None:
        """Record that `check` could not run; a required check turns this into a fail."""
        self.skip(skip_reason(check, missing))

    def skip(self, reason: Skip) -> None:
        """`not_checked` with a reason made beforehand by `skip_reason`."""
        if reason.check in self.options.require:
            self.worst = 2
            self.findings.append(reason.fail)
        else:
            self.findings.append(reason.info)

    def assume(self, text: str) -> None:
        self.assumptions.append(text)

    # --- options with their documented defaults ---------------------------------------
    # Each default is named once in the assumptions, however many checks use it. The
    # notes are shared constant strings, so the membership test is an identity check on
    # a short list (cheaper than keeping a set per fit). Written out per option, not
    # through a shared helper, because the checks call these on every fit.
    def min_clearance(self) -> float:
        given = self.options.min_clearance
        if given is not None:
            return given
        if _MIN_CLEARANCE_NOTE not in self.assumptions:
            self.assumptions.append(_MIN_CLEARANCE_NOTE)
        return MIN_CLEARANCE_MM.value

    def flush_tolerance(self) -> float:
        given = self.options.flush_tolerance
        if given is not None:
            return given
        if _FLUSH_TOLERANCE_NOTE not in self.assumptions:
            self.assumptions.append(_FLUSH_TOLERANCE_NOTE)
        return FLUSH_TOLERANCE_MM.value

    # The reach check's fail levels are noted only where they decide a finding's severity
    # (see checks.check_reach), so each returns the note with the value.
    def max_protrusion(self) -> tuple[float | None, str | None]:
        """REACH_LONG's fail level, and the note when it is the default (one pitch);
        (None, None) when the port's thread gives no pitch: then it only warns."""
        given = self.options.max_protrusion
        return (given, None) if given is not None else _default_reach_limits(self.port.thread)[0]

    def max_recess(self) -> tuple[float | None, str | None]:
        """REACH_SHORT's fail level, and the note when it is the default (two pitches)."""
        given = self.options.max_recess
        return (given, None) if given is not None else _default_reach_limits(self.port.thread)[1]

    def dynamic_allowance(self) -> float:
        given = self.options.dynamic_allowance
        if given is not None:
            return given
        if _DYNAMIC_ALLOWANCE_NOTE not in self.assumptions:
            self.assumptions.append(_DYNAMIC_ALLOWANCE_NOTE)
        return DYNAMIC_ALLOWANCE_MM.value
