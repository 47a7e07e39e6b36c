"""How `plugfit check` and `plugfit validate` show results: a readable table, JUnit XML.

Works on the documents the batch endpoint answers (`{"summary", "results"}`) and on
single result documents, so embedded runs and `--server` runs print the same thing.
Pure: text in, text out; colour comes in through `style` (click's, from the CLI).
"""
from __future__ import annotations

from collections.abc import Callable, Iterable
from pathlib import PurePath
from typing import Any
from xml.sax.saxutils import escape, quoteattr

from service.formats.result_json import display_quantity, display_value

Style = Callable[..., str]

VERDICT_COLOURS = {"pass": "green", "warn": "yellow", "fail": "red", "invalid": "magenta"}
# Shown in the table and as failures; info findings (NOT_CHECKED, HEX_DIFFERS) are
# listed only by `plugfit check` and in --format json.
SHOWN_SEVERITIES = ("warn", "fail")
MAX_REF_WIDTH = 32


def plain(text: str, **_: Any) -> str:
    """No colour (output that is not a terminal)."""
    return text


def failing_verdicts(fail_on: str) -> frozenset[str]:
    """Verdicts that make the run fail: invalid and fail always, warn on request."""
    return frozenset({"fail", "invalid", "warn"} if fail_on == "warn" else {"fail", "invalid"})


def exit_code(answer: dict[str, Any], fail_on: str) -> int:
    """0 when no line fails under the policy, 1 otherwise (see the exit codes in docs/build-lists.md)."""
    failing = failing_verdicts(fail_on)
    return 1 if any(result["verdict"] in failing for result in answer["results"]) else 0


def summary_exit_code(summary: dict[str, Any], fail_on: str) -> int:
    """`exit_code` from the answer's summary, whose counts are those of its results'
    verdicts: for callers that have the counts but did not build the results."""
    return 1 if any(summary[verdict] for verdict in failing_verdicts(fail_on)) else 0


def error_lines(errors: Any, path: tuple[str, ...] = ()) -> list[str]:
    """`{"plug": {"reach": ["..."]}}` as `plug.reach: ...` lines (CSV errors are flat)."""
    if isinstance(errors, dict):
        lines: list[str] = []
        for key, inner in errors.items():
            lines.extend(error_lines(inner, path + (str(key),)))
        return lines
    messages = errors if isinstance(errors, list) else [errors]
    where = ".".join(path)
    return [f"{where}: {message}" if where else str(message) for message in messages]


def _label(result: dict[str, Any], position: int) -> str:
    return f"line {result['line']}" if "line" in result else f"item {position}"


def _number(result: dict[str, Any], position: int) -> str:
    """The table's first column: the CSV line, or `#position` for a JSON item."""
    return str(result["line"]) if "line" in result else f"#{position}"


def _finding_label(finding: dict[str, Any]) -> str:
    if finding["code"] == "NOT_CHECKED":
        return f"NOT_CHECKED({finding['check']})"
    return finding["code"]


def _shown(result: dict[str, Any]) -> list[dict[str, Any]]:
    return [finding for finding in result.get("findings", ()) if finding["severity"] in SHOWN_SEVERITIES]


def _waived(result: dict[str, Any]) -> Iterable[tuple[dict[str, Any], dict[str, Any]]]:
    for waiver in result.get("waivers") or ():
        for finding in waiver["findings"]:
            yield waiver, finding


def _summary_cell(result: dict[str, Any]) -> str:
    if result["verdict"] == "invalid":
        lines = error_lines(result.get("errors", {}))
        return lines[0] + (f" (+{len(lines) - 1} more)" if len(lines) > 1 else "") if lines else "cannot be read"
    parts = [_finding_label(finding) for finding in _shown(result)]
    parts += [f"waived {finding['code']}" for _, finding in _waived(result)]
    return ", ".join(parts)


def _clip(text: str, width: int) -> str:
    return text if len(text) <= width else text[:width - 1] + "…"


