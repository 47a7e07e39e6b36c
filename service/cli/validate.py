"""`plugfit validate BUILD_LIST`: check a whole build list, for people and for CI.

Embedded by default (the engine and the seeded catalogue in this process, no server),
or `--server URL` to have a running service check it. Exit codes, which CI relies on
(`service.cli.common`):

    0  no line fails (a line that warns may still need a look; --fail-on warn for
       strict pipelines)
    1  a line fails (or warns, with --fail-on warn) or cannot be read
    2  the file as a whole is unusable, or the command line is wrong
    3  the server cannot be reached (or did not answer as a plugfit service)

With `--format junit` every exit writes a report, 2 and 3 included (one test case in
error carrying the reason), so a CI step that saves standard output as its JUnit file
always hands its report reader a valid file.

An embedded run may share a long list out over several processes (`--jobs`, default
one per core): the list is cut into consecutive parts, each checked by
`service.usecases.batch.check_list` in a process of a `ProcessPoolExecutor`, and the
answers joined in order, so the output is the same whatever the number of jobs. Only
the command line does this; the web service checks a list in the worker that received
it and gets its throughput from more workers.
"""
from __future__ import annotations

import os
import sys
from collections.abc import Mapping
from itertools import pairwise
from pathlib import Path
from typing import TYPE_CHECKING, Any

import click

from service.cli.common import EXIT_UNREACHABLE, EXIT_UNUSABLE, parse_checks, progress_bar

if TYPE_CHECKING:
    from service.formats.build_list import RawItem
    from service.usecases.batch import BatchAnswer, ListChecker, Progress

# Below this many lines, or when most lines repeat (`_mostly_distinct`), a list is
# checked in this process whatever --jobs says: starting processes and sending them
# their parts would cost more than it saves.
MIN_LINES_TO_SHARE = 2_000
# The list is cut into at least jobs x PARTS_PER_JOB parts of at most MAX_PART_LINES
# lines: the progress bar moves, and Ctrl-C (which drops the parts not started) waits
# for a few short parts at most. A process keeps what it loaded from part to part.
PARTS_PER_JOB = 4
MAX_PART_LINES = 1_000


def default_jobs() -> int:
    """One job per core this process may run on."""
    if hasattr(os, "sched_getaffinity"):
        return len(os.sched_getaffinity(0))
    return os.cpu_count() or 1


class CannotCheck(Exception):
    """The list cannot be checked at all: the file, the command line or the server."""

    def __init__(self, message: str, code: int, kind: str) -> None:
        super().__init__(message)
        self.message, self.code, self.kind = message, code, kind


def cannot_check(message: str, code: int) -> None:
    raise CannotCheck(message, code, "unreachable" if code == EXIT_UNREACHABLE else "unusable")


# Options that take a value, to find the build list among the arguments of a command
# line click refused (see `JunitOnEveryExit`).
_VALUED_OPTIONS = frozenset({"--server", "--api-key", "--format", "--fail-on", "--require", "--units",
                             "--inventory", "--jobs", "--timeout"})


def _junit_wanted(args: list[str]) -> bool:
    return "--format=junit" in args or ("--format", "junit") in pairwise(args)


def _source_in(args: list[str]) -> str:
    skip = False
    for arg in args:
        if skip:
            skip = False
        elif arg in _VALUED_OPTIONS:
            skip = True
        elif arg == "-" or not arg.startswith("-"):
            return "<stdin>" if arg == "-" else arg
    return "build-list"


def _junit_error(source: str, message: str, kind: str, code: int) -> None:
    from service.formats.reports import junit_error_report

    click.echo(junit_error_report(source, message, kind, {"exit_code": str(code)}), nl=False, color=True)


class JunitOnEveryExit(click.Command):
    """`plugfit validate`: with --format junit, a command line click refuses (a missing
    file, an unknown check) still writes a JUnit report before click exits with 2."""

    def make_context(self, info_name, args, parent=None, **extra):  # type: ignore[override]
        try:
            return super().make_context(info_name, list(args), parent=parent, **extra)
        except click.UsageError as error:
            if _junit_wanted(list(args)):
                _junit_error(_source_in(list(args)), error.format_message(), "usage", error.exit_code)
            raise


def _read_input(build_list: str) -> tuple[bytes, str]:
    if build_list == "-":
        return sys.stdin.buffer.read(), "<stdin>"
    return Path(build_list).read_bytes(), build_list


def _is_csv(source: str, text: str) -> bool:
    from service.formats.build_list import looks_like_json

    suffix = Path(source).suffix.lower()
    if suffix == ".csv":
        return True
    if suffix == ".json":
        return False
    return not looks_like_json(text)


