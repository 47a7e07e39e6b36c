"""`plugfit validate` and `plugfit check`, embedded: through click's runner and as the
installed `.venv/bin/plugfit` in a real subprocess. Every exit code, every output
format, waivers, --fail-on warn, --require, and references from inventory files and
from the local database."""
from __future__ import annotations

import json
import os
import subprocess
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
PLUGFIT = REPO / ".venv" / "bin" / "plugfit"
DEMO_INVENTORY = ("--inventory", str(REPO / "seed_catalog/demo/plugs.csv"),
                  "--inventory", str(REPO / "seed_catalog/demo/heads.csv"))
EXAMPLE_CSV = REPO / "examples" / "build-list.csv"
EXAMPLE_JSON = REPO / "examples" / "build-list.json"

HEADER = ("ref,plug_thread,plug_seat,plug_reach_mm,plug_gasket_thickness_mm,plug_firing_end_mm,head_thread,"
          "head_seat,head_port_depth_mm,head_piston_clearance_mm,waive\n")
# Contract geometry (fit-check-contract.md): 19.0 − 1.5 = 17.5 = port depth → flush,
# piston margin (17.5 + 8) − 21.5 = 4.0 mm. A 20.0 mm reach protrudes 1.0 mm, past the
# 0.5 mm flush tolerance and inside one M14 pitch of 1.25 mm, ISO 68-1 (REACH_LONG, warn);
# in a 4 mm piston clearance its margin is (17.5 + 4) − 22.5 = −1.0 mm (fail).
FLUSH = "flush,M14,flat,19,1.5,4,M14,flat,17.5,8,\n"
LONG_ROOMY = "long,M14,flat,20,1.5,4,M14,flat,17.5,20,\n"
HITS_PISTON = "hits,M14,flat,20,1.5,4,M14,flat,17.5,4,\n"


def write(tmp_path: Path, text: str, name: str = "list.csv") -> str:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return str(path)


def run(*args: str, database_url: str | None = None, stdin: str | None = None) -> subprocess.CompletedProcess:
    env = {key: value for key, value in os.environ.items() if not key.startswith("PLUGFIT_")}
    if database_url:
        env["PLUGFIT_DATABASE_URL"] = database_url
    return subprocess.run([str(PLUGFIT), *args], cwd=REPO, env=env, capture_output=True, text=True, input=stdin,
                          timeout=120)


# --- through click's runner -------------------------------------------------------------


def test_the_example_list_passes_with_the_demo_inventory(runner):
    result = runner.invoke("validate", str(EXAMPLE_CSV), *DEMO_INVENTORY)
    assert result.exit_code == 0, result.output
    assert "6 lines: 5 pass, 1 warn, 0 fail, 0 invalid: WARN" in result.output
    assert "waived BOOT_ENGAGEMENT (reason: demo - the longer coil boot" in result.output


def test_the_json_example_gives_the_same_verdicts_as_the_csv_lines_it_repeats(runner):
    csv_answer = json.loads(runner.invoke("validate", str(EXAMPLE_CSV), "--format", "json", *DEMO_INVENTORY).output)
    json_answer = json.loads(runner.invoke("validate", str(EXAMPLE_JSON), "--format", "json",
                                           *DEMO_INVENTORY).output)
    by_ref = {r["ref"]: r for r in csv_answer["results"]}
    for result in json_answer["results"]:
        assert result["verdict"] == by_ref[result["ref"]]["verdict"]
        assert result["findings"] == by_ref[result["ref"]]["findings"]


def test_a_failing_line_exits_1_and_the_table_says_which_line_and_why(runner, tmp_path):
    result = runner.invoke("validate", write(tmp_path, HEADER + FLUSH + HITS_PISTON))
    assert result.exit_code == 1
    assert "PISTON_CONTACT" in result.output
    assert "line 3  hits  FAIL" in result.output
    assert "It needs 2.50 mm more room" in result.output  # 1.5 mm minimum − (−1.0 mm) margin


def test_a_line_that_cannot_be_read_exits_1_and_the_others_are_still_checked(runner, tmp_path):
    text = HEADER + FLUSH + "bad,M14,flat,nineteen,1.5,4,M14,flat,17.5,8,\n"
    result = runner.invoke("validate", write(tmp_path, text), "--format", "json")
    assert result.exit_code == 1
    answer = json.loads(result.output)
    assert [r["verdict"] for r in answer["results"]] == ["pass", "invalid"]
    assert list(answer["results"][1]["errors"]) == ["plug_reach_mm"]


