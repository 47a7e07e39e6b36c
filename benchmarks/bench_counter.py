"""Benchmark the parts counter: fitting-plugs and interchanges, beside the single-plug read.

Run:  .venv/bin/python benchmarks/bench_counter.py [--postgres URL] [--plugs 100000] [--designs 5000]
      (make bench-counter: SQLite, and PostgreSQL when the Makefile's POSTGRES_URL answers)

Goals (issue 17), each checked as a figure measured in one run, on SQLite and, with
--postgres, on PostgreSQL:

1. Latency over 100,000 plugs: GET /v1/heads/{head_id}/fitting-plugs answers in at most
   10 ms median at the default page size.
2. Throughput on the demo shop: under 32 concurrent connections (wrk), fitting-plugs
   serves at least 30 % of the requests per second that GET /v1/plugs/{sku} serves on
   the same server in the same run.

Not a test (timings vary by machine); the figures measured on the project's 2-core
machine are in docs/performance.md.

1. Latency. Makes a database (a temporary SQLite file, or a scratch database on the
   PostgreSQL server given), migrates it, seeds the demo shop (its heads), and writes
   the generated plugs (below) straight into the table; starts `plugfit serve` with one
   worker on a free loopback port; times sequential GET requests on one keep-alive
   connection: for each of a few demo heads the first request (which ranks the head's
   candidates: "first") and then --requests more, whose median and 99th percentile are
   printed, at the default page size and at --page-sizes. GET /v1/plugs/{sku} is timed
   the same way on the same server; each median is also given as a multiple of it. The
   worker's CPU time per request is printed too (it does not grow when other jobs share
   the machine), and what the search did: candidate plugs of the head's thread and
   seat, their distinct designs, designs the engine checked.
2. Throughput. Starts `plugfit serve` with its default workers on the demo shop, and
   runs wrk (Debian package `wrk`) for each path in turn, interleaved over --rounds
   rounds, reporting each path's median round. Without wrk this part says so and runs
   a Python load generator instead, whose own CPU use on the same cores lowers both
   figures (the ratio is still printed, marked as such).

The plugs: INVENTED benchmark data in the demo shop's style. Every thread and seat of
the catalogue with its standard reaches; five tip styles; the thread's hexes; resistor
or not; three terminal heights; heat 0.10-0.95 on the demo shop's invented index;
eight gaps. `--designs` distinct designs are drawn from that space and the plugs spread
over them, as a large stock list carries each design under many SKUs (pack sizes,
branches, bins). The engine runs once per distinct design among a head's candidates, so
`--designs 100000` (every plug its own design) is the worst case; `--worst-case` adds
that run.

Only 127.0.0.1 is used; every server is stopped by its process id.
"""
from __future__ import annotations

import argparse
import http.client
import json
import os
import random
import shutil
import statistics
import sys
import tempfile
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO))

from benchmarks.bench_load import LOOPBACK, Figures, Scenario, run_python, run_wrk, started_server
from seed_catalog.demo.generate import HEAT_SCALE  # importable once the repository is on the path

GOAL_MEDIAN_MS = 10.0
GOAL_RATE_RATIO = 0.30
CONNECTIONS = 32

# (thread, seat): share of the plugs, standard reaches. Roughly even over the seven
# thread/seat pairs, so each holds 10,000-20,000 plugs.
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
# The demo shop's paths for the throughput part (seed_catalog/demo/).
DEMO_SCENARIOS = (Scenario("plug", "GET", "/v1/plugs/DEMO-P-0001"),
                  Scenario("fitting-plugs", "GET", "/v1/heads/DEMO-H-VAN-I4/fitting-plugs"))


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


