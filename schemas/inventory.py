"""Query strings and bodies of the inventory endpoints (plugs, heads) and of fit-checks.

The records themselves are `schemas.specs.StoredPlugSchema` / `StoredHeadSchema`; this
module adds only what the REST layer needs around them: list filters, the replacement
body of PUT (identifier optional, taken from the path) and the `units` switch.
"""
from __future__ import annotations

from marshmallow import Schema, fields, validate

from service.fitment.catalog import SEATS

from .fields import SEAT_ALIASES, Choice, Length, Quantity
from .results import UNIT_SYSTEMS
from .specs import IDENTIFIER, StoredHeadSchema, StoredPlugSchema, Thread


class PlugFilterSchema(Schema):
    """Filters of GET /v1/plugs; every filter given must match. Unknown query parameters
    are ignored (webargs' rule for query strings, which also carry page and page_size)."""

    thread = Thread(metadata={"description": "ISO 261 designation; a bare M14 means M14x1.25"})
    seat = Choice(SEATS, SEAT_ALIASES, metadata={"description": "flat or conical (gasket/taper accepted)"})
    reach = Length(metadata={"description": "matches reaches within 0.1 mm, so 19 finds a 3/4 in plug. "
                                            "A number (mm) or a string such as '0.75 in'."})
    hex = Quantity("length", minimum=0.0, maximum=100.0, bare_unit="mm", metadata={
        "description": "across flats; matches within 0.3 mm, so 16 finds 5/8 in"})
    resistor = fields.Boolean(metadata={"description": "true or false"})


class HeadFilterSchema(Schema):
    """Filters of GET /v1/heads."""

    q = fields.String(validate=validate.Length(1, 200), metadata={
        "description": "text contained in the description or head_id, any case", "example": "twin"})
    thread = Thread()
    seat = Choice(SEATS, SEAT_ALIASES)


class NewPlugSchema(StoredPlugSchema):
    """POST body: a new inventory plug under the shop's own sku."""


class NewHeadSchema(StoredHeadSchema):
    """POST body: a new head port under the shop's own head_id."""


class PlugReplacementSchema(StoredPlugSchema):
    """PUT body: a whole plug; `sku` may be left out (the path names it) and, if given,
    must equal the path's."""

    sku = fields.String(validate=IDENTIFIER, metadata={"example": "DEMO-P-0001"})


class HeadReplacementSchema(StoredHeadSchema):
    """PUT body: a whole head; `head_id` may be left out and, if given, must equal the path's."""

    head_id = fields.String(validate=IDENTIFIER, metadata={"example": "DEMO-H-VAN-I4"})


class UnitsQuerySchema(Schema):
    units = Choice(UNIT_SYSTEMS, {"si": "metric", "us": "imperial", "inch": "imperial"}, load_default="metric",
                   metadata={"description": "metric (mm, N*m) or imperial (in, lbf*ft)"})
