"""GET /v1/heads/{head_id}/fitting-plugs and GET /v1/plugs/{sku}/interchanges over HTTP."""
from __future__ import annotations

import json

import pytest

from schemas.counter import FittingPlugSchema, InterchangeSchema
from schemas.problem import PROBLEM_MEDIA_TYPE

# A hand-built M14 flat port: design reach 19 on the standard 1.5 mm gasket (seed
# catalogue, common practice) gives a 17.5 mm port depth; piston 8 mm beyond it.
HEAD = {"head_id": "T-HEAD", "description": "test head", "thread": "M14x1.25", "seat": "flat",
        "port_depth": 17.5, "piston_clearance": 8.0, "well_bore": 25.0, "hex": 16.0, "resistor_required": True,
        "material": "aluminium"}


def plug(sku: str, reach: float, firing_end: float, **extra) -> dict:
    return {"sku": sku, "thread": "M14x1.25", "seat": "flat", "reach": reach, "gasket_thickness": 1.5,
            "firing_end": firing_end, "hex": 16.0, "resistor": True, "quantity_on_hand": 3, **extra}


# Hand-worked: thread end e = reach - 1.5, protrusion = e - 17.5, tip t = e + firing end,
# piston margin = 25.5 - t (all exact here, so worst case = nominal).
PLUGS = [
    plug("A-FLUSH-SHORT-TIP", 19.0, 2.0),     # flush, margin 6.0 -> pass, first
    plug("B-FLUSH-LONG-TIP", 19.0, 5.0),      # flush, margin 3.0 -> pass, second
    plug("C-NEAR-FLUSH", 19.3, 2.0),          # protrusion 0.3 (within 0.5) -> pass, third
    plug("D-NO-RESISTOR", 19.0, 2.0, resistor=False),      # RESISTOR_REQUIRED -> warn, first warning
    plug("E-SHORT", 18.0, 3.0),               # protrusion -1.0 (past 0.5, inside 2 pitches) -> REACH_SHORT warn
    plug("E-HALF-INCH", 12.7, 3.0),           # protrusion -6.3, past 2 pitches (2.5) -> REACH_SHORT fail: left out
    plug("E-LONG", 20.8, 3.0),                # protrusion 1.3, past one pitch (1.25, ISO 68-1) -> REACH_LONG fail
    plug("F-HITS-PISTON", 19.0, 7.0),         # margin 1.0 < 1.5 -> PISTON_CONTACT: left out
    plug("G-BIG-HEX", 19.0, 2.0, hex=20.8),   # 20.8 mm socket (28.0 mm) > 25 mm well: left out
    plug("H-OUT-OF-STOCK", 19.0, 2.0, quantity_on_hand=0),  # pass, like A, ranks by sku after A
    plug("I-OTHER-THREAD", 19.0, 2.0, thread="M12x1.25", gasket_thickness=1.0),  # not a candidate
]


@pytest.fixture
def shop(client, auth):
    assert client.post("/v1/heads", json=HEAD, headers=auth).status_code == 201
    lines = "\n".join(json.dumps(p) for p in PLUGS) + "\n"
    answer = client.post("/v1/imports/plugs", data=lines, headers={**auth, "Content-Type": "application/x-ndjson"})
    assert answer.status_code == 200, answer.get_json()
    return client


def listing(client, path):
    response = client.get(path)
    assert response.status_code == 200, response.get_data(as_text=True)
    return response, response.get_json()


def test_fitting_plugs_are_ranked_passes_first_closest_to_flush_then_most_piston_margin(shop):
    response, body = listing(shop, "/v1/heads/T-HEAD/fitting-plugs")
    assert [(entry["sku"], entry["verdict"]) for entry in body] == [
        ("A-FLUSH-SHORT-TIP", "pass"), ("H-OUT-OF-STOCK", "pass"), ("B-FLUSH-LONG-TIP", "pass"),
        ("C-NEAR-FLUSH", "pass"), ("D-NO-RESISTOR", "warn"), ("E-SHORT", "warn")]
    assert json.loads(response.headers["X-Pagination"])["total"] == 6
    FittingPlugSchema(many=True).load(body)  # the documented shape


