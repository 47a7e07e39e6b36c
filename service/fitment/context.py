"""The state one fit check builds up: inputs, derived geometry, and what checks found.

Checks read the inputs and the geometry and append to `findings`, `analysis` and
`assumptions` through the small helpers here, so every check reports missing data,
defaults and requirements the same way.
"""
from __future__ import annotations

from functools import lru_cache

from .catalog import Catalog, TorqueGuide
from .defaults import DYNAMIC_ALLOWANCE_MM, FLUSH_TOLERANCE_MM, MIN_CLEARANCE_MM, Default
from .model import Bounds, Finding, Options, PlugSpec, PortSpec, Value
from .stack import Stack


@lru_cache(maxsize=1024)
def _not_checked(check: str, missing: str, severity: str) -> Finding:
    # Findings are immutable, so the same few NOT_CHECKED findings are shared by every result.
    return Finding("NOT_CHECKED", check, severity, f"The {check.replace('_', ' ')} check was not made: {missing}.", {})


def _default_note(name: str, default: Default) -> str:
    return f"{name} not given: {default.value:g} mm used ({default.source})"


_NOTES = {name: _default_note(name, default) for name, default in (
    ("min_clearance", MIN_CLEARANCE_MM), ("flush_tolerance", FLUSH_TOLERANCE_MM),
    ("dynamic_allowance", DYNAMIC_ALLOWANCE_MM))}


class FitContext:
    __slots__ = ("plug", "port", "options", "catalog", "findings", "analysis", "assumptions",
                 "torque", "gasket", "port_depth", "port_depth_long", "thread_end", "tip",
                 "geometry", "_defaults_noted")

    def __init__(self, plug: PlugSpec, port: PortSpec, options: Options, catalog: Catalog) -> None:
        self.plug = plug
        self.port = port
        self.options = options
        self.catalog = catalog
        self.findings: list[Finding] = []
        self.analysis: dict[str, dict[str, Value]] = {}
        self.assumptions: list[str] = []
        self.torque: TorqueGuide | None = None
        self.geometry: dict[str, Bounds] = {}
        # Stacks along the plug axis (mm from the head's seat face); None when the
        # inputs needed for them are missing. Filled by `geometry.derive`.
        self.gasket: Stack | None = None
        self.port_depth: Stack | None = None
        self.port_depth_long: Stack | None = None
        self.thread_end: Stack | None = None
        self.tip: Stack | None = None
        self._defaults_noted: set[str] = set()

    # --- reporting -------------------------------------------------------------------
    def add(self, code: str, check: str, severity: str, message: str, **values: Value) -> None:
        self.findings.append(Finding(code, check, severity, message, values))

    def not_checked(self, check: str, missing: str) -> None:
        """Record that `check` could not run; a required check turns this into a fail."""
        severity = "fail" if check in self.options.require else "info"
        self.findings.append(_not_checked(check, missing, severity))

    def assume(self, text: str) -> None:
        self.assumptions.append(text)

    # --- options with their documented defaults ---------------------------------------
    def _option(self, name: str, given: float | None, default: Default) -> float:
        if given is not None:
            return given
        if name not in self._defaults_noted:
            self._defaults_noted.add(name)
            self.assumptions.append(_NOTES[name])
        return default.value

    def min_clearance(self) -> float:
        return self._option("min_clearance", self.options.min_clearance, MIN_CLEARANCE_MM)

    def flush_tolerance(self) -> float:
        return self._option("flush_tolerance", self.options.flush_tolerance, FLUSH_TOLERANCE_MM)

    def dynamic_allowance(self) -> float:
        return self._option("dynamic_allowance", self.options.dynamic_allowance, DYNAMIC_ALLOWANCE_MM)

    def low(self, entry: Bounds) -> float:
        """The low bound a verdict uses: worst case unless the request asked for RSS."""
        return entry.rss_min if self.options.stack == "rss" else entry.min

    def high(self, entry: Bounds) -> float:
        return entry.rss_max if self.options.stack == "rss" else entry.max