def _embedded(data: bytes, source: str, units: str, require: list[str], inventory: tuple[str, ...],
              jobs: int) -> BatchAnswer:
    from service.cli.lookup import UnusableInput, references_from
    from service.formats.build_list import BuildListError, decode, read_build_list
    from service.usecases.batch import resolve_references

    try:
        text = decode(data)
        raw_items = read_build_list(text, csv_format=_is_csv(source, text))
        plugs, heads = resolve_references(raw_items, references_from(inventory))
    except BuildListError as error:
        cannot_check(f"{source}: the build list cannot be used: "
                     + "\n  ".join([""] + [str(p) for p in error.problems]), EXIT_UNUSABLE)
    except UnusableInput as error:
        cannot_check(str(error), EXIT_UNUSABLE)
    with progress_bar(2 * len(raw_items)) as progress:  # each line is loaded, then checked
        if jobs > 1 and len(raw_items) >= MIN_LINES_TO_SHARE and _mostly_distinct(raw_items):
            return _check_shared_out(raw_items, plugs, heads, units, require, jobs, progress)
        return _check_here(raw_items, plugs, heads, units, require, progress)


def _mostly_distinct(raw_items: list[RawItem], samples: int = 256) -> bool:
    """Whether most lines bring a plug or head of their own, judged on `samples` lines
    spread over the list. A list that repeats a few dozen heads and plugs costs little
    per line and about one check per distinct line, and every process of a shared-out
    run would make most of those checks again (measured: on 10,000 lines of 40 heads
    and 120 plugs, each of two processes spent 0.42 s of CPU, one process 0.47 s for all
    of it), so it is checked here."""
    sampled = [raw.data for raw in raw_items[::max(1, len(raw_items) // samples)] if isinstance(raw.data, dict)]
    try:
        plugs = {repr(data.get("plug")) for data in sampled}
        heads = {repr(data.get("head")) for data in sampled}
    except RecursionError:  # absurdly nested lines: not worth the trouble
        return False
    return len(plugs) + len(heads) > len(sampled)


def _check_here(raw_items: list[RawItem], plugs: Mapping[str, dict], heads: Mapping[str, dict], units: str,
                require: list[str], progress: Progress) -> BatchAnswer:
    from service.catalog_loader import load_catalog
    from service.usecases.batch import check_list

    return check_list(raw_items, load_catalog(), plugs, heads, units=units, require=require, progress=progress)


def _check_shared_out(raw_items: list[RawItem], plugs: Mapping[str, dict], heads: Mapping[str, dict], units: str,
                      require: list[str], jobs: int, progress: Progress) -> BatchAnswer:
    """The list cut into consecutive parts, checked by `jobs` processes, joined in order."""
    from concurrent.futures import ProcessPoolExecutor, as_completed

    from service.usecases.batch import joined

    size = min(MAX_PART_LINES, -(-len(raw_items) // (jobs * PARTS_PER_JOB)))
    parts = [raw_items[start:start + size] for start in range(0, len(raw_items), size)]
    pool = ProcessPoolExecutor(max_workers=jobs, initializer=_start_worker, initargs=(plugs, heads, units, require))
    try:
        futures = {pool.submit(_check_in_worker, part): len(part) for part in parts}
        for future in as_completed(futures):
            future.result()  # a part that failed fails the run here, with its traceback
            progress(2 * futures[future])
    finally:  # after Ctrl-C or a failed part, the parts not started are dropped
        pool.shutdown(cancel_futures=True)
    return joined(future.result() for future in futures)


_worker: ListChecker | None = None  # in a process of the pool: the one that checks its parts


def _start_worker(plugs: Mapping[str, dict], heads: Mapping[str, dict], units: str, require: list[str]) -> None:
    """A process of the pool: one ListChecker for all its parts (what a part loaded and
    checked serves the next). Ctrl-C reaches the whole process group; were this process
    to stop inside the pool's queue machinery, it could leave a lock held and the run
    hung. The command takes it instead, drops the parts not started and waits for the
    few under way (MAX_PART_LINES each)."""
    import signal

    from service.catalog_loader import load_catalog
    from service.usecases.batch import ListChecker

    global _worker
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    _worker = ListChecker(load_catalog(), plugs, heads, units=units, require=require)


def _check_in_worker(raw_items: list[RawItem]) -> BatchAnswer:
    assert _worker is not None, "a part is checked in a process of the pool"
    return _worker.check(raw_items)


def _remote(data: bytes, source: str, server: str, api_key: str | None, units: str, require: list[str],
            timeout: float) -> dict[str, Any]:
    from service.cli.remote import ServerRefused, ServerUnreachable, post_build_list

    try:
        text_start = data[:64].decode("utf-8", errors="replace")
        return post_build_list(server, data, is_csv=_is_csv(source, text_start), api_key=api_key, units=units,
                               require=require, timeout_s=timeout)
    except ServerUnreachable as error:
        cannot_check(str(error), EXIT_UNREACHABLE)
    except ServerRefused as error:
        from service.formats.reports import error_lines

        details = error_lines(error.errors) if error.errors else []
        cannot_check("\n  ".join([f"{source}: {error}"] + details[:20]), EXIT_UNUSABLE)
    raise AssertionError("unreachable")


@click.command("validate", cls=JunitOnEveryExit)
@click.argument("build_list", type=click.Path(exists=True, dir_okay=False, allow_dash=True))
@click.option("--server", metavar="URL", help="Send the list to a running plugfit service instead of "
              "checking it here, e.g. http://127.0.0.1:8000.")
@click.option("--api-key", metavar="KEY", help="Bearer key for --server, when the service makes reads need one.")
@click.option("--format", "output_format", type=click.Choice(["text", "json", "junit"]), default="text",
              show_default=True, help="text: a table for people; json: the batch endpoint's document; "
              "junit: JUnit XML, one test case per line.")
@click.option("--fail-on", type=click.Choice(["fail", "warn"]), default="fail", show_default=True,
              help="warn: lines that warn fail the run too.")
@click.option("--require", "require", metavar="CHECKS", callback=parse_checks, default="",
              help="Comma-separated checks (e.g. piston,valve) whose NOT_CHECKED fails the line.")
@click.option("--units", type=click.Choice(["metric", "imperial"]), default="metric", show_default=True)
@click.option("--inventory", multiple=True, type=click.Path(exists=True, dir_okay=False), metavar="FILE",
              help="Plugs/heads for sku and head_id references (inventory CSV export or JSON lines); "
              "repeatable. Default: the local database, if migrated.")
@click.option("--jobs", type=click.IntRange(min=1), metavar="N",
              help=f"Processes that share out a list of {MIN_LINES_TO_SHARE:,} lines or more whose lines mostly "
              "differ (embedded runs); the output is the same for any N.  [default: the number of cores]")
@click.option("--timeout", type=click.FloatRange(min=1.0), default=300.0, show_default=True,
              help="Seconds to wait for --server's answer.")
def command(build_list: str, server: str | None, api_key: str | None, output_format: str, fail_on: str,
            require: list[str], units: str, inventory: tuple[str, ...], jobs: int | None, timeout: float) -> None:
    """Check every line of BUILD_LIST (CSV, or the batch endpoint's JSON; - reads stdin).

    Exit 0 when no line fails (a line that warns may still need a look; --fail-on warn
    makes warnings fail the run, for strict pipelines), 1 when a line fails or cannot be
    read, 2 when the file is unusable or the options are wrong, 3 when --server cannot
    be reached.
    """
    source = "<stdin>" if build_list == "-" else build_list
    try:
        _validate(build_list, server, api_key, output_format, fail_on, require, units, inventory, jobs, timeout)
    except CannotCheck as failure:
        click.echo(f"plugfit: {failure.message}", err=True)
        if output_format == "junit":
            _junit_error(source, failure.message, failure.kind, failure.code)
        sys.exit(failure.code)


def _validate(build_list: str, server: str | None, api_key: str | None, output_format: str, fail_on: str,
              require: list[str], units: str, inventory: tuple[str, ...], jobs: int | None, timeout: float) -> None:
    if server and inventory:
        raise CannotCheck("--inventory is for embedded runs; with --server the service's own inventory is used",
                          EXIT_UNUSABLE, "usage")
    if server and jobs:
        raise CannotCheck("--jobs is for embedded runs; with --server the service checks the list",
                          EXIT_UNUSABLE, "usage")
    data, source = _read_input(build_list)
    from service.formats.reports import exit_code, summary_exit_code

    if server:
        answer = _remote(data, source, server, api_key, units, require, timeout)
        _print(answer, source, output_format, fail_on, units, server)
        sys.exit(exit_code(answer, fail_on))
    batch = _embedded(data, source, units, require, inventory, jobs or default_jobs())
    if output_format == "json":  # written as it is: no need to read the results back
        click.echo(batch.to_json())
        sys.exit(summary_exit_code(batch.summary, fail_on))
    answer = batch.as_dict()
    _print(answer, source, output_format, fail_on, units, server)
    sys.exit(exit_code(answer, fail_on))


def _print(answer: dict[str, Any], source: str, output_format: str, fail_on: str, units: str,
           server: str | None) -> None:
    from service.formats import reports
    from service.formats.result_json import to_json

    # json and junit hold no colour codes: color=True spares click a pass over megabytes
    # of text looking for them; the table is coloured only on a terminal.
    if output_format == "json":
        click.echo(to_json(answer))
    elif output_format == "junit":
        checked = next((r for r in answer["results"] if "engine_version" in r), {})
        properties = {"mode": f"server {server}" if server else "embedded", "fail_on": fail_on, "units": units,
                      "engine_version": checked.get("engine_version", ""),
                      "catalog_version": checked.get("catalog_version", "")}
        click.echo(reports.junit_report(answer, source, fail_on, properties), nl=False, color=True)
    else:
        on_terminal = sys.stdout.isatty()
        text = reports.text_report(answer, source, fail_on, style=click.style if on_terminal else reports.plain)
        click.echo(text, nl=False, color=on_terminal)