def test_each_entry_is_the_counter_line_a_clerk_reads(shop):
    _response, body = listing(shop, "/v1/heads/T-HEAD/fitting-plugs")
    lines = {entry["sku"]: entry for entry in body}
    first = lines["A-FLUSH-SHORT-TIP"]
    # Hand-worked above: flush (19 - 1.5 - 17.5 = 0) on both sides of a flat roof, piston
    # margin 25.5 - 19.5 = 6.0 mm, exact dimensions so the worst case is the nominal.
    assert first == {
        "sku": "A-FLUSH-SHORT-TIP", "description": "", "quantity_on_hand": 3, "location": None, "heat_range": None,
        "verdict": "pass", "codes": first["codes"],
        "protrusion_short_side": {"value": 0.0, "unit": "mm"}, "protrusion_long_side": {"value": 0.0, "unit": "mm"},
        "piston_margin": {"value": 6.0, "unit": "mm"}, "cautions": first["cautions"]}
    assert "plug" not in first and "result" not in first
    assert "guidance" in first["cautions"][0]
    assert set(first["codes"]) <= {"NOT_CHECKED"}  # nothing but checks without data
    assert lines["D-NO-RESISTOR"]["codes"][0] == "RESISTOR_REQUIRED"  # the warning before the notes
    # E: 18.0 - 1.5 - 17.5 = -1.0 mm, head threads exposed
    assert lines["E-SHORT"]["protrusion_short_side"] == {"value": -1.0, "unit": "mm"}
    assert lines["E-SHORT"]["codes"][0] == "REACH_SHORT"


def test_detail_full_adds_the_stored_plug_and_the_whole_result_document(shop):
    _response, summary = listing(shop, "/v1/heads/T-HEAD/fitting-plugs")
    _response, body = listing(shop, "/v1/heads/T-HEAD/fitting-plugs?detail=full")
    first = body[0]
    assert first["result"]["geometry"]["piston_margin"]["min"] == pytest.approx(6.0)
    assert first["plug"]["quantity_on_hand"] == 3 and first["plug"]["sku"] == first["sku"]
    assert [finding["code"] for finding in body[4]["result"]["findings"]
            if finding["severity"] != "info"] == ["RESISTOR_REQUIRED"]
    assert [{key: value for key, value in entry.items() if key not in ("plug", "result")} for entry in body] == summary
    FittingPlugSchema(many=True).load(body)
    assert shop.get("/v1/heads/T-HEAD/fitting-plugs?detail=everything").status_code == 422
    assert all("licensed practice come first" in " ".join(entry["cautions"]) for entry in body)


def test_nothing_that_fails_is_listed(shop):
    _response, body = listing(shop, "/v1/heads/T-HEAD/fitting-plugs?page_size=1000")
    skus = {entry["sku"] for entry in body}
    assert not skus & {"E-HALF-INCH", "E-LONG", "F-HITS-PISTON", "G-BIG-HEX", "I-OTHER-THREAD"}
    assert all(entry["verdict"] != "fail" for entry in body)


def test_include_pass_lists_clean_passes_only_and_filters_narrow(shop):
    _response, passes = listing(shop, "/v1/heads/T-HEAD/fitting-plugs?include=pass")
    assert [entry["sku"] for entry in passes] == ["A-FLUSH-SHORT-TIP", "H-OUT-OF-STOCK", "B-FLUSH-LONG-TIP",
                                                 "C-NEAR-FLUSH"]
    _response, stocked = listing(shop, "/v1/heads/T-HEAD/fitting-plugs?in_stock=true&resistor=true&hex=5/8 in")
    assert [entry["sku"] for entry in stocked] == ["A-FLUSH-SHORT-TIP", "B-FLUSH-LONG-TIP", "C-NEAR-FLUSH",
                                                  "E-SHORT"]


def test_pages_follow_each_other_without_gaps(shop):
    response, first = listing(shop, "/v1/heads/T-HEAD/fitting-plugs?page_size=4")
    _response, second = listing(shop, "/v1/heads/T-HEAD/fitting-plugs?page_size=4&page=2")
    assert [e["sku"] for e in first + second] == [e["sku"] for e in listing(shop, "/v1/heads/T-HEAD/fitting-plugs")[1]]
    assert json.loads(response.headers["X-Pagination"]) == {"total": 6, "total_pages": 2, "first_page": 1,
                                                             "last_page": 2, "page": 1, "next_page": 2}