def text_report(answer: dict[str, Any], source: str, fail_on: str = "fail", style: Style = plain) -> str:
    """The table people read: one row per line, then the findings of every line that is
    not a clean pass (with waivers and their reasons), then the summary."""
    results = answer["results"]
    rows = [(_number(result, position), _clip(result["ref"], MAX_REF_WIDTH), result["verdict"],
             _summary_cell(result)) for position, result in enumerate(results, start=1)]
    widths = [max([len(header)] + [len(row[index]) for row in rows])
              for index, header in enumerate(("line", "ref", "verdict"))]
    out = [f"plugfit validate {source}", "",
           f"{'line':<{widths[0]}}  {'ref':<{widths[1]}}  {'verdict':<{widths[2]}}  findings"]
    for label, ref, verdict, cell in rows:
        word = verdict.upper() if verdict in ("fail", "invalid") else verdict
        shown = style(word, fg=VERDICT_COLOURS[verdict]) + " " * (widths[2] - len(word))
        out.append(f"{label:<{widths[0]}}  {ref:<{widths[1]}}  {shown}  {cell}".rstrip())
    details = _details(results, style)
    if details:
        out += ["", "Details", *details]
    out += ["", _summary_line(answer["summary"], fail_on, style)]
    out += [f"Caution: {text}" for text in cautions_of(results)]
    return "\n".join(out) + "\n"


def cautions_of(results: list[dict[str, Any]]) -> list[str]:
    """The cautions the checked lines carry, each once, in order (one footer per report)."""
    seen: dict[str, None] = {}
    for result in results:
        for text in result.get("cautions") or ():
            seen.setdefault(text, None)
    return list(seen)


def _details(results: list[dict[str, Any]], style: Style) -> list[str]:
    out: list[str] = []
    for position, result in enumerate(results, start=1):
        shown, waived = _shown(result), list(_waived(result))
        if result["verdict"] == "pass" and not waived:
            continue
        verdict = result["verdict"]
        out.append(f"  {_label(result, position)}  {result['ref']}  "
                   f"{style(verdict.upper(), fg=VERDICT_COLOURS[verdict], bold=True)}")
        if verdict == "invalid":
            out += [f"      {line}" for line in error_lines(result.get("errors", {}))]
        for finding in shown:
            out.append(f"      {finding['severity']:<5} {_finding_label(finding)}: {finding['message']}")
        for waiver, finding in waived:
            out.append(f"      waived {finding['code']} (reason: {waiver['reason']}): {finding['message']}")
    return out


def _summary_line(summary: dict[str, Any], fail_on: str, style: Style) -> str:
    verdict = summary["verdict"]
    if fail_on == "warn" and verdict == "warn":
        verdict = "fail"
    policy = " (warnings fail: --fail-on warn)" if fail_on == "warn" else ""
    return (f"{summary['total']} lines: {summary['pass']} pass, {summary['warn']} warn, {summary['fail']} fail, "
            f"{summary['invalid']} invalid: {style(verdict.upper(), fg=VERDICT_COLOURS[verdict], bold=True)}"
            f"{policy}")


# --- JUnit XML ------------------------------------------------------------------------------


def _testcase_name(result: dict[str, Any], position: int) -> str:
    label = _label(result, position)
    own_label = str(result.get("line", position))
    return label if result["ref"] == own_label else f"{label}: {result['ref']}"


def _findings_text(result: dict[str, Any]) -> str:
    lines = [f"{finding['severity']} {_finding_label(finding)}: {finding['message']}"
             for finding in _shown(result)]
    lines += [f"waived {finding['code']} (reason: {waiver['reason']}): {finding['message']}"
              for waiver, finding in _waived(result)]
    return "\n".join(lines)


