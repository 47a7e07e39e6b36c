"""Benchmark the parts counter: fitting-plugs and interchanges over 100,000 inventory plugs.

Run:  .venv/bin/python benchmarks/bench_counter.py [--plugs 100000] [--designs 5000] [--requests 60]

Goal (issue 5): on SQLite, measured over HTTP against a real server, each endpoint
answers in at most 50 ms median with 100,000 plugs. Not a test (timings vary by
machine); the figures measured on the project's 2-core machine are in docs/performance.md.

What it does: makes a temporary SQLite database (`plugfit db upgrade`), loads the demo
shop's heads, generates the plugs (below) straight into the table, starts `plugfit serve`
(gunicorn, one worker) on a free loopback port, and times sequential GET requests with
one keep-alive connection: the default page (50) of fitting-plugs for a few demo heads,
and of interchanges for a few plugs. It prints the median and 95th percentile of the
wall-clock latency, the server worker's CPU time per request (which does not grow when
other jobs share the machine), and what the search did (candidate plugs of the head's
thread and seat, their distinct designs, designs the engine checked).

The plugs: INVENTED benchmark data in the demo shop's style. Every thread and seat of
the catalogue with its standard reaches; five tip styles; the thread's hexes; resistor
or not; three terminal heights; heat 0.10-0.95 on the demo shop's invented index;
eight gaps. `--designs` distinct designs are drawn from that space and the plugs spread
over them, as a large stock list carries each design under many SKUs (pack sizes,
branches, bins). The narrowing does not depend on that, but the engine runs once per
distinct design among the candidates it must read, so `--designs 100000` (every plug
its own design) is the worst case; its figures are printed too when `--worst-case` is
given.

Only 127.0.0.1 is used; the server is stopped by its process id.
"""
from __future__ import annotations

import argparse
import http.client
import json
import os
import random
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import time
import urllib.request
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO))

from seed_catalog.demo.generate import HEAT_SCALE  # importable once the repository is on the path

LOOPBACK = "127.0.0.1"
GOAL_MEDIAN_MS = 50.0

# (thread, seat): share of the plugs, standard reaches. Roughly even over the seven
# thread/seat pairs, so each holds 10,000-20,000 plugs (the hint).
SIZES = {
    ("M8x1", "flat"): (1, (8.5,)),
    ("M10x1", "flat"): (2, (12.7, 19.0)),
    ("M12x1.25", "flat"): (2, (19.0, 26.5)),
    ("M14x1.25", "flat"): (2, (9.5, 12.7, 19.0, 26.5)),
    ("M14x1.25", "conical"): (1, (11.7, 18.0)),
    ("M18x1.5", "flat"): (1, (12.7,)),
    ("M18x1.5", "conical"): (1, (10.9,)),
}
HEXES = {"M8x1": (13.0,), "M10x1": (16.0, 14.0), "M12x1.25": (14.0, 16.0),
         "M14x1.25": (20.8, 16.0, 15.875), "M18x1.5": (22.225, 20.8)}
GASKETS = {"M8x1": 1.0, "M10x1": 1.0, "M12x1.25": 1.0, "M14x1.25": 1.5, "M18x1.5": 1.5}
TIPS = (3.0, 4.5, 6.5, 1.5, -0.5)
GAPS = (0.5, 0.6, 0.7, 0.8, 0.9, 1.0, 1.1, 1.3)

HEADS = ("DEMO-H-VAN-I4", "DEMO-H-IRRIGATION-I2", "DEMO-H-TRACTOR-I2", "DEMO-H-RACE", "DEMO-H-TRUCK-I4")
INTERCHANGE_SKUS = ("BENCH-000000", "BENCH-000001", "BENCH-000002", "BENCH-000003", "BENCH-000004")