def test_imperial_units_and_check_options_apply_to_every_entry(shop):
    _response, body = listing(shop, "/v1/heads/T-HEAD/fitting-plugs?units=imperial&min_clearance=3.5")
    # with 3.5 mm minimum clearance, B (margin 3.0 mm) fails and is left out
    assert "B-FLUSH-LONG-TIP" not in [entry["sku"] for entry in body]
    assert body[0]["piston_margin"] == {"value": pytest.approx(6.0 / 25.4, abs=1e-5), "unit": "in"}
    _response, full = listing(shop, "/v1/heads/T-HEAD/fitting-plugs?units=imperial&min_clearance=3.5&detail=full")
    assert full[0]["result"]["geometry"]["piston_margin"]["unit"] == "in"


def test_the_margin_shown_is_the_bound_the_verdict_used(client, auth):
    # A plug with tolerances: firing end 2.0 +0.4, reach 19.0 +0.2/-0.1, exact gasket.
    # Tip worst case 19.5 + 0.2 + 0.4 = 20.1 mm, so the worst-case margin is 25.5 - 20.1
    # = 5.4 mm; the RSS one 25.5 - 19.5 - sqrt(0.2² + 0.4²) = 5.5528 mm (hand-worked),
    # written to 0.001 mm.
    assert client.post("/v1/heads", json=HEAD, headers=auth).status_code == 201
    toleranced = {**plug("T-1", 19.0, 2.0), "reach": {"value": 19.0, "plus": 0.2, "minus": 0.1},
                  "firing_end": {"value": 2.0, "plus": 0.4, "minus": 0.0}}
    assert client.post("/v1/plugs", json=toleranced, headers=auth).status_code == 201
    _response, worst = listing(client, "/v1/heads/T-HEAD/fitting-plugs")
    _response, rss = listing(client, "/v1/heads/T-HEAD/fitting-plugs?stack=rss")
    assert worst[0]["piston_margin"]["value"] == 5.4
    assert rss[0]["piston_margin"]["value"] == round(6.0 - (0.2 ** 2 + 0.4 ** 2) ** 0.5, 3) == 5.553


def test_an_unknown_head_is_a_404_and_a_bad_query_a_422(shop):
    missing = shop.get("/v1/heads/NOPE/fitting-plugs")
    assert missing.status_code == 404 and missing.mimetype == PROBLEM_MEDIA_TYPE
    bad = shop.get("/v1/heads/T-HEAD/fitting-plugs?include=fail&page_size=5000")
    assert bad.status_code == 422 and bad.mimetype == PROBLEM_MEDIA_TYPE


# --- interchanges ----------------------------------------------------------------------

REPLACEMENTS = [
    plug("R-ORIGINAL", 19.0, 3.0, terminal_height=53.5),
    plug("R-SAME", 19.0, 3.0, terminal_height=55.5),                       # closeness 0
    plug("R-THICK-GASKET", 19.5, 3.0, gasket_thickness=2.0),               # same thread end and tip
    plug("R-TIP-DEEPER", 19.0, 3.6),                                       # tip +0.6 (within 0.75)
    plug("R-OTHER-HEX", 19.0, 3.0, hex=20.8),                              # closeness 0, hex noted: after R-SAME
    plug("R-LONGER", 19.4, 2.6),                                           # thread end +0.4, tip 0
    plug("R-TOO-LONG", 19.6, 2.4),                                         # thread end +0.6: out
    plug("R-TIP-TOO-DEEP", 19.0, 3.8),                                     # tip +0.8: out
    plug("R-NO-RESISTOR", 19.0, 3.0, resistor=False),                      # would lose the resistor: out
]


@pytest.fixture
def counter_stock(client, auth):
    lines = "\n".join(json.dumps(p) for p in REPLACEMENTS) + "\n"
    answer = client.post("/v1/imports/plugs", data=lines, headers={**auth, "Content-Type": "application/x-ndjson"})
    assert answer.status_code == 200, answer.get_json()
    return client