def junit_report(answer: dict[str, Any], source: str, fail_on: str = "fail",
                 properties: dict[str, str] | None = None) -> str:
    """JUnit XML: one test case per line of the build list.

    A line that fails (or warns, with `--fail-on warn`) is a `<failure>` carrying its
    findings; a line that cannot be read (verdict invalid) is an `<error>`: the check
    could not run at all. Warnings that do not fail and waived findings go to the test
    case's `<system-out>`; the cautions that go with the guidance go, once, to the
    suite's `<system-out>`. Written as text with escaping (ElementTree needs a third of a
    second to build and indent 10,000 cases); the tests parse it back.
    """
    failing = failing_verdicts(fail_on)
    results = answer["results"]
    classname = quoteattr(PurePath(source).stem or "build-list")
    failures = sum(1 for r in results if r["verdict"] in failing and r["verdict"] != "invalid")
    errors = sum(1 for r in results if r["verdict"] == "invalid")
    out = _junit_opening(source, len(results), failures, errors, properties)
    file_attribute = quoteattr(source)
    for position, result in enumerate(results, start=1):
        line = f' line="{int(result["line"])}"' if "line" in result else ""
        opening = (f"    <testcase classname={classname} name={quoteattr(_testcase_name(result, position))} "
                   f'time="0" file={file_attribute}{line}')
        verdict = result["verdict"]
        if verdict == "invalid":
            lines = error_lines(result.get("errors", {}))
            message = lines[0] if lines else "cannot be read"
            out.append(f'{opening}>\n      <error type="invalid" message={quoteattr(message)}>'
                       f"{escape(chr(10).join(lines))}</error>\n    </testcase>")
            continue
        text = _findings_text(result)
        if verdict in failing:
            worst = [f for f in _shown(result) if f["severity"] == verdict] or _shown(result)
            message = f"{_finding_label(worst[0])}: {worst[0]['message']}" if worst else verdict
            out.append(f'{opening}>\n      <failure type="{verdict}" message={quoteattr(message)}>'
                       f"{escape(text)}</failure>\n    </testcase>")
        elif text:
            out.append(f"{opening}>\n      <system-out>{escape(text)}</system-out>\n    </testcase>")
        else:
            out.append(f"{opening} />")
    cautions = cautions_of(results)
    if cautions:  # once for the suite, not once per test case
        out.append(f"    <system-out>{escape(chr(10).join(cautions))}</system-out>")
    out += ["  </testsuite>", "</testsuites>"]
    return "\n".join(out) + "\n"


def _junit_opening(source: str, tests: int, failures: int, errors: int,
                   properties: dict[str, str] | None) -> list[str]:
    """The lines of a report up to its first test case."""
    counts = f'tests="{tests}" failures="{failures}" errors="{errors}" skipped="0"'
    out = ['<?xml version="1.0" encoding="UTF-8"?>',
           f'<testsuites name="plugfit validate" {counts}>',
           f'  <testsuite name={quoteattr(PurePath(source).name or source)} {counts} time="0">']
    if properties:
        out.append("    <properties>")
        out += [f"      <property name={quoteattr(key)} value={quoteattr(value)} />"
                for key, value in properties.items()]
        out.append("    </properties>")
    return out


def junit_error_report(source: str, message: str, kind: str, properties: dict[str, str] | None = None) -> str:
    """JUnit XML for a run that could not check the list at all (the file is unusable,
    the command line is wrong, the server cannot be reached): one test case in error
    carrying the message, so a CI's report reader shows the real reason instead of
    failing on an empty file. `kind` is the error's type (unusable, usage, unreachable)."""
    out = _junit_opening(source, 1, 0, 1, properties)
    first = message.strip().splitlines()[0] if message.strip() else kind
    out.append(f"    <testcase classname={quoteattr(PurePath(source).stem or 'build-list')} "
               f'name="the build list as a whole" time="0" file={quoteattr(source)}>')
    out.append(f"      <error type={quoteattr(kind)} message={quoteattr(first)}>{escape(message)}</error>")
    out += ["    </testcase>", "  </testsuite>", "</testsuites>"]
    return "\n".join(out) + "\n"


# --- one check ------------------------------------------------------------------------------


def _geometry_number(value: float, unit: str) -> str:
    """A geometry bound as the table shows it: inches to a thousandth, mm to four digits."""
    return f"{value:.3f}" if unit == "in" else f"{value:.4g}"


