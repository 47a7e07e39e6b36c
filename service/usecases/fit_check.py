"""The fit-check use case shared by the REST endpoints, the batch and the CLI.

A loaded request (see `schemas.specs.FitCheckRequestSchema`) may name an inventory plug
by `sku` or a stored head by `head_id`; the caller supplies how to look those up (the
database for the service, the seeded catalogue files for the embedded CLI), so this
module knows nothing of Flask or SQLAlchemy.
"""
from __future__ import annotations

from collections.abc import Callable

from schemas.specs import options_from, plug_spec, port_spec
from service.fitment import check_fit
from service.fitment.catalog import Catalog
from service.fitment.model import FitResult, Options
from service.formats.drawing import render_fit_svg

Lookup = Callable[[str], dict | None]


class UnknownReference(LookupError):
    """A `sku` or `head_id` that is not on file; `path` locates it in the request."""

    def __init__(self, path: tuple[str, ...], identifier: str, what: str) -> None:
        super().__init__(f"no {what} {identifier!r}")
        self.path = path
        self.identifier = identifier
        self.what = what

    def errors(self) -> dict:
        """The problem document's `errors`, mirroring the request's structure."""
        nested: dict = {self.path[-1]: [str(self)]}
        for key in reversed(self.path[:-1]):
            nested = {key: nested}
        return nested


def resolve(request: dict, find_plug: Lookup, find_head: Lookup) -> tuple[dict, dict]:
    """The plug and head dicts of a request, references replaced by stored records."""
    plug, head = request["plug"], request["head"]
    if "sku" in plug:
        stored = find_plug(plug["sku"])
        if stored is None:
            raise UnknownReference(("plug", "sku"), plug["sku"], "plug with sku")
        plug = stored
    if "head_id" in head:
        stored = find_head(head["head_id"])
        if stored is None:
            raise UnknownReference(("head", "head_id"), head["head_id"], "head with head_id")
        head = stored
    return plug, head


def run_check(request: dict, catalog: Catalog, find_plug: Lookup, find_head: Lookup,
              options: Options | None = None) -> FitResult:
    """Check a loaded request. `options`, when given, is the request's options already
    made into the engine's record (a batch makes each distinct one once)."""
    plug, head = resolve(request, find_plug, find_head)
    if options is None:
        options = options_from(request.get("options"))
    return check_fit(plug_spec(plug), port_spec(head), options, catalog)


def draw_check(request: dict, catalog: Catalog, find_plug: Lookup, find_head: Lookup,
               units: str = "metric") -> str:
    """The drawing for a loaded fit-check request: the one path the API and the CLI share.

    References (`sku`, `head_id`) are resolved with the caller's look-ups; an unknown one
    raises `UnknownReference`, as for the check itself.
    """
    plug, head = resolve(request, find_plug, find_head)
    plug_data, port_data, options = plug_spec(plug), port_spec(head), options_from(request.get("options"))
    result = check_fit(plug_data, port_data, options, catalog)
    return render_fit_svg(plug_data, port_data, result, units, catalog=catalog, options=options)
