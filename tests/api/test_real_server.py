"""Against a real server process over HTTP: `plugfit serve` (gunicorn) on a free port
with a temporary SQLite database (PostgreSQL under PLUGFIT_TEST_POSTGRES_URL).

- a round trip with `requests`;
- every `curl` example in README.md and the pages of docs/, run by curl itself in that
  order against a server with the demo shop loaded, must answer the status written under
  it (`# → 201`), so the documentation cannot rot;
- the shared contract checker (`../shared/conformance/contract_check.py`).
"""
from __future__ import annotations

import os
import re
import shlex
import shutil
import subprocess
import sys
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
import requests

from tests.live_server import LiveServer, running_server

REPO = Path(__file__).resolve().parents[2]
README = REPO / "README.md"
# The pages whose curl examples run, in this order (one server; later pages may use what
# earlier ones stored). A page of docs/ not listed here must not hold curl examples.
DOCUMENTS = [README] + [REPO / "docs" / name for name in
                        ("api.md", "engineering.md", "build-lists.md", "parts-counter.md", "operations.md")]
CONTRACT_CHECK = REPO.parent / "shared" / "conformance" / "contract_check.py"
README_BASE_URL = "http://127.0.0.1:8000"

pytestmark = pytest.mark.server


@pytest.fixture(scope="module")
def server(tmp_path_factory, make_empty_database) -> Iterator[LiveServer]:
    """SQLite, or PostgreSQL under PLUGFIT_TEST_POSTGRES_URL; gthread workers, as a
    deployment that sets PLUGFIT_THREADS would run them."""
    with running_server(make_empty_database(), tmp_path_factory.mktemp("server"), workers=2, threads=2,
                        seed_demo=True) as live:
        yield live


def test_a_real_server_stores_a_plug_and_checks_it_over_http(server):
    auth = {"Authorization": f"Bearer {server.key}"}
    plug = {"sku": "HTTP-1", "thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5,
            "firing_end": 4.0}
    created = requests.post(server.base_url + "/v1/plugs", json=plug, headers=auth, timeout=10)
    assert created.status_code == 201
    assert created.headers["Location"].endswith("/v1/plugs/HTTP-1")
    head = {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5, "piston_clearance": 8.0}
    checked = requests.post(server.base_url + "/v1/fit-checks", json={"plug": {"sku": "HTTP-1"}, "head": head},
                            timeout=10)
    assert checked.status_code == 200
    # The contract's flush fit: piston margin (17.5 + 8.0) - (17.5 + 4.0) = 4.0 mm.
    assert checked.json()["geometry"]["piston_margin"]["nominal"] == pytest.approx(4.0)
    missing = requests.get(server.base_url + "/v1/plugs/HTTP-404", timeout=10)
    assert missing.status_code == 404
    assert missing.headers["Content-Type"].startswith("application/problem+json")
    unauthorised = requests.delete(server.base_url + "/v1/plugs/HTTP-1", timeout=10)
    assert unauthorised.status_code == 401
    assert requests.delete(server.base_url + "/v1/plugs/HTTP-1", headers=auth, timeout=10).status_code == 204


@dataclass
class CurlExample:
    command: str
    expected_status: int
    line: int
    document: str = "README.md"

    @property
    def where(self) -> str:
        return f"{self.document} line {self.line}"


def _complete(command: str) -> bool:
    """A shell command is complete when no backslash continues it and its quotes close."""
    if command.rstrip().endswith("\\"):
        return False
    try:
        shlex.split(command)
    except ValueError:
        return False
    return True


def readme_curl_examples(text: str, document: str = "README.md") -> list[CurlExample]:
    """The `curl` commands of the ```sh blocks, each with the `# → NNN` line after it."""
    examples: list[CurlExample] = []
    for block in re.finditer(r"```sh\n(.*?)```", text, re.DOTALL):
        first_line = text[: block.start()].count("\n") + 2
        lines = block.group(1).splitlines()
        index = 0
        while index < len(lines):
            if not lines[index].startswith("curl"):
                index += 1
                continue
            start = index
            while not _complete("\n".join(lines[start: index + 1])):
                index += 1
                assert index < len(lines), f"{document} line {first_line + start}: an unfinished curl command"
            command = "\n".join(lines[start: index + 1])
            following = lines[index + 1] if index + 1 < len(lines) else ""
            match = re.match(r"#\s*(?:→|->)\s*(\d{3})\b", following)
            assert match, f"{document} line {first_line + start}: a curl example without '# → <status>' under it"
            examples.append(CurlExample(command, int(match.group(1)), first_line + start, document))
            index += 1
    return examples


def documented_curl_examples() -> list[CurlExample]:
    return [example for path in DOCUMENTS
            for example in readme_curl_examples(path.read_text(), str(path.relative_to(REPO)))]


def test_no_page_of_docs_holds_curl_examples_that_do_not_run():
    unlisted = sorted(path.name for path in (REPO / "docs").glob("*.md")
                      if path not in DOCUMENTS and readme_curl_examples(path.read_text(), path.name))
    assert not unlisted, f"add these pages to DOCUMENTS so their curl examples run: {unlisted}"


def test_the_readme_tours_what_fits_this_head_and_what_replaces_this_plug():
    commands = " ".join(example.command for example in readme_curl_examples(README.read_text()))
    assert "/fitting-plugs" in commands and "/interchanges" in commands


def test_the_documentation_has_a_curl_example_for_every_endpoint_of_this_service():
    commands = " ".join(example.command for example in documented_curl_examples())
    for path in ("/v1/health", "/v1/openapi.json", "/v1/standard-sizes", "/v1/plugs", "/v1/plugs/",
                 "/v1/heads", "/v1/heads/", "/v1/fit-checks"):
        assert README_BASE_URL + path in commands, path
    for method in ("POST", "PUT", "DELETE"):
        assert f"-X {method}" in commands


@pytest.mark.skipif(shutil.which("curl") is None, reason="curl is not installed on this machine")
def test_every_documented_curl_example_answers_the_status_it_shows(server):
    examples = documented_curl_examples()
    assert examples
    env = {**os.environ, "PLUGFIT_KEY": server.key}
    # curl as a shell function prints only the status, so each command runs as written.
    wrapper = 'curl() { command curl "$@" --silent --show-error --output /dev/null --write-out "%{http_code}"; }\n'
    for example in examples:
        command = example.command.replace(README_BASE_URL, server.base_url)
        completed = subprocess.run(["bash", "-c", wrapper + command], env=env, capture_output=True, text=True,
                                   timeout=60)
        assert completed.returncode == 0, f"{example.where}: {completed.stderr}"
        status = int(completed.stdout.strip()[-3:])
        assert status < 500, f"{example.where}: answered {status}"
        assert status == example.expected_status, (
            f"{example.where}: answered {status}, the page shows {example.expected_status}")


def test_the_running_service_conforms_to_the_shared_contract_check(server):
    if not CONTRACT_CHECK.is_file():
        pytest.skip(f"{CONTRACT_CHECK} is absent (the shared conformance checker sits beside the repository)")
    completed = subprocess.run([sys.executable, str(CONTRACT_CHECK), server.base_url], capture_output=True,
                               text=True, timeout=120)
    assert completed.returncode == 0, completed.stdout + completed.stderr
