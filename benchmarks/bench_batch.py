"""How fast a 10,000-line build list is checked: by the batch endpoint on one worker,
and by `plugfit validate` with one and with two jobs.

Run:  .venv/bin/python benchmarks/bench_batch.py [--lines 10000] [--repeat 5]

Goals (issue 16): the batch endpoint answers a 10,000-line list of distinct lines within
1.5 s on one worker; `plugfit validate --jobs 2` is faster than `--jobs 1` on it, with
the same output. Not a test: it prints figures (best and median of the runs) for
docs/performance.md.

Two lists, both DEMO DATA (an invented fleet workshop; no real engine or part):

- "workshop": 10,000 engines of 40 invented head variants, each fitted with one of
  the three plugs approved for its variant, a planned torque and gap from the shop's
  habits. Lines repeat heads, plugs and unit strings ("0.75 in", "20 ft-lb") the way a
  real list does, so the parse cache and the per-batch caches do their work.
- "distinct": every line a different plug reach, firing end, port depth, piston
  clearance and torque (plain numbers under `_mm` headers), so every line is loaded
  and checked afresh: the worst case.

Endpoint figures are server time, measured in this process through Flask's test client
(no network, no gunicorn): from the request entering the app to the whole JSON body,
wall and CPU, in an app settled as a gunicorn worker settles its own
(`service.web.serving.settle_worker`). The worker does all of it: the benchmark stops if a child process ran.
As a baseline measured in the same run, the engine alone checks the same 10,000 pairs
(`check_fit` on specs built beforehand); the endpoint's time as a multiple of it
carries over between machines better than seconds do. The command's figures are whole
processes (start-up included), `--jobs 1` and `--jobs 2` run in turn, with the ratio
of each pair.
"""
from __future__ import annotations

import argparse
import csv
import io
import os
import random
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

PLUGFIT = ROOT / ".venv" / "bin" / "plugfit"

# DEMO DATA: invented head variants of an invented fleet; sizes are the standard
# spark-plug families of the seed catalogue, every other number is made up.
_THREADS = (("M14x1.25", "flat", ("17.5", "19", "0.75 in", "12.7", "9.5")),
            ("M14x1.25", "conical", ("11.2", "17.5", "0.708 in")),
            ("M12x1.25", "flat", ("19", "26.5", "0.75 in")),
            ("M10x1", "flat", ("12.7", "19")),
            ("M18x1.5", "conical", ("10.9", "0.460 in")))


def _workshop_rows(lines: int, rng: random.Random) -> tuple[list[str], list[list[str]]]:
    header = ["ref", "note", "plug_thread", "plug_seat", "plug_reach", "plug_gasket_thickness", "plug_firing_end",
              "plug_hex", "plug_resistor", "head_thread", "head_seat", "head_port_depth",
              "head_piston_clearance", "head_well_bore_mm", "head_hex", "head_material", "head_resistor_required",
              "torque", "gap", "waive"]
    variants = []
    for index in range(40):
        thread, seat, reaches = _THREADS[index % len(_THREADS)]
        design = rng.choice(reaches)
        depth_mm = float(design.split()[0]) * (25.4 if design.endswith("in") else 1.0)
        port_depth = depth_mm - (1.5 if seat == "flat" else 0.0)
        head = [thread, seat, f"{port_depth:.2f} ± 0.2", rng.choice(["8", "6.5", "0.25 in", "12 ± 0.3"]),
                rng.choice(["24", "28", "30"]), rng.choice(["16", "5/8 in", "20.8"]),
                rng.choice(["aluminium", "cast_iron"]), rng.choice(["yes", "no"])]
        plugs = []
        for _ in range(3):
            reach = rng.choice(reaches)
            plugs.append([thread, seat, reach, "1.5" if seat == "flat" else "",
                          rng.choice(["3", "4", "5 ± 0.3"]), rng.choice(["16", "5/8 in", "20.8"]),
                          rng.choice(["true", "false"])])
        variants.append((f"demo-variant-{index + 1:02d}", head, plugs))
    rows = []
    for line in range(lines):
        name, head, plugs = rng.choice(variants)
        plug = rng.choice(plugs)
        waive = "HEX_DIFFERS: demo: the shop's sockets fit both" if rng.random() < 0.02 else ""
        rows.append([f"demo-engine-{line + 1:05d}", name, *plug, *head,
                     rng.choice(["", "25 N*m", "20 ft-lb", "28"]), rng.choice(["", "0.8 mm", "0.032 in"]), waive])
    return header, rows


def _distinct_rows(lines: int, rng: random.Random) -> tuple[list[str], list[list[str]]]:
    header = ["ref", "plug_thread", "plug_seat", "plug_reach_mm", "plug_gasket_thickness_mm", "plug_firing_end_mm",
              "head_thread", "head_seat", "head_port_depth_mm", "head_piston_clearance_mm", "torque"]
    rows = []
    for line in range(lines):
        rows.append([f"demo-{line + 1:05d}", "M14x1.25", "flat", f"{rng.uniform(9, 27):.4f}", "1.5",
                     f"{rng.uniform(2, 6):.4f}", "M14x1.25", "flat", f"{rng.uniform(8, 26):.4f}",
                     f"{rng.uniform(2, 14):.4f}", f"{rng.uniform(15, 35):.2f}"])
    return header, rows


