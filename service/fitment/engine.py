"""The fit engine's one entry point: plain data in, a `FitResult` out.

Pure: no Flask, database or pint. The boundary (schemas, CLI) converts units and
resolves references before calling `check_fit`, and serialises the result after.
"""
from __future__ import annotations

from collections.abc import Iterable

from .catalog import Catalog
from .checks import CHECKS, CHECKS_WITHOUT_INSTALLATION
from .context import FitContext
from .geometry import derive
from .model import Finding, FitResult, Options, PlugSpec, PortSpec

# 2.2.0: the seat's diameters (GASKET_OVERHANG, HEX_TRAPPED, SEAT_ANGLE_MISMATCH, TAPER_DIAMETER)
# and thread-repair inserts (INSERT_FITTED, INSERT_PROUD, INSERT_SHORT, the strength's governing
# interface), and the cautions for aluminium heads and inserts (issue 18).
# 2.1.0: the piston margin takes off a running allowance estimated from the head's max_rpm
# and rod (running.py) when no dynamic_allowance is given; analysis.piston says how it was
# found (dynamic_allowance, dynamic_allowance_method and the inputs); the valve margin keeps
# dynamic_allowance alone.
# 2.0.0: the result's geometry names the two sides of the port (protrusion_short_side,
# protrusion_long_side, replacing thread_protrusion and thread_recess), REACH_LONG and
# REACH_SHORT can fail, and the piston margin counts the shell edge of an inclined plug
# (1.1.0: the torque, strength and spark figures of issue 13).
ENGINE_VERSION = "2.2.0"

_SEVERITY_RANK = {"info": 0, "warn": 1, "fail": 2}
_VERDICTS = ("pass", "warn", "fail")
DEFAULT_OPTIONS = Options()


def verdict_of(findings: Iterable[Finding]) -> str:
    """The worst severity present: fail over warn over pass (info does not count)."""
    worst = 0
    for finding in findings:
        rank = _SEVERITY_RANK[finding.severity]
        if rank > worst:
            worst = rank
            if worst == 2:
                break
    return _VERDICTS[worst]


def check_fit(plug: PlugSpec, port: PortSpec, options: Options | None, catalog: Catalog) -> FitResult:
    ctx = FitContext(plug, port, options or DEFAULT_OPTIONS, catalog)
    derive(ctx)
    for check in CHECKS if ctx.installable else CHECKS_WITHOUT_INSTALLATION:
        check(ctx)
    # The context tracked the worst severity as findings were added (see `FitContext.add`).
    # Positional, in FitResult's field order: by keyword the call costs about 0.3 µs more,
    # a few per cent of a whole check.
    return FitResult(_VERDICTS[ctx.worst], plug.thread, ctx.findings, ctx.geometry, ctx.analysis, ctx.torque,
                     ctx.assumptions, ctx.cautions, ENGINE_VERSION, catalog.version)
