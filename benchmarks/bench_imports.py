"""Benchmark stock imports: over HTTP and through the CLI, beside a bare parse-and-insert.

Run:  .venv/bin/python benchmarks/bench_imports.py [--postgres URL] [--http-rows 100000]
      [--cli-rows 100000 1000000] [--designs 5000]
      (make bench-imports: SQLite, and PostgreSQL when the Makefile's POSTGRES_URL answers)

Goals (issue 17), each a ratio to a baseline measured in the same run:

1. An import of 100,000 plugs over HTTP (`POST /v1/imports/plugs`, CSV, upsert into an
   empty table, to a real `plugfit serve`) takes at most 3 × the baseline.
2. `plugfit import plugs` takes 1,000,000 plugs with at most 500 MB peak resident memory
   (the child's own `ru_maxrss`, from `os.wait4`).

The baseline: the same file read in this process with the csv module (cells that hold
numbers converted with `float`), and written with the driver's `executemany` into a
migrated table, one plug row and one history row (its `after` as JSON) per line, in one
transaction. On PostgreSQL also with one COPY per 1,000 rows, as the import writes there
(executemany fires migration 0004's statement trigger once per row); the ratio is to the
faster baseline, and the CLI runs there are compared with the COPY baseline only. It does none of what an import must do (validation, the error report,
comparing with stored rows), so it is a floor, not a rival.

The file: INVENTED benchmark data in the demo shop's style (benchmarks/bench_counter.py's
designs), `--designs` distinct designs spread over the rows as a large stock list
carries each design under many SKUs. Every run uses a fresh database (a temporary
SQLite file, or a scratch database on the PostgreSQL server given).

Not a test (timings vary by machine); the figures measured on the project's 2-core
machine are in docs/performance.md. Only 127.0.0.1 is used; every server is stopped by
its process id.
"""
from __future__ import annotations

import argparse
import csv
import http.client
import json
import os
import random
import shutil
import sqlite3
import subprocess
import sys
import tempfile
import time
from datetime import UTC, datetime
from pathlib import Path
from urllib.parse import urlsplit

REPO = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO))

from benchmarks.bench_counter import designs, scratch_database
from benchmarks.bench_load import started_server

GOAL_HTTP_RATIO = 3.0
GOAL_CLI_RSS_MB = 500.0
COLUMNS = ("sku", "description", "thread", "seat", "reach_mm", "reach_plus_mm", "reach_minus_mm",
           "gasket_thickness_mm", "gasket_thickness_plus_mm", "gasket_thickness_minus_mm",
           "firing_end_mm", "firing_end_plus_mm", "firing_end_minus_mm", "hex_mm", "resistor",
           "terminal_height_mm", "terminal_height_plus_mm", "terminal_height_minus_mm",
           "heat_range_scale", "heat_range_value", "gap_mm", "quantity_on_hand", "location")
# CSV column -> table column, for the baseline.
TABLE_COLUMNS = {name: name.replace("_mm", "_nominal_mm") if name.endswith("_mm") and "plus" not in name
                 and "minus" not in name and name not in ("hex_mm", "gap_mm") else name for name in COLUMNS}
TEXT = {"sku", "description", "thread", "seat", "heat_range_scale", "location", "resistor"}


def write_file(path: Path, rows: int, design_count: int, seed: int = 17) -> None:
    rng = random.Random(seed)
    pool = designs(rng, design_count)
    with path.open("w", newline="") as out:
        out.write("# INVENTED benchmark data (demo shop style): not real parts\n")
        writer = csv.writer(out, lineterminator="\n")
        writer.writerow(COLUMNS)
        for number in range(rows):
            design = rng.choice(pool)
            cells = {TABLE_COLUMNS[name]: "" for name in COLUMNS}
            cells.update({key: value for key, value in design.items()})
            cells.update(sku=f"BENCH-{number:07d}", description="invented benchmark line",
                         quantity_on_hand=rng.choice((0, 1, 2, 4, 6, 10, 20)),
                         location=f"{rng.choice('ABCDEFGH')}-{rng.randint(1, 40):02d}-{rng.randint(1, 8)}")
            cells["resistor"] = "true" if design["resistor"] else "false"
            writer.writerow(["" if cells[TABLE_COLUMNS[name]] is None else cells[TABLE_COLUMNS[name]]
                             for name in COLUMNS])


