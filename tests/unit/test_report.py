"""What `plugfit validate` prints: the table, JUnit XML, and the exit code policy."""
from __future__ import annotations

import xml.etree.ElementTree as ET

import pytest

from service.formats.build_list import read_csv
from service.formats.reports import error_lines, exit_code, junit_report, result_text, text_report
from service.usecases.batch import run_batch

# Contract geometry (fit-check-contract.md): 19.0 reach, 1.5 gasket, 17.5 port depth →
# flush; 20.0 reach → 1.0 mm protrusion, past the 0.5 mm flush tolerance and inside one
# M14 pitch of 1.25 mm (ISO 68-1): REACH_LONG warns; 4.0 mm piston clearance with the
# 20.0 mm plug → margin (17.5 + 4) − (18.5 + 4) = −1.0 mm (PISTON_CONTACT, fail).
BUILD_LIST = (
    "ref,plug_thread,plug_seat,plug_reach_mm,plug_gasket_thickness_mm,plug_firing_end_mm,head_thread,head_seat,"
    "head_port_depth_mm,head_piston_clearance_mm,waive\n"
    "flush,M14,flat,19,1.5,4,M14,flat,17.5,8,\n"
    "long,M14,flat,20,1.5,4,M14,flat,17.5,20,\n"
    "hits,M14,flat,20,1.5,4,M14,flat,17.5,4,\n"
    "unreadable,M14,flat,abc,1.5,4,M14,flat,17.5,8,\n"
    "accepted,M14,flat,20,1.5,4,M14,flat,17.5,20,REACH_LONG: relieved piston\n"
)
GUIDANCE = "the engine maker's service data, local regulations and licensed practice come first"


@pytest.fixture
def answer(catalog) -> dict:
    return run_batch(read_csv(BUILD_LIST), catalog).as_dict()


def test_the_verdicts_are_the_contract_geometry(answer):
    assert [r["verdict"] for r in answer["results"]] == ["pass", "warn", "fail", "invalid", "pass"]
    assert answer["results"][2]["geometry"]["piston_margin"]["nominal"] == pytest.approx(-1.0)


def test_exit_code_is_1_when_a_line_fails_or_is_invalid_and_warnings_fail_only_on_request(answer):
    assert exit_code(answer, "fail") == 1
    only_warnings = {"results": [r for r in answer["results"] if r["verdict"] in ("pass", "warn")]}
    assert exit_code(only_warnings, "fail") == 0
    assert exit_code(only_warnings, "warn") == 1
    assert exit_code({"results": [answer["results"][3]]}, "fail") == 1
    assert exit_code({"results": [answer["results"][0]]}, "warn") == 0


def test_the_table_has_one_row_per_line_and_details_for_every_line_that_is_not_a_clean_pass(answer):
    text = text_report(answer, "list.csv")
    lines = text.splitlines()
    rows = [line for line in lines if line[:1].isdigit() and " lines: " not in line]
    assert [row.split()[:3] for row in rows] == [["2", "flush", "pass"], ["3", "long", "warn"],
                                                 ["4", "hits", "FAIL"], ["5", "unreadable", "INVALID"],
                                                 ["6", "accepted", "pass"]]
    assert "REACH_LONG, PISTON_CONTACT" in rows[2]
    assert "plug_reach_mm: the column is in mm" in rows[3]
    assert "waived REACH_LONG" in rows[4]
    assert "waived REACH_LONG (reason: relieved piston): The plug's threads stand 1.00 mm into the chamber" in text
    assert "  line 2  flush" not in text
    summary = lines.index("5 lines: 2 pass, 1 warn, 1 fail, 1 invalid: FAIL")
    # One caution footer for the whole table, however many lines carry it.
    assert lines[summary + 1].startswith("Caution: ") and GUIDANCE in lines[summary + 1]
    assert text.count(GUIDANCE) == 1


def test_the_table_summary_says_when_warnings_fail(answer):
    warn_only = {"summary": {"total": 1, "pass": 0, "warn": 1, "fail": 0, "invalid": 0, "verdict": "warn"},
                 "results": [answer["results"][1]]}
    assert "1 lines: 0 pass, 1 warn, 0 fail, 0 invalid: FAIL (warnings fail: --fail-on warn)" in (
        text_report(warn_only, "l.csv", "warn").splitlines())


