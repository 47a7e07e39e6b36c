"""What the `plugfit` commands share: the app, built once per invocation, on use; exit
codes and the way a command gives up; check names as an option.

Imports neither Flask nor the schemas at import time, so `plugfit validate` and
`plugfit check` start without them.
"""
from __future__ import annotations

import sys
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from functools import update_wrapper
from typing import TYPE_CHECKING, Any, NoReturn, TextIO

import click

if TYPE_CHECKING:
    from flask import Flask

# What `plugfit validate` and `plugfit check` exit with (CI relies on them):
EXIT_OK = 0  # no line fails (check: the plug fits)
EXIT_LINES_FAIL = 1  # a line fails (or warns, with --fail-on warn) or cannot be read
EXIT_UNUSABLE = 2  # the file or request as a whole is unusable, or the command line is wrong
EXIT_UNREACHABLE = 3  # the server cannot be reached (validate --server)


def fail(message: str, code: int) -> NoReturn:
    """Say why on standard error and exit with `code`."""
    click.echo(f"plugfit: {message}", err=True)
    sys.exit(code)


def warn(message: str) -> None:
    click.echo(f"plugfit: warning: {message}", err=True)


def parse_checks(ctx: click.Context | None, param: click.Parameter | None, value: str | None) -> list[str]:
    """`piston,valve` as a list of check names; unknown names are a usage error (exit 2)."""
    from service.fitment.checks import CHECK_NAMES

    names = [part.strip() for part in (value or "").replace(";", ",").split(",") if part.strip()]
    unknown = [name for name in names if name not in CHECK_NAMES]
    if unknown:
        raise click.BadParameter(f"unknown check(s) {', '.join(unknown)}; the checks are {', '.join(CHECK_NAMES)}")
    return names


class CliState:
    """Per-invocation state: the app is built on first use, from PLUGFIT_* variables."""

    def __init__(self) -> None:
        self._app: Flask | None = None

    @property
    def app(self) -> Flask:
        if self._app is None:
            from service.web import create_app

            self._app = create_app()
        return self._app


pass_state = click.make_pass_decorator(CliState, ensure=True)


def with_app(func: Callable[..., Any]) -> Callable[..., Any]:
    """Pass the app as first argument and run the command inside its app context."""

    @pass_state
    def wrapper(state: CliState, *args: Any, **kwargs: Any) -> Any:
        app = state.app
        with app.app_context():
            return func(app, *args, **kwargs)

    return update_wrapper(wrapper, func)


PROGRESS_AFTER_S = 1.0  # work done sooner than this shows no progress bar


@contextmanager
def progress_bar(total: int, stream: TextIO | None = None, clock: Callable[[], float] = time.monotonic,
                 label: str = "checking") -> Iterator[Callable[[int], None]]:
    """A progress bar on standard error for work that takes more than
    PROGRESS_AFTER_S, drawn only when standard error is a terminal (CI logs and files
    stay clean). Yields the `progress` function the use case calls with each step done
    (lines checked, bytes read)."""
    stream = stream if stream is not None else sys.stderr
    on_terminal = stream.isatty()
    started = clock()
    done = 0
    bar: Any = None

    def progress(steps: int) -> None:
        nonlocal done, bar
        done += steps
        if bar is None and on_terminal and clock() - started >= PROGRESS_AFTER_S:
            bar = click.progressbar(length=total, label=label, file=stream)
            bar.update(done)
        elif bar is not None:
            bar.update(steps)

    try:
        yield progress
    finally:
        if bar is not None:
            bar.render_finish()