# --- the baseline ------------------------------------------------------------------------------

def _baseline_rows(path: Path):
    with path.open(newline="") as stream:
        lines = (line for line in stream if not line.startswith("#"))
        reader = csv.reader(lines)
        header = next(reader)
        names = [TABLE_COLUMNS[name] for name in header]
        numeric = [name not in TEXT for name in header]
        for cells in reader:
            row = [(float(cell) if is_number and cell else (cell or None)) for cell, is_number in
                   zip(cells, numeric, strict=True)]
            row[-2] = int(row[-2])  # quantity_on_hand
            yield names, row


def baseline_seconds(path: Path, url: str, copy: bool = False) -> float:
    """The bare parse and insert, into a freshly migrated database at `url`: the driver's
    executemany, or (PostgreSQL, `copy`) one COPY per 1,000 rows, as the import writes there."""
    from service.store import db

    db.upgrade(url)
    now = datetime.now(UTC)
    started = time.perf_counter()
    postgres = url.startswith("postgresql")
    if postgres:
        import psycopg

        parts = urlsplit(url.replace("postgresql+psycopg", "postgresql"))
        connection = psycopg.connect(parts.geturl())
        mark = "%s"
    else:
        connection = sqlite3.connect(url.removeprefix("sqlite:///"))
        mark = "?"
    plugs, entries, columns = [], [], None
    cursor = connection.cursor()
    history = ("resource", "identifier", "action", "actor", "source", "changed_at", "version_after", "after")

    def flush() -> None:
        if copy:
            with cursor.copy(f"COPY plugs ({', '.join(columns)}) FROM STDIN") as rows:
                for row in plugs:
                    rows.write_row(row)
            with cursor.copy(f"COPY change_history ({', '.join(history)}) FROM STDIN") as rows:
                for row in entries:
                    rows.write_row(row)
        else:
            cursor.executemany(f"INSERT INTO plugs ({', '.join(columns)}) "
                               f"VALUES ({', '.join([mark] * len(columns))})", plugs)
            cursor.executemany(f"INSERT INTO change_history ({', '.join(history)}) "
                               f"VALUES ({', '.join([mark] * len(history))})", entries)
        plugs.clear()
        entries.clear()

    for names, row in _baseline_rows(path):
        if columns is None:
            columns = [*names, "nonstandard_thread", "version", "created_at", "updated_at"]
        resistor = row[names.index("resistor")] == "true"
        row[names.index("resistor")] = resistor
        plugs.append((*row, False, 1, now, now))
        entries.append(("plug", row[0], "create", "bench", "import", now, 1,
                        json.dumps(dict(zip(names, row, strict=True)))))
        if len(plugs) >= 1000:
            flush()
    if plugs:
        flush()
    connection.commit()
    connection.close()
    return time.perf_counter() - started


# --- the service -----------------------------------------------------------------------------

def http_seconds(path: Path, url: str) -> tuple[float, dict]:
    # The cap (PLUGFIT_MAX_IMPORT_ROWS, default 50,000) raised to the file's rows, and the
    # worker timeout to match, so the figure is the import's own time.
    rows = sum(1 for _ in path.open("rb")) - 2
    env = {"PLUGFIT_DATABASE_URL": url, "PLUGFIT_WORKERS": "1", "PLUGFIT_MAX_IMPORT_ROWS": str(rows),
           "PLUGFIT_TIMEOUT": "600"}
    with started_server(env, seed=None) as (target, _pid):
        key = subprocess.run([sys.executable, "-m", "service.cli", "keys", "create", "bench"], cwd=REPO,
                             env={**os.environ, **env}, check=True, capture_output=True, text=True).stdout.strip()
        body = path.read_bytes()
        parts = urlsplit(target)
        connection = http.client.HTTPConnection(parts.hostname, parts.port, timeout=600)
        started = time.perf_counter()
        connection.request("POST", "/v1/imports/plugs", body=body,
                           headers={"Content-Type": "text/csv", "Authorization": f"Bearer {key}"})
        response = connection.getresponse()
        answer = json.loads(response.read())
        seconds = time.perf_counter() - started
        if response.status != 200:
            raise SystemExit(f"the import failed: {response.status} {answer}")
        return seconds, answer