def test_warnings_pass_unless_fail_on_warn(runner, tmp_path):
    path = write(tmp_path, HEADER + FLUSH + LONG_ROOMY)
    assert runner.invoke("validate", path).exit_code == 0
    strict = runner.invoke("validate", path, "--fail-on", "warn")
    assert strict.exit_code == 1
    assert "(warnings fail: --fail-on warn)" in strict.output


def test_require_fails_a_line_that_lacks_the_data_for_a_required_check(runner, tmp_path):
    path = write(tmp_path, HEADER + FLUSH)
    assert runner.invoke("validate", path).exit_code == 0
    required = runner.invoke("validate", path, "--require", "piston,valve", "--format", "json")
    assert required.exit_code == 1
    (valve,) = [f for f in json.loads(required.output)["results"][0]["findings"] if f["check"] == "valve"]
    assert (valve["code"], valve["severity"]) == ("NOT_CHECKED", "fail")
    assert runner.invoke("validate", path, "--require", "piston").exit_code == 0


def test_a_waiver_with_a_reason_passes_the_line_and_one_without_makes_it_invalid(runner, tmp_path):
    waived = write(tmp_path, HEADER + LONG_ROOMY.replace(",\n", ",REACH_LONG: piston relieved for it\n"), "w.csv")
    result = runner.invoke("validate", waived, "--fail-on", "warn")
    assert result.exit_code == 0
    assert "waived REACH_LONG (reason: piston relieved for it)" in result.output
    bare = write(tmp_path, HEADER + LONG_ROOMY.replace(",\n", ",REACH_LONG\n"), "bare.csv")
    unexplained = runner.invoke("validate", bare)
    assert unexplained.exit_code == 1
    assert "waive: a waiver needs a written reason" in unexplained.output


def test_a_file_that_is_not_a_build_list_exits_2_naming_line_and_column(runner, tmp_path):
    result = runner.invoke("validate", write(tmp_path, "ref,plug_thread,plug_colour\n1,M14,red\n"))
    assert result.exit_code == 2
    assert "line 1, column 'plug_colour': unknown column" in result.output


@pytest.mark.parametrize("args", [
    ("--require", "sparkle"),
    ("--format", "yaml"),
    ("--server", "http://127.0.0.1:9", "--inventory", str(REPO / "seed_catalog/demo/plugs.csv")),
    ("--server", "http://127.0.0.1:9", "--jobs", "2"),
    ("--jobs", "0"),
])
def test_wrong_options_exit_2(runner, tmp_path, args):
    assert runner.invoke("validate", write(tmp_path, HEADER + FLUSH), *args).exit_code == 2


def test_a_missing_build_list_exits_2(runner, tmp_path):
    assert runner.invoke("validate", str(tmp_path / "nowhere.csv")).exit_code == 2


def test_junit_output_has_a_case_per_line_with_failures_and_errors(runner, tmp_path):
    text = HEADER + FLUSH + LONG_ROOMY + HITS_PISTON + "bad,M14,flat,x,1.5,4,M14,flat,17.5,8,\n"
    result = runner.invoke("validate", write(tmp_path, text), "--format", "junit")
    assert result.exit_code == 1
    suite = ET.fromstring(result.output).find("testsuite")
    assert (suite.get("tests"), suite.get("failures"), suite.get("errors")) == ("4", "1", "1")
    cases = suite.findall("testcase")
    assert [c.get("line") for c in cases] == ["2", "3", "4", "5"]
    assert cases[2].find("failure").get("message").startswith("PISTON_CONTACT")
    assert cases[3].find("error") is not None
    strict = ET.fromstring(runner.invoke("validate", write(tmp_path, text), "--format", "junit", "--fail-on",
                                         "warn").output).find("testsuite")
    assert strict.get("failures") == "2"


def test_references_resolve_against_the_migrated_local_database(runner, tmp_path):
    assert runner.invoke("seed", "--demo").exit_code == 0
    path = write(tmp_path, "ref,sku,head_id\nok,DEMO-P-0005,DEMO-H-TRUCK-I4\nghost,NO-SUCH,DEMO-H-TRUCK-I4\n")
    result = runner.invoke("validate", path, "--format", "json")
    results = json.loads(result.output)["results"]
    assert [r["verdict"] for r in results] == ["pass", "invalid"]
    assert results[1]["errors"] == {"sku": ["no plug with sku 'NO-SUCH'"]}


