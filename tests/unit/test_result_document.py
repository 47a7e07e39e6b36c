"""The result document: its shape (validated by the documented FitResultSchema) and its
units. 1 in = 25.4 mm and 1 lbf·ft = 1.355818 N·m (NIST SP 811, 2008, appendix B)."""
from __future__ import annotations

import pytest

from schemas.results import FitResultSchema
from service.formats.result_json import render_message, result_document

from .test_fit_geometry import FLUSH_HEAD, FLUSH_PLUG


@pytest.mark.parametrize("system", ["metric", "imperial"])
def test_the_written_document_matches_its_documented_schema(check, system):
    result = check(dict(FLUSH_PLUG, hex=16, reach=21.0), dict(FLUSH_HEAD, well_bore=21.0, material="cast_iron"),
                   {"torque": 50})
    document = result_document(result, system)
    assert FitResultSchema().validate(document) == {}
    assert {f["code"] for f in document["findings"]} >= {"REACH_LONG", "TOOL_CLEARANCE", "TORQUE_OUT_OF_RANGE"}


def test_imperial_answers_are_in_inches_and_foot_pounds(check):
    """Piston margin 4.0 mm = 0.15748 in; M14 flat cast-iron torque 25-35 N·m =
    18.439-25.815 lbf·ft (common practice range, reference-values.md)."""
    document = result_document(check(FLUSH_PLUG, dict(FLUSH_HEAD, material="cast_iron")), "imperial")
    margin = document["geometry"]["piston_margin"]
    assert margin["unit"] == "in" and margin["nominal"] == pytest.approx(4.0 / 25.4, abs=1e-5)
    torque = document["torque"]
    assert torque["unit"] == "lbf*ft"
    assert (torque["min"], torque["max"]) == (pytest.approx(18.439, abs=1e-3), pytest.approx(25.815, abs=1e-3))


def test_messages_read_in_the_clients_units(check):
    """Protrusion (20.0 - 1.5) - 17.5 = 1.0 mm = 0.039 in, past the 0.5 mm flush tolerance;
    the reach that fits flush: 17.5 + 1.5 = 19.0 mm = 0.748 in."""
    result = check(dict(FLUSH_PLUG, reach=20.0), FLUSH_HEAD)
    metric = result_document(result, "metric")["findings"][0]
    imperial = result_document(result, "imperial")["findings"][0]
    assert metric["code"] == "REACH_LONG"
    assert "1.00 mm" in metric["message"] and "0.50 mm" in metric["message"] and "19.00 mm" in metric["message"]
    assert "0.039 in" in imperial["message"] and "0.748 in" in imperial["message"]
    assert metric["values"]["distance"] == {"value": 1.0, "unit": "mm"}


def test_imperial_assumptions_state_their_figures_in_inches_and_psi_and_quote_sources_as_published(check):
    """Defaults stated in mm and bar become inches and psi: 1.5 mm = 0.059 in, 0.5 mm =
    0.020 in, 1.01325 bar = 14.7 psi (1 bar = 14.5038 psi; NIST SP 811, 2008, appendix B).
    A cited source in parentheses keeps its own words ("gasket 1.5 mm: common practice")."""
    plug = {key: value for key, value in FLUSH_PLUG.items() if key != "gasket_thickness"}
    result = check(dict(plug, gap=0.9), dict(FLUSH_HEAD, compression_ratio=10.0, ignition_voltage=30.0))
    assumptions = result_document(result, "imperial")["assumptions"]
    stated = [text.split("(")[0] for text in assumptions]  # outside the cited sources
    assert not any(" mm" in text or " bar" in text for text in stated), assumptions
    joined = " ".join(assumptions)
    assert "M14x1.25, 0.059 in, is assumed" in joined
    assert "flush_tolerance not given: 0.020 in used" in joined
    assert "forced_induction not given: 14.7 psi absolute" in joined
    assert "gasket 1.5 mm: common practice" in joined  # the source, as published
    assert result_document(result, "metric")["assumptions"] == list(result.assumptions)


def test_a_message_without_placeholders_is_left_alone():
    assert render_message("Seat mismatch.", {"x": {"value": 1.0, "unit": "mm"}}) == "Seat mismatch."


def test_every_result_carries_the_guidance_caution(check):
    cautions = " ".join(result_document(check(FLUSH_PLUG, FLUSH_HEAD))["cautions"])
    assert "guidance" in cautions and "service data" in cautions and "regulations" in cautions


def test_documents_written_with_one_intern_table_share_their_repeated_parts_and_equal_unshared_ones(check):
    """Reach 19 vs 19.3 mm in the flush port (both within the flush tolerance): different
    geometry, the same cautions, assumptions, torque guide and NOT_CHECKED findings, which
    are then one object each."""
    first = check(FLUSH_PLUG, FLUSH_HEAD, {"torque": 25})
    second = check(dict(FLUSH_PLUG, reach=19.3), FLUSH_HEAD, {"torque": 25})
    shared: dict = {}
    one, two = result_document(first, "metric", shared), result_document(second, "metric", shared)
    assert one == result_document(first, "metric") and two == result_document(second, "metric")
    assert one["geometry"] != two["geometry"]
    assert one["cautions"] is two["cautions"] and one["assumptions"] is two["assumptions"]
    assert one["torque"] is two["torque"]
    not_checked = [f for f in one["findings"] if f["code"] == "NOT_CHECKED"]
    assert not_checked and all(any(f is g for g in two["findings"]) for f in not_checked)


def test_a_toleranced_protrusion_spreads_and_an_exact_margin_gives_five_equal_numbers(check):
    """The contract's flush fit: protrusion (19.0 − 1.5) − 17.5 = 0.0 mm, piston margin
    (17.5 + 8.0) − (17.5 + 4.0) = 4.0 mm; a port depth of 17.5 ± 0.2 mm moves the
    protrusion by ∓ 0.2 mm at worst."""
    margin = result_document(check(FLUSH_PLUG, FLUSH_HEAD))["geometry"]["piston_margin"]
    assert [margin[name] for name in ("nominal", "min", "max", "rss_min", "rss_max")] == [pytest.approx(4.0)] * 5
    toleranced = result_document(check(FLUSH_PLUG, dict(FLUSH_HEAD, port_depth={"value": 17.5, "tol": 0.2})))
    protrusion = toleranced["geometry"]["protrusion_short_side"]
    assert protrusion["nominal"] == pytest.approx(0.0, abs=1e-9)
    assert (protrusion["min"], protrusion["max"]) == (pytest.approx(-0.2), pytest.approx(0.2))
