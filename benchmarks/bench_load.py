"""Load benchmark: a real gunicorn over loopback, single fit-checks against /v1/health.

Run:  .venv/bin/python benchmarks/bench_load.py            (starts its own server)
      .venv/bin/python benchmarks/bench_load.py --url http://127.0.0.1:8000
Goal (issue 6): at 32 concurrent connections, single-check throughput at least 70% of
the same server's /v1/health throughput, p99 latency under 50 ms, zero errors.
The figures measured on the project's 2-core machine are in docs/performance.md.

Load generator: wrk when it is on the PATH (Debian package `wrk`: `apt-get install -y
wrk`; it is optional and CI never runs this script), else a bounded Python generator
(processes x threads, one keep-alive http.client connection per thread). Python's
generator spends CPU of its own on the same two cores, so its absolute figures are
lower than wrk's; the ratio between the two endpoints is what the goal is about.

Only 127.0.0.1 targets are accepted: this drives a server hard and must never be
pointed at somebody else's.
"""
from __future__ import annotations

import argparse
import http.client
import json
import multiprocessing
import os
import shutil
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import textwrap
import threading
import time
import urllib.parse
import urllib.request
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import asdict, dataclass
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
LOOPBACK = "127.0.0.1"

# The goals of issue 6.
MIN_CHECK_TO_HEALTH_RATIO = 0.70
MAX_P99_MS = 50.0

