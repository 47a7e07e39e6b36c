"""JSON text as plugfit reads it from clients: request bodies, build lists, request files.

Two things the standard decoder refuses, read here instead:

- a UTF-8 byte order mark before the text (Windows editors and spreadsheet exports
  write one; CSV bodies have always allowed it);
- an integer of more digits than Python converts (4,300 by default, a guard against
  quadratic conversions): the decoder fails the whole document, so no field could be
  named. Such an integer is read as the float it approximates (infinite past 1e308),
  and the field that holds it refuses it like any other non-finite number: a 422
  naming the field. Documents without one are decoded at full speed, as before.
"""
from __future__ import annotations

import json
from typing import Any

BYTE_ORDER_MARK = "\ufeff"


def loads(data: bytes | str) -> Any:
    """The JSON value in `data` (UTF-8 bytes or text). Raises json.JSONDecodeError for
    text that is not JSON, UnicodeDecodeError for bytes that are not UTF-8 and
    RecursionError for nesting deeper than the decoder goes."""
    text = data.decode("utf-8") if isinstance(data, bytes) else data
    text = text.removeprefix(BYTE_ORDER_MARK)
    try:
        return json.loads(text)
    except json.JSONDecodeError:
        raise
    except ValueError:  # the one other ValueError of the decoder: an integer's digit limit
        return json.loads(text, parse_int=_integer)


def _integer(digits: str) -> int | float:
    try:
        return int(digits)
    except ValueError:
        return float(digits)