def cli_run(path: Path, url: str) -> tuple[float, float]:
    """Seconds and peak resident memory (MB) of `plugfit import plugs FILE` in a child."""
    from service.store import db

    db.upgrade(url)
    env = {**os.environ, "PLUGFIT_DATABASE_URL": url, "PLUGFIT_LOG_LEVEL": "WARNING"}
    started = time.perf_counter()
    child = subprocess.Popen([sys.executable, "-m", "service.cli", "import", "plugs", str(path)], cwd=REPO, env=env,
                             stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _pid, status, usage = os.wait4(child.pid, 0)
    seconds = time.perf_counter() - started
    errors = child.stderr.read().decode() if child.stderr else ""
    if status != 0:
        raise SystemExit(f"plugfit import failed: {errors}")
    return seconds, usage.ru_maxrss / 1024  # Linux: kilobytes


def run(postgres: str | None, arguments: argparse.Namespace, workdir: Path) -> bool:
    backend = "PostgreSQL" if postgres else "SQLite"
    ok = True
    files = {}
    for rows in sorted({arguments.http_rows, *arguments.cli_rows}):
        files[rows] = workdir / f"plugs-{rows}.csv"
        if not files[rows].exists():
            write_file(files[rows], rows, arguments.designs)
    # The baseline: executemany (the issue's), and on PostgreSQL also COPY, which the import
    # itself uses there (executemany fires migration 0004's trigger once per row).
    rows = arguments.http_rows
    with scratch_database(postgres) as url:
        base = baseline_seconds(files[rows], url)
    floor = base
    if postgres:
        with scratch_database(postgres) as url:
            floor = baseline_seconds(files[rows], url, copy=True)
    with scratch_database(postgres) as url:
        seconds, answer = http_seconds(files[rows], url)
    ratio = seconds / floor
    ok &= ratio <= GOAL_HTTP_RATIO
    copy_note = f", with COPY {floor:.2f} s" if postgres else ""
    print(f"{backend}: HTTP import of {rows:,} plugs: {seconds:.2f} s ({answer['added']:,} added); "
          f"baseline (executemany) {base:.2f} s{copy_note}; {ratio:.1f} x the fastest (goal <= {GOAL_HTTP_RATIO:g} x)",
          flush=True)
    for rows in arguments.cli_rows:
        with scratch_database(postgres) as url:
            base = baseline_seconds(files[rows], url, copy=postgres is not None)
        with scratch_database(postgres) as url:
            seconds, rss = cli_run(files[rows], url)
        goal = rss <= GOAL_CLI_RSS_MB
        ok &= goal
        kind = "COPY" if postgres else "executemany"
        print(f"{backend}: CLI import of {rows:,} plugs: {seconds:.2f} s, peak RSS {rss:.0f} MB "
              f"(goal <= {GOAL_CLI_RSS_MB:g} MB); baseline ({kind}) {base:.2f} s; {seconds / base:.1f} x", flush=True)
    return ok


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--postgres", help="also run on PostgreSQL: a server URL where a scratch database may be "
                                           "created")
    parser.add_argument("--http-rows", type=int, default=100_000)
    parser.add_argument("--cli-rows", type=int, nargs="*", default=[100_000, 1_000_000])
    parser.add_argument("--designs", type=int, default=5000)
    parser.add_argument("--skip-sqlite", action="store_true", help="with --postgres: PostgreSQL only")
    arguments = parser.parse_args(argv)
    workdir = Path(tempfile.mkdtemp(prefix="plugfit-bench-imports-"))
    try:
        ok = True if arguments.skip_sqlite and arguments.postgres else run(None, arguments, workdir)
        if arguments.postgres:
            ok &= run(arguments.postgres, arguments, workdir)
    finally:
        shutil.rmtree(workdir, ignore_errors=True)
    print("goals met" if ok else "GOALS MISSED")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
