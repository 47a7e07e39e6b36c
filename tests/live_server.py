"""A real `plugfit serve` (gunicorn) process for tests that need one: migrate the given
database, make an API key, start on a free loopback port, wait for /v1/health, and
stop only the process group it started."""
from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

import requests

REPO = Path(__file__).resolve().parent.parent


@dataclass
class LiveServer:
    base_url: str
    key: str
    process: subprocess.Popen
    log_path: Path

    @property
    def auth(self) -> dict[str, str]:
        return {"Authorization": f"Bearer {self.key}"}

    def log_tail(self, characters: int = 3000) -> str:
        return self.log_path.read_text(errors="replace")[-characters:]


def free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def server_environment(database_url: str, extra: Mapping[str, str] | None = None) -> dict[str, str]:
    env = {key: value for key, value in os.environ.items() if not key.startswith("PLUGFIT_")}
    env.update({"PLUGFIT_DATABASE_URL": database_url, "PLUGFIT_LOG_LEVEL": "WARNING", **(extra or {})})
    return env


def plugfit(*args: str, env: Mapping[str, str], timeout: float = 120) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "service.cli", *args], cwd=REPO, env=dict(env),
                          capture_output=True, text=True, timeout=timeout)


@contextmanager
def running_server(database_url: str, directory: Path, *, seed_demo: bool = False, workers: int = 2,
                   threads: int | None = None, extra_env: Mapping[str, str] | None = None) -> Iterator[LiveServer]:
    env = server_environment(database_url, extra_env)
    for command in [("db", "upgrade")] + ([("seed", "--demo")] if seed_demo else []):
        done = plugfit(*command, env=env)
        assert done.returncode == 0, done.stderr
    created = plugfit("keys", "create", f"live-server-{os.getpid()}-{time.monotonic_ns()}", env=env)
    assert created.returncode == 0, created.stderr
    port = free_port()
    log_path = directory / f"server-{port}.log"
    with log_path.open("w") as log:
        process = subprocess.Popen(
            [sys.executable, "-m", "service.cli", "serve", "--host", "127.0.0.1", "--port", str(port),
             "--workers", str(workers), *(["--threads", str(threads)] if threads is not None else [])],
            cwd=REPO, env=env, stdout=log, stderr=subprocess.STDOUT, start_new_session=True)
    server = LiveServer(f"http://127.0.0.1:{port}", created.stdout.strip(), process, log_path)
    try:
        deadline = time.monotonic() + 60
        while True:
            if process.poll() is not None:
                raise AssertionError(f"plugfit serve exited with {process.returncode}: {server.log_tail()}")
            try:
                if requests.get(server.base_url + "/v1/health", timeout=2).status_code == 200:
                    break
            except (requests.ConnectionError, requests.Timeout):
                pass  # not listening yet, or a worker still starting on a busy machine
            if time.monotonic() > deadline:
                raise AssertionError(f"plugfit serve did not answer within 60 s: {server.log_tail()}")
            time.sleep(0.2)
        yield server
    finally:
        if process.poll() is None:
            os.killpg(process.pid, signal.SIGTERM)  # only the group started above
            try:
                process.wait(timeout=20)
            except subprocess.TimeoutExpired:
                os.killpg(process.pid, signal.SIGKILL)
                process.wait()
