"""The progress bar of `plugfit validate` and `plugfit import`: drawn on a terminal once
the work has taken a second, never in a log or a file."""
from __future__ import annotations

import io

from service.cli.common import PROGRESS_AFTER_S, progress_bar


class Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


class Clock:
    def __init__(self) -> None:
        self.now = 100.0

    def __call__(self) -> float:
        return self.now


def test_a_list_that_takes_more_than_a_second_shows_a_bar_on_a_terminal():
    stream, clock = Terminal(), Clock()
    with progress_bar(1000, stream, clock) as progress:
        progress(250)
        assert stream.getvalue() == ""  # a quick list shows nothing
        clock.now += PROGRESS_AFTER_S
        progress(250)
        assert "checking" in stream.getvalue() and "50%" in stream.getvalue()
        progress(500)
    assert "100%" in stream.getvalue()


def test_no_bar_when_standard_error_is_not_a_terminal():
    stream, clock = io.StringIO(), Clock()
    with progress_bar(1000, stream, clock) as progress:
        clock.now += 10 * PROGRESS_AFTER_S
        progress(1000)
    assert stream.getvalue() == ""


def test_the_import_bar_follows_the_bytes_read_under_its_own_label():
    stream, clock = Terminal(), Clock()
    with progress_bar(4000, stream, clock, label="importing stock.csv") as progress:
        clock.now += PROGRESS_AFTER_S
        progress(1000)
    assert "importing stock.csv" in stream.getvalue() and "25%" in stream.getvalue()
