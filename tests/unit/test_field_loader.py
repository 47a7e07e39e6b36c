"""The field-by-field loader returns exactly what `Schema.load` returns, and refuses
exactly what it refuses, with marshmallow's own messages.

The batch endpoint and `plugfit validate` load their plugs, heads and options through
`schemas.field_loader` (docs/performance.md says why); the schemas stay the one source
of what is valid only if the two paths agree on every document. Values below are the
kinds a build list or a JSON body carries: numbers, unit strings, tolerance objects,
booleans, aliases, nulls, and wrong ones of each.
"""
from __future__ import annotations

from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from marshmallow import Schema, ValidationError

from schemas import field_loader
from schemas.specs import (
    HeadInputSchema,
    OptionsSchema,
    PlugInputSchema,
    RuledSchema,
    StoredHeadSchema,
    StoredPlugSchema,
)

SCHEMAS = (PlugInputSchema, HeadInputSchema, OptionsSchema, StoredPlugSchema, StoredHeadSchema)

# Values for any field: right for some fields, wrong for others (the point is that both
# loaders decide alike, not what they decide).
VALUES: tuple[Any, ...] = (
    19.0, 0, -3.5, 1e308, float("inf"), True, False, None, "", "19", "0.75 in", "3/4 in", "20 ft-lb",
    "12 N*m", "1.5 bar", "15 psi", "40 degC", "20 kV", "15 deg", "9**9 mm", "x" * 70,
    "M14x1.25", "M14", "M12x1.25", "M10x1", "M18x1.5", "3/8-24", "flat", "conical", "taper", "gasket",
    "aluminium", "aluminum", "cast_iron", "worst_case", "rss", "anti-seize", "dry", "new", "reused",
    "DEMO-P-0001", "DEMO-H-VAN-I4", "bad id!", ["reach"], ["reach", "piston"], ["nothing"],
    {"value": 19, "unit": "mm"}, {"value": 19, "unit": "mm", "tol": 0.2}, {"value": "0.75", "unit": "in"},
    {"value": 19, "plus": 0.1, "minus": 0.2}, {"value": 19, "unit": 5}, {"unit": "mm"},
    {"scale": "shop-scale", "value": 0.5}, {"scale": "shop-scale", "min": 0.3, "max": 0.6},
    {"scale": "shop-scale", "min": 0.6, "max": 0.3}, {"min": 20, "max": 40}, {"nested": {"deep": 1}},
    # a thread-repair insert (issue 18): right, refused by the port's rules, refused by its own schema
    {"kind": "coil", "length": 12}, {"kind": "solid", "length": "0.5 in", "outer_thread": "M16x1.5"},
    {"kind": "coil", "outer_thread": "M16x1.5"}, {"kind": "solid", "outer_thread": "M12x1.25"}, {"length": 12},
    63, "60 deg", "24 mm",
)


def _outcome(load, schema: Schema, document: Any) -> tuple[str, Any]:
    try:
        return "loaded", load(schema, document)
    except ValidationError as exc:
        return "refused", exc.messages


def _agree(schema: Schema, document: Any) -> None:
    assert _outcome(field_loader.load, schema, document) == _outcome(Schema.load, schema, document), document


@pytest.mark.parametrize("schema_class", SCHEMAS, ids=lambda cls: cls.__name__)
def test_every_field_alone_with_every_kind_of_value_loads_alike(schema_class):
    schema = schema_class()
    for name in schema.load_fields:
        for value in VALUES:
            _agree(schema, {name: value})
            _agree(schema, {"thread": "M14x1.25", "seat": "flat", name: value})


@pytest.mark.parametrize("schema_class", SCHEMAS, ids=lambda cls: cls.__name__)
def test_documents_that_are_not_objects_or_carry_unknown_keys_are_refused_alike(schema_class):
    schema = schema_class()
    for document in (None, [], "M14", 19, {"thread": "M14x1.25", "colour": "red"}, {"": 1}):
        _agree(schema, document)


def test_a_clean_plug_takes_the_field_path_and_gives_what_schema_load_gives():
    """Equal results would also come from always falling back to `schema.load`; this
    proves the fast path is taken (no fallback) for a clean document."""
    schema = PlugInputSchema(only=("thread", "seat", "reach", "gasket_thickness", "firing_end", "nonstandard_thread"))
    document = {"thread": "M14x1.25", "seat": "flat", "reach": "0.75 in", "gasket_thickness": 1.5, "firing_end": 4}

    class Refuse(PlugInputSchema):
        def load(self, *args, **kwargs):  # the fallback must not run
            raise AssertionError("fell back to Schema.load")

    refusing = Refuse(only=schema.only)
    loaded = field_loader.load(refusing, document)
    assert loaded == schema.load(document)
    assert loaded["reach"].nominal == pytest.approx(19.05)  # 0.75 in = 19.05 mm (exact inch, NIST SP 811)
    assert loaded["nonstandard_thread"] is False  # the field's load_default


def test_rules_across_fields_refuse_alike_with_merged_messages():
    plug = PlugInputSchema()
    _agree(plug, {"sku": "DEMO-P-0001", "reach": 19})  # a reference and dimensions
    _agree(plug, {"thread": "M14x1.25", "seat": "conical", "gasket_thickness": 1.5})
    _agree(plug, {"thread": "M14x1.5", "seat": "conical", "gasket_thickness": 1.5})  # two rules, merged
    head = HeadInputSchema()
    _agree(head, {"thread": "M14x1.25", "seat": "flat", "port_depth": 19, "design_reach": 19})
    _agree(head, {"thread": "M14x1.25", "seat": "flat", "intake_pressure": 1, "boost_pressure": 1})
    _agree(head, {"thread": "M14x1.25", "seat": "flat", "port_depth": 19, "port_depth_long_side": 17})


def test_every_schema_the_batch_loads_declares_its_rules_and_no_other_hook():
    """`field_loader` runs `rules` and nothing else: a pre_load or post_load hook (or a
    second schema validator) on these schemas would be skipped, so none may exist."""
    for schema_class in SCHEMAS:
        assert issubclass(schema_class, RuledSchema)
        hooks = [name for name in dir(schema_class)
                 if hasattr(getattr(schema_class, name, None), "__marshmallow_hook__")]
        assert hooks == ["_apply_rules"], (schema_class.__name__, hooks)


_documents = st.dictionaries(
    st.sampled_from(sorted(set(PlugInputSchema().load_fields) | set(HeadInputSchema().load_fields)
                           | set(OptionsSchema().load_fields))),
    st.sampled_from(VALUES), max_size=8)


@settings(max_examples=400, deadline=None)
@given(document=_documents, schema_class=st.sampled_from(SCHEMAS))
def test_any_document_loads_alike(document, schema_class):
    _agree(schema_class(), document)
