"""The parts counter's answers written as JSON-ready dicts: one line per plug.

`schemas.counter.FittingPlugSchema` and `InterchangeSchema` document the shapes (a test
loads what is sent through them); these writers are plain Python because a page is
written on every request and a marshmallow dump of it would cost more than the search.
A line is what a clerk needs: the inventory line (sku, description, stock, bin, heat
range) and, for a fitting plug, the verdict, the finding codes, the two protrusions and
the piston margin the verdict used, with the cautions.
"""
from __future__ import annotations

from typing import Any, Protocol

from service.fitment.model import FitResult, PlugSpec
from service.fitment.search import INTERCHANGE_CAUTIONS, Comparison
from service.formats.result_json import quantity_document

# The most severe first; a listed plug never has a failing finding.
_SEVERITY_ORDER = {"fail": 0, "warn": 1, "info": 2}
# A line's protrusions: the result's geometry entries of the same names.
PROTRUSIONS = ("protrusion_short_side", "protrusion_long_side")


class InventoryLine(Protocol):
    """What the writers read of a stored plug (`service.store.repository.CounterRow`)."""

    sku: str
    description: str | None
    quantity_on_hand: int
    location: str | None


def length(value: float | None, units: str) -> dict[str, Any] | None:
    """A length in the client's units, rounded as the result document rounds it."""
    return quantity_document(value, "length", units)


def inventory_fields(row: InventoryLine, spec: PlugSpec) -> dict[str, Any]:
    heat = spec.heat_range
    return {"sku": row.sku, "description": row.description, "quantity_on_hand": row.quantity_on_hand,
            "location": row.location, "heat_range": None if heat is None else {"scale": heat.scale, "value": heat.value}}


def finding_codes(result: FitResult) -> list[str]:
    """Each code once, the most severe first, then in the order the checks found them."""
    ordered = sorted(result.findings, key=lambda finding: _SEVERITY_ORDER[finding.severity])
    return list(dict.fromkeys(finding.code for finding in ordered))


class FittingLines:
    """Writes the lines of fitting-plugs pages. Plugs of one design share one result, so
    what comes from a result is worked out once and kept in `kept`: a dict that must
    live no longer than the results it describes (they are told apart by identity), such
    as the search's `FitPage.derived`."""

    def __init__(self, units: str, stack: str, kept: dict | None = None) -> None:
        self.units = units
        self.low_bound = 3 if stack == "rss" else 1  # rss_min or min of a geometry entry
        self._kept: dict = {} if kept is None else kept

    def line(self, row: InventoryLine, spec: PlugSpec, result: FitResult) -> dict[str, Any]:
        key = (id(result), self.units, self.low_bound)
        from_result = self._kept.get(key)
        if from_result is None:
            from_result = self._kept[key] = self._from_result(result)
        return {**inventory_fields(row, spec), **from_result}

    def _from_result(self, result: FitResult) -> dict[str, Any]:
        geometry = result.geometry
        written: dict[str, Any] = {"verdict": result.verdict, "codes": finding_codes(result)}
        for name in PROTRUSIONS:
            entry = geometry.get(name)
            written[name] = None if entry is None else length(entry.nominal, self.units)
        margin = geometry.get("piston_margin")
        written["piston_margin"] = None if margin is None else length(margin[self.low_bound], self.units)
        written["cautions"] = list(result.cautions)
        return written


def interchange_line(row: InventoryLine, spec: PlugSpec, comparison: Comparison, units: str) -> dict[str, Any]:
    return {**inventory_fields(row, spec),
            "closeness": length(comparison.closeness, units),
            "differences": {"thread_end": length(comparison.thread_end_difference, units),
                            "tip": length(comparison.tip_difference, units),
                            "terminal_top": length(comparison.terminal_top_difference, units),
                            "heat_range": heat_range_step(comparison.heat_range_difference)},
            "hex_differs": comparison.hex_differs, "cautions": list(INTERCHANGE_CAUTIONS)}


def heat_range_step(difference: float | None) -> dict[str, Any] | None:
    """A heat-range difference has no unit: it counts positions on the plugs' own scale."""
    return None if difference is None else {"value": round(difference, 3) + 0.0, "unit": ""}
