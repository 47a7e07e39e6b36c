"""schemathesis against the live OpenAPI document of a real gunicorn server.

Every operation gets the documented examples, schemathesis' coverage cases (boundary
and wrong-type values of each field) and hypothesis-generated requests, with a fixed
seed and a bounded number of examples so a run is repeatable and takes about a minute.
It asserts: no 5xx, every status is documented, every Content-Type is the documented
one (problem+json for errors) and every body matches its documented schema. The demo
shop is loaded and the run holds an API key, so references resolve and writes are
really made (and undone: schemathesis also sends DELETEs).

Not checked: `negative_data_rejection`, because a batch answers 200 with an item marked
`invalid` by design (the contract), which that check counts as accepting bad input.
"""
from __future__ import annotations

import os
import subprocess
import sys

import pytest

from tests.live_server import REPO, running_server

pytestmark = pytest.mark.server

SEED = 20250101
MAX_EXAMPLES = 30
CHECKS = ("not_a_server_error", "status_code_conformance", "content_type_conformance",
          "response_schema_conformance")


@pytest.fixture(scope="module")
def server(tmp_path_factory, make_empty_database):
    with running_server(make_empty_database(), tmp_path_factory.mktemp("fuzz"), seed_demo=True) as live:
        yield live


def test_schemathesis_finds_no_server_error_and_no_answer_outside_the_documented_schemas(server, tmp_path):
    command = [
        os.path.join(os.path.dirname(sys.executable), "st"), "run", server.base_url + "/v1/openapi.json",
        "--checks", ",".join(CHECKS),
        "--seed", str(SEED), "--max-examples", str(MAX_EXAMPLES),
        "--phases", "examples,coverage,fuzzing",
        "--header", f"Authorization: Bearer {server.key}",
        # One worker: CPython 3.11's ast module is not thread-safe, and hypothesis parses
        # source while describing strategies ("AST constructor recursion depth mismatch").
        "--workers", "1",
        "--request-timeout", "30",
        "--generation-database", "none",
        "--no-color", "--output-truncate", "true",
        "--report", "junit", "--report-dir", str(tmp_path),
    ]
    env = {**os.environ, "SCHEMATHESIS_HOOKS": "tests.api.schemathesis_hooks",
           "PYTHONPATH": os.pathsep.join(filter(None, [str(REPO), os.environ.get("PYTHONPATH")]))}
    # Run elsewhere than the repository: schemathesis leaves a .schemathesis/ cache in its cwd.
    run = subprocess.run(command, cwd=tmp_path, env=env, capture_output=True, text=True, timeout=600)
    report = run.stdout[-12000:] + run.stderr[-3000:]
    assert run.returncode == 0, f"schemathesis failed (seed {SEED}):\n{report}\nserver log:\n{server.log_tail()}"
    assert "passed" in run.stdout and "Operations:" in run.stdout