def test_references_without_any_inventory_are_invalid_with_a_hint(tmp_path):
    path = write(tmp_path, "ref,sku,head_id\nx,DEMO-P-0005,DEMO-H-TRUCK-I4\n")
    done = run("validate", path, database_url=f"sqlite:///{tmp_path / 'absent.db'}")
    assert done.returncode == 1
    assert "no database file" in done.stderr and "--inventory" in done.stderr
    assert not (tmp_path / "absent.db").exists()


def test_an_inventory_file_that_cannot_be_read_exits_2(runner, tmp_path):
    bad = write(tmp_path, "sku,thread,seat,reach_mm\nX-1,M14,flat,far\n", "plugs.csv")
    result = runner.invoke("validate", write(tmp_path, "sku,head_id\nX-1,H\n"), "--inventory", bad)
    assert result.exit_code == 2
    assert "plugs.csv" in result.output and "line 2" in result.output


def test_json_lines_inventory_files_hold_plugs_and_heads_together(runner, tmp_path):
    lines = [json.dumps({"sku": "JL-1", "thread": "M14", "seat": "flat", "reach": 19, "gasket_thickness": 1.5,
                         "firing_end": 4}),
             json.dumps({"head_id": "JL-HEAD", "thread": "M14", "seat": "flat", "port_depth": 17.5,
                         "piston_clearance": 8})]
    inventory = write(tmp_path, "\n".join(lines) + "\n", "stock.jsonl")
    result = runner.invoke("validate", write(tmp_path, "sku,head_id\nJL-1,JL-HEAD\n"), "--inventory", inventory,
                           "--format", "json")
    (only,) = json.loads(result.output)["results"]
    assert only["geometry"]["piston_margin"]["nominal"] == pytest.approx(4.0)


# --- as a real subprocess ------------------------------------------------------------------


def test_the_installed_command_exits_0_1_and_2_as_documented(tmp_path):
    assert run("validate", str(EXAMPLE_CSV), *DEMO_INVENTORY).returncode == 0
    assert run("validate", write(tmp_path, HEADER + HITS_PISTON)).returncode == 1
    unusable = run("validate", write(tmp_path, "nothing,here\n1,2\n", "u.csv"))
    assert unusable.returncode == 2 and "unknown column" in unusable.stderr


def test_the_installed_command_exits_3_when_the_server_cannot_be_reached(tmp_path):
    # Port 9 (discard) on loopback: nothing listens there on a test machine.
    done = run("validate", write(tmp_path, HEADER + FLUSH), "--server", "http://127.0.0.1:9", "--timeout", "5")
    assert done.returncode == 3
    assert "cannot reach http://127.0.0.1:9/v1/fit-checks/batch" in done.stderr


def test_the_installed_command_writes_json_and_junit_and_reads_stdin(tmp_path):
    text = HEADER + FLUSH + LONG_ROOMY
    as_json = run("validate", "-", "--format", "json", stdin=text)
    assert as_json.returncode == 0
    assert json.loads(as_json.stdout)["summary"] == {"total": 2, "pass": 1, "warn": 1, "fail": 0, "invalid": 0,
                                                     "verdict": "warn"}
    as_junit = run("validate", write(tmp_path, text), "--format", "junit", "--fail-on", "warn")
    assert as_junit.returncode == 1
    suite = ET.fromstring(as_junit.stdout).find("testsuite")
    assert (suite.get("tests"), suite.get("failures"), suite.get("errors")) == ("2", "1", "0")


def test_plugfit_check_prints_the_contract_geometry_and_exits_by_verdict():
    flush = ("--plug-thread", "M14", "--plug-seat", "flat", "--plug-reach", "19", "--plug-gasket-thickness", "1.5",
             "--plug-firing-end", "4", "--head-thread", "M14", "--head-seat", "flat", "--head-port-depth", "17.5")
    passed = run("check", *flush, "--head-piston-clearance", "8")
    assert passed.returncode == 0
    assert passed.stdout.startswith("M14x1.25: PASS")
    as_json = run("check", *flush, "--head-piston-clearance", "8", "--format", "json", "--units", "imperial")
    document = json.loads(as_json.stdout)
    # 4.0 mm / 25.4 mm per in (NIST SP 811, 2008, B.8) = 0.15748 in.
    assert document["geometry"]["piston_margin"]["nominal"] == pytest.approx(0.15748)
    assert "ref" not in document and "waivers" not in document
    hits = run("check", *flush, "--head-piston-clearance", "2")  # margin 19.5 − 21.5 = −2.0 mm
    assert hits.returncode == 1 and "PISTON_CONTACT" in hits.stdout
    unreadable = run("check", *flush, "--head-piston-clearance", "3 kg")
    assert unreadable.returncode == 2 and "--head-piston-clearance:" in unreadable.stderr