def build_database(url: str, plugs: int, design_count: int, seed: int) -> None:
    """Migrate `url`, seed the demo shop and write the generated plugs."""
    from sqlalchemy import insert, text

    from service.store import db
    from service.store.models import Plug
    from service.usecases import seeding
    from service.web import create_app

    db.upgrade(url)
    app = create_app({"DATABASE_URL": url, "LOG_LEVEL": "WARNING"})
    rng = random.Random(seed)
    pool = designs(rng, design_count)
    rows = []
    now = datetime.now(UTC)
    for number in range(plugs):
        # the first few SKUs get the first designs, so INTERCHANGE_SKUS exist for sure
        design = pool[number] if number < len(pool) and number < 5 else rng.choice(pool)
        rows.append({**design, "sku": f"BENCH-{number:06d}", "description": "invented benchmark line",
                     "quantity_on_hand": rng.choice((0, 1, 2, 4, 6, 10, 20)),
                     "location": f"{rng.choice('ABCDEFGH')}-{rng.randint(1, 40):02d}-{rng.randint(1, 8)}",
                     "nonstandard_thread": False, "created_at": now, "updated_at": now})
    engine = db.get_database(app).engine
    with db.unit_of_work(app) as session:
        seeding.seed_demo(session)  # the demo heads (and its 300 plugs)
        if engine.dialect.name == "postgresql":
            # COPY: a bulk INSERT through the driver takes minutes for 100,000 rows.
            columns = sorted({column for row in rows for column in row})
            with session.connection().connection.cursor() as cursor, \
                    cursor.copy(f"COPY plugs ({', '.join(columns)}) FROM STDIN") as copy:
                for row in rows:
                    copy.write_row([row.get(column) for column in columns])
        else:
            for start in range(0, len(rows), 5000):
                session.execute(insert(Plug), rows[start:start + 5000])
        session.commit()
    if engine.dialect.name == "postgresql":
        # Planner statistics, and the visibility map an index-only scan needs, as
        # autovacuum would make them some time after a bulk load.
        with engine.connect().execution_options(isolation_level="AUTOCOMMIT") as connection:
            connection.execute(text("VACUUM ANALYZE plugs"))
    engine.dispose()


@contextmanager
def scratch_database(postgres: str | None) -> Iterator[str]:
    """A database URL for one run: a temporary SQLite file, or a scratch database on the
    PostgreSQL server `postgres`, dropped afterwards."""
    if postgres is None:
        workdir = Path(tempfile.mkdtemp(prefix="plugfit-bench-counter-"))
        try:
            yield f"sqlite:///{workdir / 'bench.db'}"
        finally:
            shutil.rmtree(workdir, ignore_errors=True)
        return
    from tests.postgres import create_scratch_database, drop_database

    url = create_scratch_database(postgres)
    try:
        yield url
    finally:
        drop_database(url)


# --- 1. latency over 100,000 plugs -----------------------------------------------------------

def worker_cpu_seconds(master_pid: int) -> float:
    """CPU time (user + system) the server's worker processes have used so far (Linux /proc)."""
    total = 0.0
    tick = os.sysconf("SC_CLK_TCK")
    try:
        children = Path(f"/proc/{master_pid}/task/{master_pid}/children").read_text().split()
    except OSError:
        return float("nan")
    for child in children:
        fields = Path(f"/proc/{child}/stat").read_text().rsplit(")", 1)[1].split()
        total += (int(fields[11]) + int(fields[12])) / tick  # utime, stime (proc(5), fields 14 and 15)
    return total


@dataclass
class Timed:
    path: str
    first_ms: float
    median_ms: float
    p99_ms: float
    cpu_ms: float
    total: int
    size: int


