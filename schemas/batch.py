"""Schemas of build lists: the batch request, its items and waivers, and the batch answer.

A build list is checked item by item: one bad item must not spoil the others, so the
request schema loads only the envelope (`ItemList` keeps the items raw) and
`service.usecases.batch` loads each item through `BatchItemSchema`'s parts. The OpenAPI
document still shows the full item structure, because `ItemList` documents its inner
schema like any other list.
"""
from __future__ import annotations

import copy
import re
from typing import Any

from marshmallow import RAISE, Schema, ValidationError, fields, validate
from webargs.fields import DelimitedList

from service.fitment.checks import CHECK_NAMES

from .fields import Choice
from .results import UNIT_SYSTEMS, FindingSchema, FitResultSchema
from .specs import HeadInputSchema, OptionsSchema, PlugInputSchema

# Finding codes are upper-case words joined by underscores (REACH_LONG, NOT_CHECKED).
FINDING_CODE = re.compile(r"^[A-Z][A-Z0-9_]{0,63}$")
MAX_REF_LENGTH = 200
MAX_REASON_LENGTH = 1000
BATCH_VERDICTS = ("pass", "warn", "fail", "invalid")


class Ref(fields.Field):
    """The user's own label for an item: a string, or a whole number (kept as its text)."""

    def __init__(self, **kwargs: Any) -> None:
        metadata = {"oneOf": [{"type": "string"}, {"type": "integer"}], "example": "twin-650-front",
                    "description": "your own label for the line; default: its line number "
                                   "(CSV) or its position, from 1 (JSON)", **kwargs.pop("metadata", {})}
        super().__init__(metadata=metadata, **kwargs)

    def _deserialize(self, value: Any, attr: str | None, data: Any, **kwargs: Any) -> str:
        if isinstance(value, bool) or not isinstance(value, (str, int)):
            raise ValidationError("a ref is a string or a whole number")
        text = str(value).strip()
        if not 1 <= len(text) <= MAX_REF_LENGTH:
            raise ValidationError(f"a ref has 1 to {MAX_REF_LENGTH} characters")
        return text

    def _serialize(self, value: Any, attr: str | None, obj: Any, **kwargs: Any) -> Any:
        return value


def _has_reason(text: str) -> None:
    if not text.strip():
        raise ValidationError("a waiver needs a written reason")


def _finding_code(text: str) -> None:
    if not FINDING_CODE.match(text):
        raise ValidationError("a finding code is upper case, such as REACH_LONG")


class WaiverSchema(Schema):
    """Accept named finding codes on one line, with the reason written down.

    Waived findings are reported with the reason and no longer count toward the line's
    verdict. A waiver without a reason is an error for that line: an unexplained waiver
    is exactly what a reviewer cannot check.
    """

    class Meta:
        unknown = RAISE

    codes = fields.List(fields.String(validate=_finding_code), required=True, validate=validate.Length(min=1),
                        metadata={"example": ["REACH_LONG"]})
    reason = fields.String(required=True, validate=[validate.Length(max=MAX_REASON_LENGTH), _has_reason],
                           error_messages={"required": "a waiver needs a written reason"},
                           metadata={"example": "domed piston with plug relief; clearance measured with clay"})


class BatchItemSchema(Schema):
    """One line of a build list: a plug and a head (each inline or by reference),
    options, and waivers."""

    class Meta:
        unknown = RAISE

    ref = Ref()
    note = fields.String(validate=validate.Length(max=MAX_REASON_LENGTH),
                         metadata={"description": "free text for people; ignored by the check"})
    plug = fields.Nested(PlugInputSchema, required=True)
    head = fields.Nested(HeadInputSchema, required=True)
    options = fields.Nested(OptionsSchema, load_default=dict)
    waive = fields.List(fields.Nested(WaiverSchema), load_default=list,
                        metadata={"description": "finding codes this line accepts, each with a reason"})