# The flush example of the OpenAPI document (service/web/examples.py, FIT_CHECK_INLINE):
# M14x1.25 flat seat, 19 mm reach on a 1.5 mm gasket in a 17.5 mm port, so the plug's
# thread ends level with the chamber (19 - 1.5 - 17.5 = 0). Kept literal here so the
# script also drives a server built from another checkout.
FLUSH_FIT_CHECK = {
    "plug": {"thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5, "firing_end": 4.0},
    "head": {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5, "piston_clearance": 8.0},
    "options": {"stack": "worst_case"},
}


@dataclass(frozen=True)
class Scenario:
    name: str
    method: str
    path: str
    body: bytes | None = None


SCENARIOS = (
    Scenario("health", "GET", "/v1/health"),
    Scenario("fit-check", "POST", "/v1/fit-checks", json.dumps(FLUSH_FIT_CHECK).encode()),
)


@dataclass
class Figures:
    """What one scenario measured."""

    scenario: str
    generator: str
    requests: int
    seconds: float
    requests_per_second: float
    p50_ms: float
    p99_ms: float
    errors: int


# --- the server under test ------------------------------------------------------------

def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind((LOOPBACK, 0))
        return probe.getsockname()[1]


def _wait_until_healthy(url: str, process: subprocess.Popen, deadline_s: float = 60.0) -> None:
    give_up = time.monotonic() + deadline_s
    while time.monotonic() < give_up:
        if process.poll() is not None:
            raise SystemExit(f"the server exited with status {process.returncode} before answering")
        try:
            with urllib.request.urlopen(url + "/v1/health", timeout=2) as response:
                if response.status == 200:
                    return
        except OSError:
            time.sleep(0.2)
    raise SystemExit(f"the server at {url} did not become healthy within {deadline_s:.0f} s")


@contextmanager
def started_server(extra_env: dict[str, str], seed: tuple[str, ...] | None = ("seed",)
                   ) -> Iterator[tuple[str, int]]:
    """Migrate a fresh SQLite database (unless PLUGFIT_DATABASE_URL says otherwise) and
    run the `seed` command on it (None: none), start `plugfit serve` on a free loopback
    port, yield its URL and process id, stop it by its pid."""
    workdir = Path(tempfile.mkdtemp(prefix="plugfit-load-"))
    env = {**os.environ, **extra_env}
    env.setdefault("PLUGFIT_DATABASE_URL", f"sqlite:///{workdir / 'plugfit.db'}")
    env.setdefault("PLUGFIT_LOG_LEVEL", "WARNING")
    plugfit = [sys.executable, "-m", "service.cli"]
    for command in (["db", "upgrade"], list(seed or ())):
        if command:
            subprocess.run(plugfit + command, env=env, cwd=REPO, check=True, stdout=subprocess.DEVNULL)
    port = _free_port()
    url = f"http://{LOOPBACK}:{port}"
    log = open(workdir / "server.log", "wb")
    process = subprocess.Popen(plugfit + ["serve", "--host", LOOPBACK, "--port", str(port)],
                               env=env, cwd=REPO, stdout=log, stderr=subprocess.STDOUT)
    try:
        _wait_until_healthy(url, process)
        yield url, process.pid
    finally:
        process.send_signal(signal.SIGTERM)  # gunicorn's graceful stop
        try:
            process.wait(timeout=30)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait()
        log.close()
        shutil.rmtree(workdir, ignore_errors=True)


# --- wrk --------------------------------------------------------------------------------

_WRK_SCRIPT = textwrap.dedent("""\
    wrk.method = "{method}"
    wrk.body = {body}
    wrk.headers["Content-Type"] = "application/json"
    done = function(summary, latency, requests)
      local errors = summary.errors
      io.write(string.format('PLUGFIT {{"requests": %d, "duration_us": %d, "p50_us": %d, "p99_us": %d, '
        .. '"status_errors": %d, "socket_errors": %d}}\\n',
        summary.requests, summary.duration, latency:percentile(50), latency:percentile(99),
        errors.status, errors.connect + errors.read + errors.write + errors.timeout))
    end
    """)


def run_wrk(url: str, scenario: Scenario, connections: int, seconds: float) -> Figures:
    """wrk with a Lua `done` hook that prints exact percentiles as JSON (no text parsing)."""
    body = "nil" if scenario.body is None else json.dumps(scenario.body.decode())
    with tempfile.NamedTemporaryFile("w", suffix=".lua", delete=False) as script:
        script.write(_WRK_SCRIPT.format(method=scenario.method, body=body))
    try:
        # Two wrk threads: one per core of the 2-core reference machine; wrk needs
        # at least as many connections as threads.
        completed = subprocess.run(
            ["wrk", "-t", "2", "-c", str(connections), "-d", f"{max(1, round(seconds))}s",
             "--timeout", "5s", "-s", script.name, url + scenario.path],
            check=True, capture_output=True, text=True)
    finally:
        os.unlink(script.name)
    line = next(text for text in completed.stdout.splitlines() if text.startswith("PLUGFIT "))
    raw = json.loads(line[len("PLUGFIT "):])
    duration = raw["duration_us"] / 1e6
    return Figures(scenario.name, "wrk", raw["requests"], round(duration, 2),
                   round(raw["requests"] / duration, 1), raw["p50_us"] / 1000, raw["p99_us"] / 1000,
                   raw["status_errors"] + raw["socket_errors"])


# --- the Python generator -----------------------------------------------------------------

def _drive(host: str, port: int, scenario: Scenario, threads: int, seconds: float,
           max_requests: int, out: multiprocessing.Queue) -> None:
    """One generator process: `threads` keep-alive connections until time or count runs out."""
    deadline = time.monotonic() + seconds
    latencies: list[float] = []
    errors = [0]
    lock = threading.Lock()
    headers = {"Content-Type": "application/json"} if scenario.body is not None else {}

    def worker() -> None:
        mine: list[float] = []
        failed = 0
        connection = http.client.HTTPConnection(host, port, timeout=5)
        while time.monotonic() < deadline and len(mine) + failed < max_requests:
            started = time.perf_counter()
            try:
                connection.request(scenario.method, scenario.path, body=scenario.body, headers=headers)
                response = connection.getresponse()
                response.read()
                ok = response.status == 200
            except (OSError, http.client.HTTPException):
                ok = False
                connection.close()  # reconnects on the next request
            if ok:
                mine.append(time.perf_counter() - started)
            else:
                failed += 1
        connection.close()
        with lock:
            latencies.extend(mine)
            errors[0] += failed

    pool = [threading.Thread(target=worker) for _ in range(threads)]
    for thread in pool:
        thread.start()
    for thread in pool:
        thread.join()
    out.put((latencies, errors[0]))


def run_python(url: str, scenario: Scenario, connections: int, seconds: float,
               max_requests: int, processes: int = 2) -> Figures:
    parsed = urllib.parse.urlsplit(url)
    processes = max(1, min(processes, connections))
    per_process = [connections // processes + (1 if i < connections % processes else 0) for i in range(processes)]
    per_thread = max(1, max_requests // connections)
    results: multiprocessing.Queue = multiprocessing.Queue()
    started = time.perf_counter()
    pool = [multiprocessing.Process(target=_drive, args=(parsed.hostname, parsed.port or 80, scenario, threads,
                                                         seconds, per_thread, results))
            for threads in per_process]
    for process in pool:
        process.start()
    collected = [results.get() for _ in pool]
    for process in pool:
        process.join()
    elapsed = time.perf_counter() - started
    latencies = sorted(latency for batch, _ in collected for latency in batch)
    errors = sum(failed for _, failed in collected)
    if not latencies:
        return Figures(scenario.name, "python", 0, round(elapsed, 2), 0.0, float("nan"), float("nan"), errors)
    centiles = statistics.quantiles(latencies, n=100, method="inclusive")
    return Figures(scenario.name, "python", len(latencies), round(elapsed, 2), round(len(latencies) / elapsed, 1),
                   round(centiles[49] * 1000, 2), round(centiles[98] * 1000, 2), errors)


# --- the run ------------------------------------------------------------------------------

def _loopback_only(url: str) -> str:
    parsed = urllib.parse.urlsplit(url)
    if parsed.scheme != "http" or parsed.hostname != LOOPBACK or not parsed.port:
        raise SystemExit(f"--url must be http://{LOOPBACK}:PORT (this script only loads this machine), not {url!r}")
    return f"http://{LOOPBACK}:{parsed.port}"


def measure(url: str, generator: str, connections: int, seconds: float, max_requests: int,
            rounds: int) -> list[Figures]:
    """Each scenario `rounds` times, interleaved, keeping each scenario's median round by
    throughput: on a shared machine, load from other processes then hits both scenarios
    alike instead of skewing their ratio."""
    run = (lambda s, secs: run_wrk(url, s, connections, secs)) if generator == "wrk" else \
          (lambda s, secs: run_python(url, s, connections, secs, max_requests))
    for scenario in SCENARIOS:
        run(scenario, min(2.0, seconds))  # warm-up: imports, first connections, caches
    measured: dict[str, list[Figures]] = {scenario.name: [] for scenario in SCENARIOS}
    for _ in range(rounds):
        for scenario in SCENARIOS:
            measured[scenario.name].append(run(scenario, seconds))
    return [sorted(runs, key=lambda f: f.requests_per_second)[len(runs) // 2] for runs in measured.values()]


def verdicts(figures: list[Figures]) -> list[tuple[str, bool]]:
    by_name = {figure.scenario: figure for figure in figures}
    health, check = by_name["health"], by_name["fit-check"]
    ratio = check.requests_per_second / health.requests_per_second if health.requests_per_second else 0.0
    return [
        (f"fit-check throughput is {ratio:.0%} of health's (goal >= {MIN_CHECK_TO_HEALTH_RATIO:.0%})",
         ratio >= MIN_CHECK_TO_HEALTH_RATIO),
        *[(f"{f.scenario} p99 {f.p99_ms:.1f} ms (goal < {MAX_P99_MS:.0f} ms)", f.p99_ms < MAX_P99_MS)
          for f in figures],
        *[(f"{f.scenario} errors: {f.errors} (goal 0)", f.errors == 0) for f in figures],
    ]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--url", help=f"a running server, http://{LOOPBACK}:PORT (default: start one)")
    parser.add_argument("--connections", type=int, default=32, help="concurrent connections (default 32)")
    parser.add_argument("--seconds", type=float, default=10.0, help="measured time per scenario (default 10)")
    parser.add_argument("--rounds", type=int, default=3,
                        help="interleaved rounds per scenario; the median round is reported (default 3)")
    parser.add_argument("--max-requests", type=int, default=200_000,
                        help="Python generator: stop a scenario after this many requests (default 200000)")
    parser.add_argument("--generator", choices=("auto", "wrk", "python"), default="auto",
                        help="load generator (default: wrk if installed, else python)")
    parser.add_argument("--workers", type=int, help="started server: PLUGFIT_WORKERS")
    parser.add_argument("--threads", type=int, help="started server: PLUGFIT_THREADS")
    parser.add_argument("--json", type=Path, help="also write the figures to this file")
    parser.add_argument("--enforce", action="store_true", help="exit 1 when a goal is missed")
    args = parser.parse_args(argv)
    if not 1 <= args.connections <= 1024 or not 0 < args.seconds <= 600 or not 1 <= args.rounds <= 20:
        parser.error("--connections must be 1..1024, --seconds 0..600 and --rounds 1..20")

    generator = args.generator
    if generator == "auto":
        generator = "wrk" if shutil.which("wrk") else "python"
    elif generator == "wrk" and not shutil.which("wrk"):
        parser.error("wrk is not installed (Debian: apt-get install -y wrk); use --generator python")

    server_env = {name: str(value) for name, value in
                  (("PLUGFIT_WORKERS", args.workers), ("PLUGFIT_THREADS", args.threads)) if value is not None}
    if args.url:
        target = _loopback_only(args.url)
        figures = measure(target, generator, args.connections, args.seconds, args.max_requests, args.rounds)
    else:
        with started_server(server_env) as (target, _pid):
            figures = measure(target, generator, args.connections, args.seconds, args.max_requests, args.rounds)

    print(f"{args.connections} connections, median of {args.rounds} rounds of {args.seconds:g} s per scenario, "
          f"generator {generator}, {target}")
    print(f"{'scenario':<10} {'requests':>9} {'req/s':>9} {'p50 ms':>8} {'p99 ms':>8} {'errors':>7}")
    for f in figures:
        print(f"{f.scenario:<10} {f.requests:>9} {f.requests_per_second:>9.1f} {f.p50_ms:>8.2f} "
              f"{f.p99_ms:>8.2f} {f.errors:>7}")
    results = verdicts(figures)
    for text, met in results:
        print(("met     " if met else "MISSED  ") + text)
    if args.json:
        args.json.write_text(json.dumps({"figures": [asdict(f) for f in figures],
                                         "goals": [{"goal": t, "met": m} for t, m in results]}, indent=2))
    return 1 if args.enforce and not all(met for _, met in results) else 0


if __name__ == "__main__":
    sys.exit(main())