def test_interchanges_are_ranked_by_closeness_with_differences_in_mm(counter_stock):
    response, body = listing(counter_stock, "/v1/plugs/R-ORIGINAL/interchanges")
    assert [entry["sku"] for entry in body] == ["R-SAME", "R-THICK-GASKET", "R-OTHER-HEX", "R-LONGER",
                                               "R-TIP-DEEPER"]
    by_sku = {entry["sku"]: entry for entry in body}
    assert by_sku["R-SAME"]["differences"]["terminal_top"] == {"value": 2.0, "unit": "mm"}
    assert by_sku["R-LONGER"]["differences"]["thread_end"] == {"value": 0.4, "unit": "mm"}
    assert by_sku["R-TIP-DEEPER"]["differences"]["tip"] == {"value": 0.6, "unit": "mm"}
    assert by_sku["R-OTHER-HEX"]["hex_differs"] is True and by_sku["R-SAME"]["hex_differs"] is False
    assert by_sku["R-SAME"]["quantity_on_hand"] == 3 and "plug" not in by_sku["R-SAME"]
    assert json.loads(response.headers["X-Pagination"])["total"] == 5
    InterchangeSchema(many=True).load(body)
    _response, full = listing(counter_stock, "/v1/plugs/R-ORIGINAL/interchanges?detail=full")
    assert [entry["plug"]["sku"] for entry in full] == [entry["sku"] for entry in body]
    InterchangeSchema(many=True).load(full)
    # Guidance carries its caution, and says what interchange leaves to the fit check.
    cautions = " ".join(body[0]["cautions"])
    assert "heat-range differences are shown, not judged" in cautions and "gap is not compared" in cautions
    assert "licensed practice come first" in cautions
    assert body[0]["differences"]["heat_range"] is None  # no heat ranges on file


def test_interchanges_give_the_heat_range_step_on_the_same_scale_and_rank_by_it(client, auth):
    """Invented scale names and values (a shop's own index from 0 to 1): 0.5 (original),
    0.625 and 1.0 on one scale, 0.5 on another. The steps are exact in binary, so the
    differences are exactly 0.125 and 0.5."""
    lines = [plug("H-ORIGINAL", 19.0, 3.0, heat_range={"scale": "shop", "value": 0.5}),
             plug("H-FAR", 19.0, 3.0, heat_range={"scale": "shop", "value": 1.0}),
             plug("H-NEAR", 19.0, 3.0, heat_range={"scale": "Shop ", "value": 0.625}),
             plug("H-OTHER-SCALE", 19.0, 3.0, heat_range={"scale": "other", "value": 0.5})]
    answer = client.post("/v1/imports/plugs", data="\n".join(json.dumps(p) for p in lines) + "\n",
                         headers={**auth, "Content-Type": "application/x-ndjson"})
    assert answer.status_code == 200, answer.get_json()
    _response, body = listing(client, "/v1/plugs/H-ORIGINAL/interchanges")
    assert [(entry["sku"], entry["differences"]["heat_range"]) for entry in body] == [
        ("H-NEAR", {"value": 0.125, "unit": ""}), ("H-FAR", {"value": 0.5, "unit": ""}),
        ("H-OTHER-SCALE", None)]


def test_a_plug_without_a_resistor_may_be_replaced_by_one_with(counter_stock):
    _response, body = listing(counter_stock, "/v1/plugs/R-NO-RESISTOR/interchanges")
    assert "R-ORIGINAL" in [entry["sku"] for entry in body]


def test_tolerances_can_be_tightened_but_not_widened(counter_stock):
    _response, body = listing(counter_stock, "/v1/plugs/R-ORIGINAL/interchanges?tip_tolerance=0.5&units=imperial")
    assert "R-TIP-DEEPER" not in [entry["sku"] for entry in body]
    assert body[0]["closeness"]["unit"] == "in"
    assert counter_stock.get("/v1/plugs/R-ORIGINAL/interchanges?tip_tolerance=2").status_code == 422
    assert counter_stock.get("/v1/plugs/NOPE/interchanges").status_code == 404


def test_the_demo_shop_answers_both_questions(client, runner):
    assert runner.invoke("seed", "--demo").exit_code == 0
    # The first entries the README's examples show (seed_catalog/demo/generate.py, SHOWCASE).
    _response, fitting = listing(client, "/v1/heads/DEMO-H-VAN-I4/fitting-plugs?page_size=3")
    assert fitting[0]["sku"] == "DEMO-P-0001" and fitting[0]["verdict"] == "pass"
    _response, replacements = listing(client, "/v1/plugs/DEMO-P-0001/interchanges?page_size=3&detail=full")
    assert replacements[0]["sku"] == "DEMO-P-0171"
    assert all(entry["plug"]["thread"] == "M14x1.25" for entry in replacements)