class ItemList(fields.List):
    """A list documented as a list of its inner schema but loaded as raw items, so each
    item can be loaded, and fail, on its own (see `service.usecases.batch`)."""

    def _deserialize(self, value: Any, attr: str | None, data: Any, **kwargs: Any) -> list:
        if not isinstance(value, list):
            raise self.make_error("invalid")
        return list(value)


class BatchRequestSchema(Schema):
    """A build list as JSON; the same document `plugfit validate` reads from a .json file."""

    class Meta:
        unknown = RAISE

    note = fields.String(validate=validate.Length(max=MAX_REASON_LENGTH),
                         metadata={"description": "free text for people (say: DEMO DATA); ignored"})
    items = ItemList(fields.Nested(BatchItemSchema), required=True,
                     validate=validate.Length(min=1, error="no lines to check: a build list needs at least one item"),
                     metadata={"description": "the lines of the build list, checked in this order; "
                                              "at most PLUGFIT_MAX_BATCH_ITEMS (default 50,000)"})


class BatchQuerySchema(Schema):
    """Switches that apply to every item of a batch."""

    units = Choice(UNIT_SYSTEMS, {"si": "metric", "us": "imperial", "inch": "imperial"}, load_default="metric",
                   metadata={"description": "metric (mm, N*m) or imperial (in, lbf*ft)"})
    require = DelimitedList(Choice(CHECK_NAMES), load_default=list, metadata={
        "description": "comma-separated checks whose NOT_CHECKED becomes a fail on every item, "
                       "added to each item's own options.require", "example": "piston,valve"})


class BatchSummarySchema(Schema):
    total = fields.Integer(required=True)
    pass_ = fields.Integer(required=True, data_key="pass")
    warn = fields.Integer(required=True)
    fail = fields.Integer(required=True)
    invalid = fields.Integer(required=True, metadata={"description": "items that could not be read"})
    verdict = fields.String(required=True, validate=validate.OneOf(("pass", "warn", "fail")), metadata={
        "description": "fail when any item fails or is invalid, else warn when any warns, else pass"})


class WaiverResultSchema(Schema):
    codes = fields.List(fields.String(), required=True)
    reason = fields.String(required=True)
    findings = fields.List(fields.Nested(FindingSchema), required=True, metadata={
        "description": "the findings this waiver took out of the verdict; empty when the codes "
                       "did not occur (a stale waiver)"})


def _optional_copy(field: fields.Field) -> fields.Field:
    """The same field, not required: an invalid item has no result document."""
    clone = copy.copy(field)
    clone.required = False
    return clone


_ITEM_RESULT_FIELDS: dict[str, fields.Field] = {
    "ref": fields.String(required=True, metadata={"example": "twin-650-front"}),
    "line": fields.Integer(metadata={"description": "the CSV line of the item (CSV input only)"}),
    "verdict": fields.String(required=True, validate=validate.OneOf(BATCH_VERDICTS), metadata={
        "description": "the check's verdict after waivers, or invalid when the item cannot be read"}),
    "errors": fields.Dict(metadata={
        "description": "invalid items only: messages by field, mirroring the item (JSON) or by "
                       "column name (CSV)"}),
    **{name: _optional_copy(field) for name, field in FitResultSchema._declared_fields.items()
       if name != "verdict"},
    "waivers": fields.List(fields.Nested(WaiverResultSchema), metadata={
        "description": "the item's waivers with the findings each took out of the verdict"}),
}

BatchItemResultSchema = type("BatchItemResultSchema", (Schema,), dict(_ITEM_RESULT_FIELDS))
BatchItemResultSchema.__doc__ = ("One item's answer: its ref and the result document of the check "
                                 "(findings without the waived ones, which are under waivers), or "
                                 "verdict invalid with errors.")


class BatchResponseSchema(Schema):
    summary = fields.Nested(BatchSummarySchema, required=True)
    results = fields.List(fields.Nested(BatchItemResultSchema), required=True,
                          metadata={"description": "one per item, in input order"})