def build_list(kind: str, lines: int, seed: int = 20250101) -> str:
    rng = random.Random(seed)
    header, rows = (_workshop_rows if kind == "workshop" else _distinct_rows)(lines, rng)
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(header)
    writer.writerows(rows)
    return out.getvalue()


def _figures(samples: list[tuple[float, float]]) -> str:
    """Wall and CPU seconds, best and median: on a shared machine the CPU time shows
    what the code costs when other processes slow the wall clock down."""
    walls, cpus = [wall for wall, _ in samples], [cpu for _, cpu in samples]
    return (f"wall best {min(walls):.3f} s, median {statistics.median(walls):.3f} s; "
            f"CPU best {min(cpus):.3f} s, median {statistics.median(cpus):.3f} s")


def _children_cpu() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def bench_endpoint(text: str, repeat: int) -> list[tuple[float, float]]:
    from service.store import db
    from service.web import create_app
    from service.web.serving import settle_worker

    with tempfile.TemporaryDirectory() as directory:
        url = f"sqlite:///{directory}/bench.db"
        db.upgrade(url)
        app = create_app({"DATABASE_URL": url, "LOG_LEVEL": "WARNING"})
        settle_worker()  # what a gunicorn worker does once it has built its app
        client = app.test_client()
        body = text.encode()
        samples = []
        children_before = _children_cpu()
        for _ in range(repeat + 1):
            start, cpu_start = time.perf_counter(), time.process_time()
            response = client.post("/v1/fit-checks/batch", data=body, content_type="text/csv")
            response.get_data()
            samples.append((time.perf_counter() - start, time.process_time() - cpu_start))
            assert response.status_code == 200, response.get_data(as_text=True)[:500]
        assert _children_cpu() == children_before, "a child process took part in a request"
        return samples[1:]  # the first run also loads pint and the catalogue


def bench_engine_alone(text: str, repeat: int) -> list[tuple[float, float]]:
    """The baseline: `check_fit` on the list's pairs, specs built beforehand."""
    from schemas.specs import options_from, plug_spec, port_spec
    from service.catalog_loader import load_catalog
    from service.fitment import check_fit
    from service.formats.build_list import read_csv
    from service.usecases.batch import LoadedItem, load_items

    catalog = load_catalog()
    triples = [(plug_spec(item.request["plug"]), port_spec(item.request["head"]),
                options_from(item.request["options"]))
               for item in load_items(read_csv(text)) if isinstance(item, LoadedItem)]
    samples = []
    for _ in range(repeat + 1):
        start, cpu_start = time.perf_counter(), time.process_time()
        for plug, port, options in triples:
            check_fit(plug, port, options, catalog)
        samples.append((time.perf_counter() - start, time.process_time() - cpu_start))
    return samples[1:]


def bench_jobs(path: Path, repeat: int) -> list[tuple[tuple[float, float], tuple[float, float]]]:
    """`plugfit validate --format json` with --jobs 1 and --jobs 2 in turn: (one, two)
    pairs of (wall, CPU of the whole process tree); the outputs must be equal."""
    pairs = []
    for _ in range(repeat):
        pair, outputs = [], []
        for jobs in ("1", "2"):
            start, cpu_start = time.perf_counter(), _children_cpu()
            done = subprocess.run([str(PLUGFIT), "validate", str(path), "--format", "json", "--jobs", jobs],
                                  capture_output=True, cwd=ROOT, env={**os.environ, "PLUGFIT_LOG_LEVEL": "WARNING"})
            pair.append((time.perf_counter() - start, _children_cpu() - cpu_start))
            assert done.returncode in (0, 1), done.stderr.decode()
            outputs.append(done.stdout)
        assert outputs[0] == outputs[1], "--jobs 2 printed something else than --jobs 1"
        pairs.append((pair[0], pair[1]))
    return pairs


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--lines", type=int, default=10_000)
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args()
    print(f"{args.lines} lines, {args.repeat} runs each, {os.cpu_count()} CPUs, "
          f"load average {os.getloadavg()[0]:.2f} at the start")
    with tempfile.TemporaryDirectory() as directory:
        for kind in ("workshop", "distinct"):
            text = build_list(kind, args.lines)
            path = Path(directory) / f"{kind}.csv"
            path.write_text(text, encoding="utf-8")
            print(f"\n{kind} list ({len(text) / 1e6:.1f} MB of CSV)")
            endpoint = bench_endpoint(text, args.repeat)
            engine = bench_engine_alone(text, args.repeat)
            print(f"  batch endpoint (server time):  {_figures(endpoint)}")
            print(f"  engine alone (baseline):       {_figures(engine)}")
            ratio = statistics.median(cpu for _, cpu in endpoint) / statistics.median(cpu for _, cpu in engine)
            print(f"  endpoint / engine alone, CPU medians: {ratio:.1f}")
            pairs = bench_jobs(path, args.repeat)
            print(f"  plugfit validate --jobs 1:     {_figures([one for one, _ in pairs])}")
            print(f"  plugfit validate --jobs 2:     {_figures([two for _, two in pairs])}")
            ratios = sorted(two[0] / one[0] for one, two in pairs)
            print(f"  --jobs 2 / --jobs 1, wall, pair by pair: median {statistics.median(ratios):.2f} "
                  f"(from {ratios[0]:.2f} to {ratios[-1]:.2f}); outputs equal")


if __name__ == "__main__":
    main()