def designs(rng: random.Random, count: int) -> list[dict]:
    sizes = list(SIZES)
    weights = [SIZES[size][0] for size in sizes]
    out = []
    for _ in range(count):
        thread, seat = rng.choices(sizes, weights)[0]
        reach = rng.choice(SIZES[(thread, seat)][1])
        design = {
            "thread": thread, "seat": seat,
            "reach_nominal_mm": reach, "reach_plus_mm": 0.1, "reach_minus_mm": 0.1,
            "firing_end_nominal_mm": rng.choice(TIPS), "firing_end_plus_mm": 0.3, "firing_end_minus_mm": 0.3,
            "hex_mm": rng.choice(HEXES[thread]), "resistor": rng.random() < 0.7,
            "terminal_height_nominal_mm": round(45 + reach * 0.3 + rng.choice((0, 2, 5))),
            "terminal_height_plus_mm": 0.5, "terminal_height_minus_mm": 0.5,
            "heat_range_scale": HEAT_SCALE, "heat_range_value": round(rng.randint(2, 19) * 0.05, 2),
            "gap_mm": rng.choice(GAPS),
        }
        if seat == "flat":
            design.update(gasket_thickness_nominal_mm=GASKETS[thread], gasket_thickness_plus_mm=0.05,
                          gasket_thickness_minus_mm=0.05)
        out.append(design)
    return out


def build_database(path: Path, plugs: int, design_count: int, seed: int) -> None:
    from sqlalchemy import insert

    from service.store import db
    from service.store.models import Head, Plug
    from service.usecases import seeding
    from service.web import create_app

    url = f"sqlite:///{path}"
    db.upgrade(url)
    app = create_app({"DATABASE_URL": url})
    rng = random.Random(seed)
    pool = designs(rng, design_count)
    with db.unit_of_work(app) as session:
        report = seeding.seed_demo(session)  # the demo heads (and its 300 plugs)
        session.commit()
        del report
        batch = []
        for number in range(plugs):
            # the first few SKUs get the first designs, so INTERCHANGE_SKUS exist for sure
            design = pool[number] if number < len(pool) and number < 5 else rng.choice(pool)
            batch.append({**design, "sku": f"BENCH-{number:06d}", "description": "invented benchmark line",
                          "quantity_on_hand": rng.choice((0, 1, 2, 4, 6, 10, 20)),
                          "location": f"{rng.choice('ABCDEFGH')}-{rng.randint(1, 40):02d}-{rng.randint(1, 8)}",
                          "nonstandard_thread": False})
            if len(batch) == 5000:
                session.execute(insert(Plug), batch)
                batch = []
        if batch:
            session.execute(insert(Plug), batch)
        session.commit()
        assert session.query(Head).count() > 0
    db.get_database(app).engine.dispose()


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind((LOOPBACK, 0))
        return probe.getsockname()[1]


def start_server(database: Path, workdir: Path) -> tuple[subprocess.Popen, int]:
    port = _free_port()
    env = {**os.environ, "PLUGFIT_DATABASE_URL": f"sqlite:///{database}", "PLUGFIT_WORKERS": "1",
           "PLUGFIT_LOG_LEVEL": "warning"}
    plugfit = [str(Path(sys.executable).parent / "plugfit")]
    log = open(workdir / "server.log", "wb")
    process = subprocess.Popen(plugfit + ["serve", "--host", LOOPBACK, "--port", str(port)], env=env, cwd=REPO,
                               stdout=log, stderr=subprocess.STDOUT)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        if process.poll() is not None:
            raise SystemExit(f"the server exited ({process.returncode}); see {workdir / 'server.log'}")
        try:
            with urllib.request.urlopen(f"http://{LOOPBACK}:{port}/v1/health", timeout=1) as answer:
                if answer.status == 200:
                    return process, port
        except OSError:
            time.sleep(0.2)
    process.send_signal(signal.SIGTERM)
    raise SystemExit("the server did not become healthy within 60 s")


def stop_server(process: subprocess.Popen) -> None:
    process.send_signal(signal.SIGTERM)
    try:
        process.wait(timeout=20)
    except subprocess.TimeoutExpired:
        process.kill()


def worker_cpu_seconds(master: subprocess.Popen) -> float:
    """CPU time (user + system) the server's worker processes have used so far (Linux /proc).

    The machine may be shared: wall-clock latency then includes waiting for a core, and
    the server's own CPU time per request is the figure that does not depend on load."""
    total = 0.0
    tick = os.sysconf("SC_CLK_TCK")
    try:
        children = Path(f"/proc/{master.pid}/task/{master.pid}/children").read_text().split()
    except OSError:
        return float("nan")
    for child in children:
        fields = Path(f"/proc/{child}/stat").read_text().rsplit(")", 1)[1].split()
        total += (int(fields[11]) + int(fields[12])) / tick  # utime, stime (proc(5), fields 14 and 15)
    return total


