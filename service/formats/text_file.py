"""Text files as clients send them: UTF-8 bytes into lines, and CSV lines into rows.

One reader for every CSV the service takes (build lists and the stock exchange file),
so both number lines and bytes the same way and refuse the same things:

- UTF-8, with or without a byte order mark; anything else is `NotText`, which names
  the line and the byte (both counted from 1);
- RFC 4180 quoting; a row that starts on line 7 and spans two physical lines is
  reported as line 7;
- a cell may be as long as a request body may be (`MAX_CELL_CHARS`): the csv module's
  own limit (131,072 characters) would end a long cell in an error that names no
  column, so the limit is raised to this once, and the reader of each format refuses
  a cell longer than its field allows, naming line and column.

Files are read as a stream of lines, so a file of a million rows is never held in
memory whole (`lines_of`).
"""
from __future__ import annotations

import csv
import io
import re
from collections.abc import Callable, Iterable, Iterator
from typing import BinaryIO

# As large as the largest request body (service.config's MAX_BODY_BYTES default): no cell
# that arrives over HTTP can reach the csv module's own limit.
MAX_CELL_CHARS = 32 * 1024 * 1024
BYTE_ORDER_MARK = "\ufeff"
_AFTER_BARE_CR = re.compile(r"(?<=\r)(?!\n)")

if csv.field_size_limit() < MAX_CELL_CHARS:
    csv.field_size_limit(MAX_CELL_CHARS)


class NotText(ValueError):
    """The bytes are not UTF-8 text, or not CSV the reader can follow."""

    def __init__(self, message: str, line: int, byte: int | None = None, reason: str | None = None) -> None:
        super().__init__(message)
        self.line = line
        self.byte = byte
        self.reason = reason or message  # without the line, for a reader that reports it apart


def _not_utf8(error: UnicodeDecodeError, line: int, offset: int) -> NotText:
    byte = offset + error.start + 1
    return NotText(f"not UTF-8 text (byte {byte}, line {line}); save the file as UTF-8", line, byte,
                   reason=f"not UTF-8 text (byte {byte}); save the file as UTF-8")


def decode(data: bytes) -> str:
    """The whole of `data` as text (a byte order mark dropped)."""
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        line = data[:error.start].count(b"\n") + 1
        raise _not_utf8(error, line, 0) from None


Progress = Callable[[int], None]


def lines_of(source: bytes | BinaryIO, progress: Progress | None = None) -> Iterator[str]:
    """The text lines of `source` (bytes, or a binary file read as it goes), each with its
    line end; `progress` is told how many bytes each line took. A multi-byte UTF-8
    character never contains a newline byte, so each line decodes on its own."""
    stream = io.BytesIO(source) if isinstance(source, (bytes, bytearray)) else source
    offset = 0
    for number, raw in enumerate(stream, start=1):  # lines that end with \n
        try:
            line = raw.decode("utf-8")
        except UnicodeDecodeError as error:
            raise _not_utf8(error, number, offset) from None
        if number == 1:
            line = line.removeprefix(BYTE_ORDER_MARK)
        offset += len(raw)
        if progress is not None:
            progress(len(raw))
        if "\r" in line and line.find("\r") != len(line) - 2:
            # a carriage return alone ends a line too (old spreadsheets write them), as
            # the csv module reads text
            yield from (part for part in _AFTER_BARE_CR.split(line) if part)
        else:
            yield line


def csv_rows(lines: Iterable[str] | str) -> Iterator[tuple[int, list[str]]]:
    """(line the row starts on, its cells) for every row, blank ones included; text is
    read as lines. A quote left open or a stray NUL is `NotText` naming the line."""
    if isinstance(lines, str):
        lines = io.StringIO(lines.removeprefix(BYTE_ORDER_MARK), newline="")
    reader = csv.reader(lines, strict=True)
    line = 1
    while True:
        try:
            cells = next(reader)
        except StopIteration:
            return
        except csv.Error as error:
            raise NotText(f"cannot read the CSV on line {line}: {error}", line, reason=str(error)) from None
        yield line, cells
        line = reader.line_num + 1