def time_requests(port: int, master_pid: int, path: str, count: int) -> Timed:
    """The first request on its own, then `count` more on one keep-alive connection."""
    connection = http.client.HTTPConnection(LOOPBACK, port, timeout=60)
    timings = []
    pagination: dict = {}
    size = 0
    before = worker_cpu_seconds(master_pid)
    for _ in range(count + 1):
        start = time.perf_counter()
        connection.request("GET", path)
        answer = connection.getresponse()
        body = answer.read()
        timings.append((time.perf_counter() - start) * 1000)
        if answer.status != 200:
            raise SystemExit(f"GET {path}: {answer.status} {body[:300]!r}")
        pagination = json.loads(answer.headers.get("X-Pagination") or "{}")
        size = len(body)
    cpu = (worker_cpu_seconds(master_pid) - before) / (count + 1) * 1000
    connection.close()
    later = timings[1:]
    return Timed(path, timings[0], statistics.median(later), statistics.quantiles(later, n=100)[-1], cpu,
                 pagination.get("total", 0), size)


def search_figures(url: str, head_id: str) -> dict:
    """What the search did for a head's first page, run in-process (for the printout)."""
    from schemas.specs import options_from, port_spec
    from service.catalog_loader import load_catalog
    from service.store import db, repository
    from service.usecases import parts_search
    from service.web import create_app

    app = create_app({"DATABASE_URL": url, "LOG_LEVEL": "WARNING"})
    with db.unit_of_work(app) as session:
        port = port_spec(repository.heads(session).document(head_id))
        page = parts_search.fitting_plugs(session, port, options_from({}), load_catalog())
    db.get_database(app).engine.dispose()
    return {"candidates": page.plugs, "designs": page.designs, "checked": page.checked}


def _row(label: str, timed: Timed, baseline: Timed, extra: str = "") -> str:
    return (f"{label:58} {timed.first_ms:7.1f} {timed.median_ms:7.2f} {timed.p99_ms:7.2f} "
            f"{timed.median_ms / baseline.median_ms:6.1f}x {timed.cpu_ms:6.2f} {timed.total:7} {timed.size:8} {extra}")


def latency(url: str, plugs: int, design_count: int, requests: int, page_sizes: list[int], seed: int) -> bool:
    started = time.perf_counter()
    build_database(url, plugs, design_count, seed)
    print(f"\n{plugs:,} plugs over {design_count:,} distinct designs (+ the demo shop), built in "
          f"{time.perf_counter() - started:.1f} s")
    ok = True
    with started_server({"PLUGFIT_DATABASE_URL": url, "PLUGFIT_WORKERS": "1"}, seed=None) as (target, pid):
        port = int(target.rsplit(":", 1)[1])
        baseline = time_requests(port, pid, "/v1/plugs/BENCH-000001", requests)
        print(f"{'request (one worker, one keep-alive connection)':58} {'first':>7} {'median':>7} {'p99':>7} "
              f"{'/plug':>7} {'cpu':>6} {'listed':>7} {'bytes':>8}  (ms; search: candidates/designs/checked)")
        print(_row(baseline.path, baseline, baseline))
        for head_id in HEADS:
            path = f"/v1/heads/{head_id}/fitting-plugs"
            timed = time_requests(port, pid, path, requests)
            figures = search_figures(url, head_id)
            ok &= timed.median_ms <= GOAL_MEDIAN_MS
            print(_row(path, timed, baseline,
                       f" {figures['candidates']}/{figures['designs']}/{figures['checked']}"))
            for size in page_sizes:
                print(_row(f"{path}?page_size={size}", time_requests(port, pid, f"{path}?page_size={size}",
                                                                     requests), baseline))
        for sku in INTERCHANGE_SKUS:
            path = f"/v1/plugs/{sku}/interchanges"
            print(_row(path, time_requests(port, pid, path, requests), baseline))
    print(f"goal 1: fitting-plugs median at most {GOAL_MEDIAN_MS:g} ms at the default page size: "
          f"{'met' if ok else 'MISSED'}")
    return ok


# --- 2. throughput on the demo shop ----------------------------------------------------------

