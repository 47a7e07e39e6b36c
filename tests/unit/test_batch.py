"""Checking build lists: every item through the schemas and the engine, bad items
isolated, waivers, `require`, references resolved in one lookup, and the answer's shape."""
from __future__ import annotations

import json

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from marshmallow import ValidationError

from schemas.batch import BatchResponseSchema
from schemas.specs import HeadInputSchema, OptionsSchema, PlugInputSchema, StoredHeadSchema, StoredPlugSchema
from service.formats.build_list import BuildListError, read_csv, read_json_document
from service.usecases.batch import _schema_for, run_batch

# The contract's flush fit (fit-check-contract.md, "Geometry"): thread end e = 19.0 − 1.5
# = 17.5 mm = port depth, so the protrusion is 0.0 mm; tip t = 17.5 + 4.0 = 21.5 mm;
# piston margin = (17.5 + 8.0) − 21.5 = 4.0 mm.
FLUSH_PLUG = {"thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5, "firing_end": 4.0}
FLUSH_HEAD = {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5, "piston_clearance": 8.0}
# A 20.0 mm reach in the same port: protrusion 20.0 − 1.5 − 17.5 = 1.0 mm > the 0.5 mm
# flush tolerance and below one pitch of M14x1.25 (1.25 mm, ISO 68-1) → REACH_LONG warns;
# with 20 mm piston clearance the margin is (17.5 + 20) − (18.5 + 4) = 15.0 mm.
LONG_PLUG = dict(FLUSH_PLUG, reach=20.0)
ROOMY_HEAD = dict(FLUSH_HEAD, piston_clearance=20.0)


def batch(items: list, catalog, fetch=None, **kwargs) -> dict:
    raw = read_json_document({"items": items})
    if fetch is None:
        return run_batch(raw, catalog, **kwargs).as_dict()
    return run_batch(raw, catalog, fetch, **kwargs).as_dict()


def test_the_contract_flush_fit_passes_with_the_contract_numbers(catalog):
    answer = batch([{"ref": "flush", "plug": FLUSH_PLUG, "head": FLUSH_HEAD}], catalog)
    result = answer["results"][0]
    assert result["ref"] == "flush" and result["verdict"] == "pass"
    assert result["geometry"]["protrusion_short_side"]["nominal"] == pytest.approx(0.0)
    assert result["geometry"]["protrusion_long_side"]["nominal"] == pytest.approx(0.0)
    assert result["geometry"]["tip_position"]["nominal"] == pytest.approx(21.5)
    assert result["geometry"]["piston_margin"]["nominal"] == pytest.approx(4.0)
    assert answer["summary"] == {"total": 1, "pass": 1, "warn": 0, "fail": 0, "invalid": 0, "verdict": "pass"}


def test_a_bad_item_is_invalid_with_its_field_errors_and_the_others_are_still_checked_in_order(catalog):
    items = [
        {"ref": "ok", "plug": FLUSH_PLUG, "head": FLUSH_HEAD},
        {"ref": "kilograms", "plug": dict(FLUSH_PLUG, reach="3 kg"), "head": FLUSH_HEAD},
        "not an object",
        {"ref": "long", "plug": LONG_PLUG, "head": ROOMY_HEAD},
        {"plug": FLUSH_PLUG},
        {"ref": "stray", "plug": FLUSH_PLUG, "head": FLUSH_HEAD, "colour": "red"},
    ]
    answer = batch(items, catalog)
    results = answer["results"]
    assert [r["ref"] for r in results] == ["ok", "kilograms", "3", "long", "5", "stray"]
    assert [r["verdict"] for r in results] == ["pass", "invalid", "invalid", "warn", "invalid", "invalid"]
    assert list(results[1]["errors"]) == ["plug"] and list(results[1]["errors"]["plug"]) == ["reach"]
    assert results[4]["errors"] == {"head": ["Missing data for required field."]}
    assert results[5]["errors"] == {"colour": ["Unknown field."]}
    assert "findings" not in results[1]
    assert answer["summary"] == {"total": 6, "pass": 1, "warn": 1, "fail": 0, "invalid": 4, "verdict": "fail"}


def test_the_long_reach_warns_by_the_protrusion_the_contract_gives(catalog):
    result = batch([{"plug": LONG_PLUG, "head": ROOMY_HEAD}], catalog)["results"][0]
    (finding,) = [f for f in result["findings"] if f["code"] == "REACH_LONG"]
    assert finding["severity"] == "warn"
    assert finding["values"]["distance"] == {"value": pytest.approx(1.0), "unit": "mm"}
    assert result["geometry"]["piston_margin"]["nominal"] == pytest.approx(15.0)


def test_a_waiver_moves_the_finding_out_of_the_verdict_and_keeps_its_reason(catalog):
    waive = [{"codes": ["REACH_LONG"], "reason": "domed piston relieved for the long reach"},
             {"codes": ["VALVE_CONTACT"], "reason": "no such finding here"}]
    result = batch([{"plug": LONG_PLUG, "head": ROOMY_HEAD, "waive": waive}], catalog)["results"][0]
    assert result["verdict"] == "pass"
    assert "REACH_LONG" not in [f["code"] for f in result["findings"]]
    first, stale = result["waivers"]
    assert first["reason"] == "domed piston relieved for the long reach"
    assert [f["code"] for f in first["findings"]] == ["REACH_LONG"]
    assert first["findings"][0]["values"]["distance"]["value"] == pytest.approx(1.0)
    assert stale["findings"] == []


def test_a_waiver_without_a_reason_makes_the_line_invalid(catalog):
    results = batch([{"plug": LONG_PLUG, "head": ROOMY_HEAD, "waive": [{"codes": ["REACH_LONG"]}]},
                     {"plug": LONG_PLUG, "head": ROOMY_HEAD, "waive": [{"codes": ["REACH_LONG"], "reason": "  "}]}],
                    catalog)["results"]
    assert [r["verdict"] for r in results] == ["invalid", "invalid"]
    # The first waiver of the list is "0" in the JSON answer (object keys are strings).
    assert results[0]["errors"] == {"waive": {"0": {"reason": ["a waiver needs a written reason"]}}}
    assert results[1]["errors"]["waive"]["0"]["reason"] == ["a waiver needs a written reason"]


def test_a_waiver_in_a_csv_list_is_reported_under_the_waive_column(catalog):
    text = ("ref,plug_thread,plug_seat,plug_reach,plug_gasket_thickness,plug_firing_end,head_thread,head_seat,"
            "head_port_depth,head_piston_clearance,waive\n"
            "waived,M14,flat,26.5,1.5,4,M14,flat,17.5,20,REACH_LONG: relieved piston\n"
            "no-reason,M14,flat,26.5,1.5,4,M14,flat,17.5,20,REACH_LONG\n")
    results = run_batch(read_csv(text), catalog).as_dict()["results"]
    assert results[0]["verdict"] == "pass" and results[0]["line"] == 2
    assert results[0]["waivers"][0]["findings"][0]["code"] == "REACH_LONG"
    assert results[1] == {"ref": "no-reason", "line": 3, "verdict": "invalid",
                          "errors": {"waive": ["a waiver needs a written reason"]}}


def test_require_turns_a_missing_check_into_a_fail_for_every_item(catalog):
    items = [{"plug": FLUSH_PLUG, "head": FLUSH_HEAD}, {"plug": FLUSH_PLUG, "head": FLUSH_HEAD,
                                                         "options": {"require": ["piston"]}}]
    answer = batch(items, catalog, require=["valve"])
    for result in answer["results"]:
        (valve,) = [f for f in result["findings"] if f["check"] == "valve"]
        assert valve["code"] == "NOT_CHECKED" and valve["severity"] == "fail"
        assert result["verdict"] == "fail"
    assert answer["summary"]["fail"] == 2


def test_references_are_fetched_once_with_every_distinct_identifier(catalog):
    stored_plug = StoredPlugSchema().load(dict(FLUSH_PLUG, sku="DEMO-1"))
    stored_head = StoredHeadSchema().load(dict(FLUSH_HEAD, head_id="DEMO-HEAD"))
    calls = []

    def fetch(skus, head_ids):
        calls.append((set(skus), set(head_ids)))
        return {"DEMO-1": stored_plug}, {"DEMO-HEAD": stored_head}

    items = [{"plug": {"sku": "DEMO-1"}, "head": {"head_id": "DEMO-HEAD"}}] * 3
    items += [{"plug": {"sku": "NO-SUCH"}, "head": FLUSH_HEAD}, {"plug": FLUSH_PLUG, "head": {"head_id": "NONE"}}]
    results = batch(items, catalog, fetch)["results"]
    assert calls == [({"DEMO-1", "NO-SUCH"}, {"DEMO-HEAD", "NONE"})]
    assert [r["verdict"] for r in results] == ["pass", "pass", "pass", "invalid", "invalid"]
    assert results[0]["geometry"]["piston_margin"]["nominal"] == pytest.approx(4.0)
    assert results[3]["errors"] == {"plug": {"sku": ["no plug with sku 'NO-SUCH'"]}}
    assert results[4]["errors"] == {"head": {"head_id": ["no head with head_id 'NONE'"]}}


def test_a_list_without_references_never_looks_anything_up(catalog):
    def fetch(skus, head_ids):
        raise AssertionError("no lookup expected")

    assert batch([{"plug": FLUSH_PLUG, "head": FLUSH_HEAD}], catalog, fetch)["results"][0]["verdict"] == "pass"


def test_an_unknown_reference_in_a_csv_list_names_its_column(catalog):
    results = run_batch(read_csv("sku,head_thread,head_seat\nGHOST,M14,flat\n"), catalog).as_dict()["results"]
    assert results[0]["errors"] == {"sku": ["no plug with sku 'GHOST'"]}


def test_imperial_answers_give_the_flush_margin_in_inches(catalog):
    result = batch([{"plug": FLUSH_PLUG, "head": FLUSH_HEAD}], catalog, units="imperial")["results"][0]
    # 4.0 mm / 25.4 mm per in (NIST SP 811, 2008, B.8) = 0.15748 in.
    assert result["geometry"]["piston_margin"] == pytest.approx(
        {"nominal": 0.15748, "min": 0.15748, "max": 0.15748, "rss_min": 0.15748, "rss_max": 0.15748, "unit": "in"})


def test_the_json_writer_equals_a_plain_dump_and_the_documented_schema_accepts_it(catalog):
    items = [{"ref": i, "plug": FLUSH_PLUG, "head": FLUSH_HEAD} for i in range(3)]
    items += [{"plug": LONG_PLUG, "head": ROOMY_HEAD, "waive": [{"codes": ["REACH_LONG"], "reason": "ok"}]},
              {"plug": {"reach": "abc"}, "head": FLUSH_HEAD}]
    answer = run_batch(read_json_document({"items": items}), catalog)
    written = json.loads(answer.to_json())
    assert written == json.loads(json.dumps(answer.as_dict()))
    assert [r["ref"] for r in written["results"]] == ["0", "1", "2", "4", "5"]
    assert BatchResponseSchema().validate(written) == {}


def test_the_documented_schema_refuses_a_result_without_a_verdict():
    broken = {"summary": {"total": 1, "pass": 1, "warn": 0, "fail": 0, "invalid": 0, "verdict": "pass"},
              "results": [{"ref": "1"}]}
    assert "results" in BatchResponseSchema().validate(broken)


@pytest.mark.parametrize("schema, document", [
    (PlugInputSchema(), dict(FLUSH_PLUG, hex="5/8 in")),
    (PlugInputSchema(), {"sku": "DEMO-1"}),
    (PlugInputSchema(), {"sku": "DEMO-1", "reach": 19}),
    (PlugInputSchema(), {"thread": "M14", "reach": "3 kg", "colour": "red"}),
    (PlugInputSchema(), {}),
    (HeadInputSchema(), dict(FLUSH_HEAD, design_reach=19.0)),
    (HeadInputSchema(), dict(FLUSH_HEAD, intake_temperature="45 degC", material="aluminum")),
    (OptionsSchema(), {"torque": "20 ft-lb", "require": ["piston"]}),
    (OptionsSchema(), {"torque": -3}),
])
def test_a_schema_narrowed_to_the_given_fields_loads_and_refuses_exactly_like_the_full_one(schema, document):
    def outcome(used):
        try:
            return "loaded", used.load(document)
        except ValidationError as exc:
            return "refused", exc.messages

    assert outcome(_schema_for(schema, document)) == outcome(schema)


CELLS = st.sampled_from(["", "M14", "M14x1.25", "flat", "taper", "19", "0.75 in", "19 ± 0.2", "19 +0.1/-0.3",
                         "-3", "nan", "inf", "1e309", "3 kg", "abc", "yes", "REACH_LONG", "REACH_LONG: why",
                         "piston,valve", "rss", "20 ft-lb", "45 degC", "±", "+/-", "1 ± x", "DEMO-1", "é"])
COLUMNS = st.sampled_from(["ref", "note", "waive", "sku", "head_id", "plug_thread", "plug_seat", "plug_reach",
                           "plug_reach_in", "plug_gasket_thickness_mm", "plug_firing_end", "plug_hex",
                           "plug_resistor", "plug_heat_range_value", "head_thread", "head_seat",
                           "head_port_depth", "head_piston_clearance_mm", "head_intake_temperature_degC",
                           "head_boot_range_min", "torque", "torque_lbf_ft", "require", "stack", "gap"])


@settings(max_examples=150, deadline=None)
@given(header=st.lists(COLUMNS, min_size=1, max_size=8, unique=True),
       rows=st.lists(st.lists(CELLS, min_size=8, max_size=8), min_size=1, max_size=5))
def test_no_csv_build_list_makes_the_batch_fail_other_than_as_a_whole_file_problem(catalog, header, rows):
    text = ",".join(header) + "\n" + "".join(",".join(f'"{cell}"' for cell in row[:len(header)]) + "\n"
                                             for row in rows)
    try:
        raw = read_csv(text)
    except BuildListError:
        return
    answer = run_batch(raw, catalog).as_dict()
    assert len(answer["results"]) == len(raw)
    assert all(result["verdict"] in ("pass", "warn", "fail", "invalid") for result in answer["results"])
    assert json.loads(run_batch(raw, catalog).to_json()) == json.loads(json.dumps(answer))


@pytest.mark.parametrize("cell", ["0.75", "3", "nan", "-1", "1e400"])
def test_a_number_under_a_header_unit_loads_and_is_refused_exactly_like_the_object_form(catalog, cell):
    """0.75 in = 19.05 mm (NIST SP 811, 2008, B.8) loads; 3 in = 76.2 mm is past the
    60 mm reach limit, NaN and infinity are no lengths, -1 in is below zero."""
    header = "plug_thread,plug_seat,plug_reach_in,plug_gasket_thickness_mm,head_thread,head_seat,head_port_depth_mm\n"
    from_csv = run_batch(read_csv(header + f"M14x1.25,flat,{cell},1.5,M14x1.25,flat,17.5\n"), catalog).as_dict()
    plug = {"thread": "M14x1.25", "seat": "flat", "reach": {"value": float(cell), "unit": "in"},
            "gasket_thickness": {"value": 1.5, "unit": "mm"}}
    head = {"thread": "M14x1.25", "seat": "flat", "port_depth": {"value": 17.5, "unit": "mm"}}
    from_json = batch([{"plug": plug, "head": head}], catalog)
    result, expected = from_csv["results"][0], from_json["results"][0]
    assert result["verdict"] == expected["verdict"]
    if expected["verdict"] == "invalid":
        assert result["errors"] == {"plug_reach_in": expected["errors"]["plug"]["reach"]}
    else:
        assert {k: v for k, v in result.items() if k not in ("ref", "line")} == \
            {k: v for k, v in expected.items() if k != "ref"}


@pytest.mark.parametrize("value", [19.0, 70.0, -2.0, float("inf")])
def test_a_length_object_without_tolerance_loads_like_one_with_zero_tolerance_and_like_the_bare_number(value):
    """The reach limit is 60 mm (schemas.specs.MAX_REACH_MM, common practice) and a reach
    is not negative: 70 and -2 are refused, whichever form they come in."""
    def load(reach):
        try:
            return PlugInputSchema().load({"thread": "M14x1.25", "seat": "flat", "reach": reach})["reach"]
        except ValidationError as error:
            return error.messages

    bare = load(value)
    assert load({"value": value, "unit": "mm"}) == bare
    assert load({"value": value, "unit": "mm", "tol": 0.0}) == bare
    assert load({"value": value / 25.4, "unit": "in"}) == load({"value": value / 25.4, "unit": "in", "plus": 0, "minus": 0})
