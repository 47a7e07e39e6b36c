"""`plugfit validate --server URL` against a real server process (`plugfit serve`, the
fixture of test_real_server.py): the same results as embedded, references from the
service's own inventory, and exit 2 when the service refuses the list."""
from __future__ import annotations

import json
import os
import subprocess
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
import requests

from tests.api.test_real_server import server  # noqa: F401  (the module-scoped server fixture)

pytestmark = pytest.mark.server

REPO = Path(__file__).resolve().parents[2]
PLUGFIT = REPO / ".venv" / "bin" / "plugfit"
# Contract geometry (fit-check-contract.md): the 19 mm plug in the 17.5 mm port is flush
# with a 4.0 mm piston margin; the 26.5 mm plug protrudes 7.5 mm (REACH_LONG) and in an
# 8 mm clearance reaches 3.5 mm past the piston (PISTON_CONTACT).
BUILD_LIST = (
    "ref,plug_thread,plug_seat,plug_reach,plug_gasket_thickness,plug_firing_end,head_thread,head_seat,"
    "head_port_depth,head_piston_clearance,waive\n"
    "flush,M14,flat,19,1.5,4,M14,flat,17.5 ± 0.2,8,\n"
    "long,M14,flat,26.5,1.5,4,M14,flat,17.5,20 mm,REACH_LONG: relieved piston\n"
    "hits,M14,flat,26.5,1.5,4,M14,flat,17.5,8,\n"
    "bad,M14,flat,a lot,1.5,4,M14,flat,17.5,8,\n"
)


def run(*args: str) -> subprocess.CompletedProcess:
    env = {key: value for key, value in os.environ.items() if not key.startswith("PLUGFIT_")}
    return subprocess.run([str(PLUGFIT), *args], cwd=REPO, env=env, capture_output=True, text=True, timeout=120)


@pytest.fixture
def build_list(tmp_path: Path) -> str:
    path = tmp_path / "engines.csv"
    path.write_text(BUILD_LIST, encoding="utf-8")
    return str(path)


def test_the_server_gives_the_same_results_as_the_embedded_run(server, build_list):  # noqa: F811
    remote = run("validate", build_list, "--server", server.base_url, "--format", "json")
    local = run("validate", build_list, "--format", "json")
    assert remote.returncode == local.returncode == 1, remote.stderr
    remote_answer, local_answer = json.loads(remote.stdout), json.loads(local.stdout)
    assert remote_answer == local_answer
    assert [r["verdict"] for r in remote_answer["results"]] == ["pass", "pass", "fail", "invalid"]
    assert remote_answer["results"][0]["geometry"]["piston_margin"]["nominal"] == pytest.approx(4.0)
    assert remote_answer["results"][1]["waivers"][0]["reason"] == "relieved piston"


def test_the_server_run_prints_junit_and_the_table(server, build_list):  # noqa: F811
    junit = run("validate", build_list, "--server", server.base_url + "/v1", "--format", "junit")
    suite = ET.fromstring(junit.stdout).find("testsuite")
    assert (suite.get("tests"), suite.get("failures"), suite.get("errors")) == ("4", "1", "1")
    assert suite.find("properties/property").get("value") == f"server {server.base_url}/v1"
    table = run("validate", build_list, "--server", server.base_url, "--require", "valve", "--units", "imperial")
    assert table.returncode == 1
    assert "4 lines: 0 pass, 0 warn, 3 fail, 1 invalid: FAIL" in table.stdout


def test_references_resolve_against_the_services_inventory_with_a_key(server, tmp_path):  # noqa: F811
    auth = {"Authorization": f"Bearer {server.key}"}
    plug = {"sku": "CLI-SERVER-1", "thread": "M14", "seat": "flat", "reach": 19, "gasket_thickness": 1.5,
            "firing_end": 4}
    assert requests.post(server.base_url + "/v1/plugs", json=plug, headers=auth, timeout=10).status_code == 201
    path = tmp_path / "refs.json"
    path.write_text(json.dumps({"items": [
        {"ref": "stored", "plug": {"sku": "CLI-SERVER-1"}, "head": {"thread": "M14", "seat": "flat",
                                                                   "port_depth": 17.5, "piston_clearance": 8}},
        {"ref": "ghost", "plug": {"sku": "CLI-SERVER-404"}, "head": {"thread": "M14", "seat": "flat"}}]}))
    done = run("validate", str(path), "--server", server.base_url, "--api-key", server.key, "--format", "json")
    results = json.loads(done.stdout)["results"]
    assert results[0]["geometry"]["piston_margin"]["nominal"] == pytest.approx(4.0)
    assert results[1]["errors"] == {"plug": {"sku": ["no plug with sku 'CLI-SERVER-404'"]}}
    assert done.returncode == 1


def test_a_list_the_service_refuses_exits_2_with_its_reason(server, tmp_path):  # noqa: F811
    path = tmp_path / "broken.csv"
    path.write_text("ref,plug_thread,plug_colour\n1,M14,red\n")
    done = run("validate", str(path), "--server", server.base_url)
    assert done.returncode == 2
    assert "(422)" in done.stderr and "plug_colour" in done.stderr


def test_a_url_that_does_not_serve_the_batch_endpoint_exits_2_naming_the_404(server, build_list):  # noqa: F811
    wrong_path = run("validate", build_list, "--server", server.base_url + "/elsewhere")
    assert wrong_path.returncode == 2 and "(404)" in wrong_path.stderr