def test_plugfit_check_reads_a_request_file_and_resolves_references_from_an_inventory(tmp_path):
    request = write(tmp_path, json.dumps({"plug": {"sku": "DEMO-P-0005"}, "head": {"head_id": "DEMO-H-TRUCK-I4"},
                                          "options": {"torque": "20 ft-lb"}}), "request.json")
    done = run("check", "--file", request, *DEMO_INVENTORY, "--format", "json")
    assert done.returncode == 0, done.stderr
    assert json.loads(done.stdout)["verdict"] == "pass"
    both = run("check", "--file", request, "--plug-reach", "19")
    assert both.returncode == 2
    nothing = run("check")
    assert nothing.returncode == 2


# --- JUnit on every exit: a CI step saves standard output as its report -----------------------


def junit_error_case(output: str) -> ET.Element:
    """The report's only test case, which must be in error (ElementTree parses it: valid XML)."""
    suite = ET.fromstring(output).find("testsuite")
    assert (suite.get("tests"), suite.get("failures"), suite.get("errors")) == ("1", "0", "1")
    (case,) = suite.findall("testcase")
    return case.find("error")


def test_junit_is_written_when_the_file_is_unusable(tmp_path):
    done = run("validate", write(tmp_path, "nothing,here\n1,2\n", "u.csv"), "--format", "junit")
    assert done.returncode == 2
    error = junit_error_case(done.stdout)
    assert error.get("type") == "unusable"
    assert "unknown column" in error.text and "unknown column" in done.stderr


def test_junit_is_written_when_the_server_cannot_be_reached(tmp_path):
    # Port 9 (discard) on loopback: nothing listens there on a test machine.
    done = run("validate", write(tmp_path, HEADER + FLUSH), "--server", "http://127.0.0.1:9", "--timeout", "5",
               "--format", "junit")
    assert done.returncode == 3
    error = junit_error_case(done.stdout)
    assert error.get("type") == "unreachable"
    assert "cannot reach http://127.0.0.1:9" in error.get("message")


@pytest.mark.parametrize("arguments", [
    ("{missing}", "--format", "junit"),                       # click refuses a path that does not exist
    ("{list}", "--format=junit", "--require", "pistn"),       # an unknown check
    ("{list}", "--format", "junit", "--server", "http://127.0.0.1:9", "--inventory", "{list}"),
])
def test_junit_is_written_when_the_command_line_is_wrong(tmp_path, arguments):
    paths = {"missing": str(tmp_path / "nowhere.csv"), "list": write(tmp_path, HEADER + FLUSH)}
    done = run("validate", *(argument.format(**paths) for argument in arguments))
    assert done.returncode == 2
    error = junit_error_case(done.stdout)
    assert error.get("type") == "usage" and error.get("message")


# --- a long list shared out over processes (--jobs) -------------------------------------


def _long_distinct_list(tmp_path: Path) -> str:
    """2,400 lines: FLUSH, LONG_ROOMY and HITS_PISTON with every plug and head a few
    micrometres apart, so every line is checked afresh; the verdicts stay those of the
    three (pass, warn, fail), and every 100th line cannot be read."""
    rows = []
    for n in range(800):
        reach = "abc" if n % 100 == 99 else f"{19 + n / 1e5:.5f}"
        rows += [f"flush-{n},M14,flat,{reach},1.5,4,M14,flat,{17.5 + n / 1e5:.5f},8,\n",
                 f"long-{n},M14,flat,{20 + n / 1e5:.5f},1.5,4,M14,flat,17.5,{20 + n / 1e5:.5f},\n",
                 f"hits-{n},M14,flat,{20 - n / 1e5:.5f},1.5,4,M14,flat,17.5,{4 - n / 1e5:.5f},REACH_LONG: why\n"]
    return write(tmp_path, HEADER + "".join(rows), "long.csv")