def time_requests(port: int, path: str, count: int) -> tuple[list[float], dict, int]:
    connection = http.client.HTTPConnection(LOOPBACK, port, timeout=30)
    timings = []
    pagination: dict = {}
    size = 0
    for attempt in range(count + 3):
        start = time.perf_counter()
        connection.request("GET", path)
        answer = connection.getresponse()
        body = answer.read()
        elapsed = (time.perf_counter() - start) * 1000
        if answer.status != 200:
            raise SystemExit(f"GET {path}: {answer.status} {body[:300]!r}")
        if attempt >= 3:  # the first requests warm the worker (imports, catalogue, caches)
            timings.append(elapsed)
        pagination = json.loads(answer.headers.get("X-Pagination") or "{}")
        size = len(body)
    connection.close()
    return timings, pagination, size


def search_figures(database: Path, head_id: str) -> dict:
    """What the search did for a head's first page, run in-process (for the printout)."""
    from schemas.specs import options_from, port_spec
    from service.catalog_loader import load_catalog
    from service.store import db, repository
    from service.usecases import parts_search
    from service.web import create_app

    app = create_app({"DATABASE_URL": f"sqlite:///{database}"})
    with db.unit_of_work(app) as session:
        port = port_spec(repository.heads(session).document(head_id))
        page = parts_search.fitting_plugs(session, port, options_from({}), load_catalog())
    db.get_database(app).engine.dispose()
    return {"candidates": page.plugs, "designs": page.designs, "checked": page.checked}


def run(plugs: int, design_count: int, requests: int, seed: int) -> bool:
    workdir = Path(tempfile.mkdtemp(prefix="plugfit-bench-counter-"))
    database = workdir / "bench.db"
    started = time.perf_counter()
    build_database(database, plugs, design_count, seed)
    print(f"\n{plugs:,} plugs over {design_count:,} distinct designs (+300 demo plugs), built in "
          f"{time.perf_counter() - started:.1f} s: {database}")
    process, port = start_server(database, workdir)
    ok = True
    try:
        print(f"{'request':52} {'median':>8} {'p95':>8} {'cpu':>7} {'listed':>7} {'plugs':>7} {'designs':>8} "
              f"{'checked':>8} {'bytes':>8}")
        for head_id in HEADS:
            path = f"/v1/heads/{head_id}/fitting-plugs"
            before = worker_cpu_seconds(process)
            timings, pagination, size = time_requests(port, path, requests)
            cpu = (worker_cpu_seconds(process) - before) / (requests + 3) * 1000
            figures = search_figures(database, head_id)
            median = statistics.median(timings)
            p95 = statistics.quantiles(timings, n=20)[-1]
            ok &= median <= GOAL_MEDIAN_MS
            print(f"{path:52} {median:6.1f}ms {p95:6.1f}ms {cpu:5.1f}ms {pagination.get('total', 0):7} "
                  f"{figures['candidates']:7} {figures['designs']:8} {figures['checked']:8} {size:8}")
        for sku in INTERCHANGE_SKUS:
            path = f"/v1/plugs/{sku}/interchanges"
            before = worker_cpu_seconds(process)
            timings, pagination, size = time_requests(port, path, requests)
            cpu = (worker_cpu_seconds(process) - before) / (requests + 3) * 1000
            median = statistics.median(timings)
            p95 = statistics.quantiles(timings, n=20)[-1]
            ok &= median <= GOAL_MEDIAN_MS
            print(f"{path:52} {median:6.1f}ms {p95:6.1f}ms {cpu:5.1f}ms {pagination.get('total', 0):7} {'':7} "
                  f"{'':8} {'':8} {size:8}")
    finally:
        stop_server(process)
    print(f"goal: median at most {GOAL_MEDIAN_MS:g} ms per request: {'met' if ok else 'NOT met'}")
    return ok


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--plugs", type=int, default=100_000)
    parser.add_argument("--designs", type=int, default=5_000, help="distinct plug designs among the plugs")
    parser.add_argument("--requests", type=int, default=60, help="timed requests per path")
    parser.add_argument("--seed", type=int, default=5)
    parser.add_argument("--worst-case", action="store_true", help="also run with every plug its own design")
    arguments = parser.parse_args(argv)
    ok = run(arguments.plugs, arguments.designs, arguments.requests, arguments.seed)
    if arguments.worst_case:
        run(arguments.plugs, arguments.plugs, arguments.requests, arguments.seed)
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
