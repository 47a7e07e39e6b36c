"""What the schemas refuse, and how: every refusal names the field, mirroring the
request's structure as the contract asks (`{"plug": {"reach": ["..."]}}`)."""
from __future__ import annotations

import pytest
from marshmallow import ValidationError

from schemas.specs import FitCheckRequestSchema, StoredHeadSchema, StoredPlugSchema

PLUG = {"thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5, "firing_end": 4.0}
HEAD = {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5, "piston_clearance": 8.0}


def errors_of(body: dict) -> dict:
    with pytest.raises(ValidationError) as caught:
        FitCheckRequestSchema().load(body)
    return caught.value.messages


@pytest.mark.parametrize(("reach", "complaint"), [
    ("3 kg", "not a length"), (float("nan"), "finite"), (float("inf"), "finite"),
    (-1.0, "at least 0"), (500.0, "at most 60"), ("nan mm", "finite"), (True, "number"),
    ({"value": 19, "tol": -0.1}, "positive"), ({"value": 19, "tol": 0.1, "plus": 0.1}, "not both"),
    ({"value": 19, "unit": "kg"}, "not a length"), ({"tol": 0.1}, "needs a value"),
    ({"value": 19, "spread": 1}, "unknown member"),
])
def test_an_impossible_reach_is_refused_naming_plug_reach(reach, complaint):
    errors = errors_of({"plug": dict(PLUG, reach=reach), "head": HEAD})
    assert list(errors) == ["plug"] and list(errors["plug"]) == ["reach"]
    assert complaint in errors["plug"]["reach"][0]


def test_a_negative_firing_end_is_a_recessed_plug_not_an_error():
    loaded = FitCheckRequestSchema().load({"plug": dict(PLUG, firing_end=-1.5), "head": HEAD})
    assert loaded["plug"]["firing_end"].nominal == -1.5


def test_a_conical_plug_with_a_gasket_cannot_exist():
    errors = errors_of({"plug": dict(PLUG, seat="conical"), "head": HEAD})
    assert errors == {"plug": {"gasket_thickness": ["a conical-seat plug has no gasket"]}}


@pytest.mark.parametrize(("alias", "seat"), [("gasket", "flat"), ("taper", "conical"), ("Tapered", "conical")])
def test_seat_aliases_of_the_trade_are_accepted(alias, seat):
    plug = {key: value for key, value in PLUG.items() if key != "gasket_thickness"}
    loaded = FitCheckRequestSchema().load({"plug": dict(plug, seat=alias), "head": HEAD})
    assert loaded["plug"]["seat"] == seat


@pytest.mark.parametrize(("thread", "designation"), [("M14", "M14x1.25"), ("m18", "M18x1.5"), ("M12 x 1.25", "M12x1.25"),
                                                     ("M10X1", "M10x1")])
def test_a_bare_size_means_the_spark_plug_pitch(thread, designation):
    loaded = FitCheckRequestSchema().load({"plug": dict(PLUG, thread=thread), "head": HEAD})
    assert loaded["plug"]["thread"] == designation


def test_a_pitch_no_standard_gives_is_refused_unless_overridden():
    errors = errors_of({"plug": dict(PLUG, thread="M14x1.5"), "head": HEAD})
    assert "M14x1.25" in errors["plug"]["thread"][0]
    loaded = FitCheckRequestSchema().load({"plug": dict(PLUG, thread="M14x1.5", nonstandard_thread=True), "head": HEAD})
    assert loaded["plug"]["thread"] == "M14x1.5"


@pytest.mark.parametrize("thread", ["M15", "14mm", "M14x", "", "M99x9"])
def test_an_unknown_thread_is_refused_naming_the_field(thread):
    assert "thread" in errors_of({"plug": dict(PLUG, thread=thread), "head": HEAD})["plug"]


def test_a_reference_with_inline_dimensions_is_ambiguous():
    errors = errors_of({"plug": {"sku": "A-1", "reach": 19.0}, "head": {"head_id": "H-1"}})
    assert errors == {"plug": {"reach": ["give sku alone or the dimensions inline, not both"]}}


def test_an_inline_plug_needs_its_thread_and_seat():
    errors = errors_of({"plug": {"reach": 19.0}, "head": HEAD})
    assert set(errors["plug"]) == {"thread", "seat"}


def test_a_port_given_both_ways_is_ambiguous():
    errors = errors_of({"plug": PLUG, "head": dict(HEAD, design_reach=19.0)})
    assert "design_reach" in errors["head"]


def test_an_unknown_member_is_refused_so_typos_do_not_pass_silently():
    errors = errors_of({"plug": dict(PLUG, reech=19.0), "head": HEAD})
    assert "reech" in errors["plug"]


@pytest.mark.parametrize("identifier", ["-lead", "a" * 65, "has space", "slash/no", ""])
def test_identifiers_follow_the_contract_rule(identifier):
    with pytest.raises(ValidationError) as caught:
        StoredPlugSchema().load(dict(PLUG, sku=identifier))
    assert "sku" in caught.value.messages


def test_a_stored_head_round_trips_through_dump_and_load():
    head = dict(HEAD, head_id="DEMO-1", port_depth={"value": 17.5, "unit": "mm", "tol": 0.2},
                intake_temperature=45, material="aluminum")
    schema = StoredHeadSchema()
    loaded = schema.load(head)
    again = schema.load(schema.dump(loaded))
    assert again == loaded
    assert loaded["intake_temperature"] == pytest.approx(318.15)  # 45 degC, bare numbers are degC (contract)
    assert loaded["material"] == "aluminium"


@pytest.mark.parametrize(("quantity", "stored"), [(5, 5), ("5", 5), (5.0, 5)])
def test_a_stock_quantity_is_a_whole_number(quantity, stored):
    assert StoredPlugSchema().load(dict(PLUG, sku="A-1", quantity_on_hand=quantity))["quantity_on_hand"] == stored


@pytest.mark.parametrize("quantity", [2.5, 2.5e-42, -1, "two"])
def test_a_fractional_or_negative_stock_quantity_is_refused_not_truncated(quantity):
    with pytest.raises(ValidationError) as caught:
        StoredPlugSchema().load(dict(PLUG, sku="A-1", quantity_on_hand=quantity))
    assert "quantity_on_hand" in caught.value.messages