def throughput(url: str, seconds: float, rounds: int) -> bool:
    generator = "wrk" if shutil.which("wrk") else "python"
    if generator == "python":
        print("\nwrk is not installed (Debian: apt-get install -y wrk): measuring with the Python load "
              "generator instead, which takes CPU from the server on the same cores (figures lower than wrk's)")
    with started_server({"PLUGFIT_DATABASE_URL": url}, seed=("seed", "--demo")) as (target, _pid):
        def run(scenario: Scenario, duration: float) -> Figures:
            if generator == "wrk":
                return run_wrk(target, scenario, CONNECTIONS, duration)
            return run_python(target, scenario, CONNECTIONS, duration, max_requests=200_000)

        for scenario in DEMO_SCENARIOS:
            run(scenario, min(2.0, seconds))  # warm-up: imports, connections, the ranking
        measured: dict[str, list[Figures]] = {scenario.name: [] for scenario in DEMO_SCENARIOS}
        for _ in range(rounds):
            for scenario in DEMO_SCENARIOS:
                measured[scenario.name].append(run(scenario, seconds))
    figures = {name: sorted(runs, key=lambda f: f.requests_per_second)[len(runs) // 2]
               for name, runs in measured.items()}
    print(f"\nthe demo shop, default workers, {CONNECTIONS} connections, {generator}, median of {rounds} rounds "
          f"of {seconds:g} s")
    print(f"{'path':52} {'req/s':>8} {'p50 ms':>8} {'p99 ms':>8} {'errors':>7}")
    for scenario in DEMO_SCENARIOS:
        f = figures[scenario.name]
        print(f"{scenario.path:52} {f.requests_per_second:8.1f} {f.p50_ms:8.2f} {f.p99_ms:8.2f} {f.errors:7}")
    plug, fitting = figures["plug"], figures["fitting-plugs"]
    ratio = fitting.requests_per_second / plug.requests_per_second if plug.requests_per_second else 0.0
    ok = ratio >= GOAL_RATE_RATIO and plug.errors == fitting.errors == 0
    print(f"goal 2: fitting-plugs serves {ratio:.0%} of the single-plug read's requests per second "
          f"(at least {GOAL_RATE_RATIO:.0%}, no errors): {'met' if ok else 'MISSED'}"
          + ("" if generator == "wrk" else " (Python generator, not wrk)"))
    return ok


def run(postgres: str | None, arguments: argparse.Namespace, design_count: int) -> bool:
    print(f"\n=== {'PostgreSQL' if postgres else 'SQLite'} ===")
    ok = True
    if not arguments.skip_latency:
        with scratch_database(postgres) as url:
            ok &= latency(url, arguments.plugs, design_count, arguments.requests, arguments.page_sizes,
                          arguments.seed)
    if not arguments.skip_throughput and design_count == arguments.designs:
        with scratch_database(postgres) as url:
            ok &= throughput(url, arguments.seconds, arguments.rounds)
    return ok


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--postgres", metavar="URL",
                        help="also run on PostgreSQL: a server URL where a scratch database may be created")
    parser.add_argument("--plugs", type=int, default=100_000)
    parser.add_argument("--designs", type=int, default=5_000, help="distinct plug designs among the plugs")
    parser.add_argument("--requests", type=int, default=100, help="timed requests per path after the first")
    parser.add_argument("--page-sizes", type=lambda text: [int(size) for size in text.split(",") if size],
                        default=[50], help="page sizes timed besides the default, comma-separated (default 50)")
    parser.add_argument("--seconds", type=float, default=10.0, help="throughput: seconds per path and round")
    parser.add_argument("--rounds", type=int, default=3, help="throughput: interleaved rounds; the median is kept")
    parser.add_argument("--seed", type=int, default=5)
    parser.add_argument("--worst-case", action="store_true", help="also time every plug its own design")
    parser.add_argument("--skip-latency", action="store_true")
    parser.add_argument("--skip-throughput", action="store_true")
    arguments = parser.parse_args(argv)
    ok = True
    for postgres in (None, arguments.postgres) if arguments.postgres else (None,):
        ok &= run(postgres, arguments, arguments.designs)
        if arguments.worst_case:
            run(postgres, arguments, arguments.plugs)
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