def test_junit_has_one_case_per_line_failures_for_failing_lines_and_errors_for_unreadable_ones(answer):
    root = ET.fromstring(junit_report(answer, "lists/engines.csv", "fail", {"mode": "embedded"}))
    suite = root.find("testsuite")
    assert (suite.get("tests"), suite.get("failures"), suite.get("errors")) == ("5", "1", "1")
    cases = suite.findall("testcase")
    assert [case.get("name") for case in cases] == ["line 2: flush", "line 3: long", "line 4: hits",
                                                    "line 5: unreadable", "line 6: accepted"]
    assert {case.get("classname") for case in cases} == {"engines"}
    failure = cases[2].find("failure")
    assert failure.get("type") == "fail" and failure.get("message").startswith("PISTON_CONTACT: ")
    assert "warn REACH_LONG" in failure.text
    assert cases[3].find("error").get("type") == "invalid"
    assert "REACH_LONG" in cases[1].find("system-out").text and cases[1].find("failure") is None
    assert "reason: relieved piston" in cases[4].find("system-out").text
    assert suite.find("properties/property").get("value") == "embedded"
    # The cautions once, for the suite: not repeated in every test case.
    assert GUIDANCE in suite.find("system-out").text
    assert all(GUIDANCE not in (case.find("system-out").text if case.find("system-out") is not None else "")
               for case in cases)


def test_junit_counts_warnings_as_failures_with_fail_on_warn(answer):
    suite = ET.fromstring(junit_report(answer, "l.csv", "warn")).find("testsuite")
    assert suite.get("failures") == "2"
    assert [c.find("failure").get("type") for c in suite.findall("testcase") if c.find("failure") is not None] == [
        "warn", "fail"]


def test_nested_errors_read_as_dotted_paths():
    assert error_lines({"plug": {"reach": ["not a length"]}, "waive": {0: {"reason": ["needs a reason"]}}}) == [
        "plug.reach: not a length", "waive.0.reason: needs a reason"]


def test_one_result_reads_with_its_verdict_findings_and_geometry(answer):
    text = result_text(answer["results"][2])
    assert text.startswith("M14x1.25: FAIL")
    assert "fail  PISTON_CONTACT:" in text
    assert "piston margin" in text and "-1" in text


@pytest.mark.parametrize("lines", [[0], [0, 1], [0, 4], [3], [2], [0, 1, 2, 3, 4]])
@pytest.mark.parametrize("fail_on", ["fail", "warn"])
def test_the_exit_code_from_the_summary_equals_the_one_from_the_results(catalog, lines, fail_on):
    from service.formats.reports import summary_exit_code

    rows = BUILD_LIST.splitlines(keepends=True)
    answer = run_batch(read_csv(rows[0] + "".join(rows[1 + line] for line in lines)), catalog).as_dict()
    assert summary_exit_code(answer["summary"], fail_on) == exit_code(answer, fail_on)


# A head with its speed and rod, as a build list gives it (invented test numbers): the flush
# plug above with 4.5 mm of piston clearance, a steel rod at 7,000 rpm. Static margin
# (17.5 + 4.5) − (17.5 + 4) = 0.5 mm; less 0.199 mm at speed (tests/unit/test_running.py).
RUNNING_LIST = (
    "ref,plug_thread,plug_seat,plug_reach_mm,plug_gasket_thickness_mm,plug_firing_end_mm,head_thread,head_seat,"
    "head_port_depth_mm,head_piston_clearance_mm,head_stroke,head_rod_length,head_max_rpm,head_rod_material,"
    "head_reciprocating_mass,head_rod_section_area\n"
    "racer,M14,flat,19,1.5,4,M14,flat,17.5,4.5,86,145,7000 rpm,steel,600 g,150\n"
)


def test_the_piston_margin_says_what_running_allowance_it_counts_in_text_and_junit(catalog):
    answer = run_batch(read_csv(RUNNING_LIST), catalog).as_dict()
    result = answer["results"][0]
    assert result["geometry"]["piston_margin"]["nominal"] == pytest.approx(0.5 - 0.199, abs=0.001)
    text = result_text(result)
    assert "piston margin: less 0.20 mm at 7000 rpm, the running allowance estimated from the rod's stretch" in text
    assert "The running allowance (the piston's extra travel towards the head at speed)" in text
    junit = junit_report(answer, "racer.csv")
    failure = ET.fromstring(junit).find(".//failure")
    assert "running allowance of 0.20 mm at 7000 rpm" in failure.get("message")
    assert "The running allowance" in ET.fromstring(junit).find("./testsuite/system-out").text