def _torque_guidance(torque: dict[str, Any]) -> str:
    """The torque block as a sentence: the range (inside itself at the display step), what
    it is for, and the turn angles with the gasket condition each is for."""
    low = display_quantity(torque["min"], torque["unit"], 1).split(" ")[0]
    high = display_quantity(torque["max"], torque["unit"], -1)
    text = f"{low} to {high} for {torque['lubrication'].replace('_', '-')} threads"
    if torque.get("turn_angle_deg") is not None:
        text += f", or {torque['turn_angle_deg']:g} deg {torque['turn_angle_note']}"
        if torque.get("reused_gasket_turn_angle_deg") is not None:
            text += f" ({torque['reused_gasket_turn_angle_deg']:g} deg with a re-used gasket)"
    return f"{text} ({torque['source']})"


_GEOMETRY_LABELS = {"protrusion_short_side": "protrusion, short side", "protrusion_long_side": "protrusion, long side",
                    "tip_position": "tip position", "piston_margin": "piston margin", "valve_margin": "valve margin",
                    "insert_protrusion_short_side": "insert end, short side",
                    "insert_protrusion_long_side": "insert end, long side"}


_ALLOWANCE_WORDS = {"rod_stretch": "the running allowance estimated from the rod's stretch and bearing clearances",
                    "rule_of_thumb": "the running allowance from the rule of thumb for the rod",
                    "option": "the dynamic_allowance option"}


def _piston_allowance_note(document: dict[str, Any]) -> str | None:
    """What the piston margin took off, when it took anything: the running allowance at the
    head's max_rpm, or the dynamic_allowance option (`analysis.piston`)."""
    piston = (document.get("analysis") or {}).get("piston") or {}
    allowance, method = piston.get("dynamic_allowance"), piston.get("dynamic_allowance_method")
    if not isinstance(allowance, dict) or not allowance["value"] or method not in _ALLOWANCE_WORDS:
        return None
    speed = piston.get("max_rpm")
    at = f" at {display_value('max_rpm', speed)}" if isinstance(speed, dict) and method != "option" else ""
    return (f"piston margin: less {display_value('dynamic_allowance', allowance)}{at}, "
            f"{_ALLOWANCE_WORDS[method]} (see the assumptions and cautions)")


def result_text(document: dict[str, Any], style: Style = plain) -> str:
    """One result document, readable: verdict, findings, geometry, torque, assumptions."""
    verdict = document["verdict"]
    out = [f"{document['thread']}: {style(verdict.upper(), fg=VERDICT_COLOURS[verdict], bold=True)}", ""]
    if document["findings"]:
        out.append("Findings")
        for finding in document["findings"]:
            out.append(f"  {finding['severity']:<5} {_finding_label(finding)}: {finding['message']}")
        out.append("")
    for waiver, finding in _waived(document):
        out.append(f"  waived {finding['code']} (reason: {waiver['reason']}): {finding['message']}")
    geometry = document.get("geometry") or {}
    if geometry:
        unit = next(iter(geometry.values()))["unit"]
        out.append(f"Geometry ({unit}; along the plug axis, positive into the chamber)")
        out.append(f"  {'':<26}{'nominal':>9}{'min':>9}{'max':>9}{'rss_min':>9}{'rss_max':>9}")
        for name, entry in geometry.items():
            numbers = "".join(f"{_geometry_number(entry[key], unit):>9}"
                              for key in ("nominal", "min", "max", "rss_min", "rss_max"))
            out.append(f"  {_GEOMETRY_LABELS.get(name, name):<26}{numbers}")
        allowance = _piston_allowance_note(document)
        if allowance:
            out.append(f"  {allowance}")
        out.append("")
    for check, quantities in (document.get("analysis") or {}).items():
        shown = ", ".join(f"{name} {q}" if isinstance(q, str) else f"{name} {display_value(name, q)}"
                          for name, q in quantities.items())
        out.append(f"Analysis, {check}: {shown}")
    torque = document.get("torque")
    if torque:
        out.append(f"Torque guidance: {_torque_guidance(torque)}")
    if document.get("assumptions"):
        out += ["", "Assumptions", *(f"  - {text}" for text in document["assumptions"])]
    if document.get("cautions"):
        out += ["", "Cautions", *(f"  - {text}" for text in document["cautions"])]
    return "\n".join(out) + "\n"