@pytest.mark.parametrize("output_format", ["json", "text", "junit"])
def test_two_jobs_print_exactly_what_one_prints(tmp_path, output_format):
    path = _long_distinct_list(tmp_path)
    one = run("validate", path, "--format", output_format, "--jobs", "1")
    two = run("validate", path, "--format", output_format, "--jobs", "2")
    assert one.returncode == two.returncode == 1, two.stderr  # 800 lines hit the piston
    assert two.stdout == one.stdout
    assert one.stderr == two.stderr == ""  # no progress bar when standard error is not a terminal
    if output_format == "json":
        answer = json.loads(two.stdout)
        assert answer["summary"] == {"total": 2400, "pass": 792, "warn": 800, "fail": 800, "invalid": 8,
                                     "verdict": "fail"}
        assert [r["ref"] for r in answer["results"][:4]] == ["flush-0", "long-0", "hits-0", "flush-1"]
        assert answer["results"][-1]["ref"] == "hits-799"


def test_two_jobs_share_the_list_out_in_parts_and_join_them_in_order(runner, tmp_path, monkeypatch):
    from concurrent.futures import ProcessPoolExecutor

    from service.cli import validate

    submitted = []
    submit = ProcessPoolExecutor.submit
    monkeypatch.setattr(ProcessPoolExecutor, "submit",
                        lambda pool, fn, part, *args: submitted.append(len(part)) or submit(pool, fn, part, *args))
    path = _long_distinct_list(tmp_path)
    shared_out = runner.invoke("validate", path, "--format", "json", "--jobs", "2")
    assert submitted == [2400 // (2 * validate.PARTS_PER_JOB)] * (2 * validate.PARTS_PER_JOB)  # 300 <= 1,000
    in_one = runner.invoke("validate", path, "--format", "json", "--jobs", "1")
    assert len(submitted) == 2 * validate.PARTS_PER_JOB  # one job: no pool
    assert shared_out.exit_code == in_one.exit_code == 1
    assert shared_out.output == in_one.output


@pytest.mark.parametrize("lines", [
    FLUSH * 1999,  # short
    (FLUSH + LONG_ROOMY + HITS_PISTON) * 1000,  # long, but three lines over and over
])
def test_a_short_or_repetitive_list_is_checked_in_this_process_whatever_jobs_says(runner, tmp_path, monkeypatch,
                                                                                  lines):
    from concurrent.futures import ProcessPoolExecutor

    monkeypatch.setattr(ProcessPoolExecutor, "__init__", lambda *args, **kwargs: pytest.fail("a pool was started"))
    result = runner.invoke("validate", write(tmp_path, HEADER + lines), "--jobs", "2", "--format", "json")
    assert json.loads(result.output)["summary"]["total"] == lines.count("\n")


def _slow_part(raw_items):
    """A part of the pool that takes at least 0.3 s: far longer than the command takes to
    react to Ctrl-C, however busy the machine, so the count of parts that ran is not a
    race between the pool and the test."""
    import time

    from service.cli import validate

    time.sleep(0.3)
    assert validate._worker is not None
    return validate._worker.check(raw_items)


def test_ctrl_c_during_a_shared_out_run_drops_the_parts_not_started(tmp_path, monkeypatch):
    from concurrent.futures import ProcessPoolExecutor

    from service.cli import validate
    from service.formats.build_list import read_csv

    futures = []
    submit = ProcessPoolExecutor.submit
    monkeypatch.setattr(ProcessPoolExecutor, "submit",
                        lambda pool, *args: futures.append(submit(pool, *args)) or futures[-1])
    monkeypatch.setattr(validate, "MAX_PART_LINES", 100)  # 2,400 lines: 24 parts
    monkeypatch.setattr(validate, "_check_in_worker", _slow_part)

    def interrupted(lines: int) -> None:  # Ctrl-C as the first part comes back
        raise KeyboardInterrupt

    raw_items = read_csv(Path(_long_distinct_list(tmp_path)).read_text(encoding="utf-8"))
    with pytest.raises(KeyboardInterrupt):
        validate._check_shared_out(raw_items, {}, {}, "metric", [], 2, interrupted)
    assert len(futures) == 24 and all(future.done() for future in futures)  # none left running
    # At most two under way and three queued when it came: the other parts never ran.
    assert sum(future.cancelled() for future in futures) >= 24 - 1 - 5
