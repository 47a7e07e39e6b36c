"""Issue 18: the seat's diameters (spot face, counterbore, conical taper) and thread-repair
inserts (reach to the insert's end, the strip check's governing interface), against exact
geometry and hand-derived cases. Each number names where it comes from."""
from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from marshmallow import ValidationError

from schemas.specs import HeadInputSchema, PlugInputSchema, port_spec
from service.fitment import check_fit
from service.fitment.insert import ALUMINIUM_COLD_CAUTION, INSERT_CAUTION, coil_outer_thread
from service.fitment.model import Dim, Insert, Options, PlugSpec, PortSpec
from service.fitment.seat import (
    SIX_POINT,
    SIX_POINT_CORNERS_PER_FLATS,
    TWELVE_POINT,
    TWELVE_POINT_CORNERS_PER_FLATS,
    across_corners,
)


def findings(result, code=None):
    return [f for f in result.findings if code is None or f.code == code]


def the(result, code):
    (finding,) = findings(result, code)
    return finding


def flat_plug(**fields):
    base = {"reach": Dim(12.7), "gasket_thickness": Dim(1.5), "firing_end": Dim(3.0), "hex": 16.0}
    return PlugSpec("M14x1.25", "flat", **{**base, **fields})


def flat_port(**fields):
    base = {"port_depth": Dim(11.2), "material": "cast_iron"}
    return PortSpec("M14x1.25", "flat", **{**base, **fields})


def conical_plug(**fields):
    return PlugSpec("M14x1.25", "conical", reach=Dim(11.7), firing_end=Dim(3.0), hex=16.0, **fields)


def conical_port(**fields):
    return PortSpec("M14x1.25", "conical", port_depth=Dim(11.7), material="cast_iron", **fields)


# --- corner geometry (exact) -------------------------------------------------------------

def test_six_point_corners_are_the_flats_over_cos_30():
    # exact geometry: a regular hexagon's across-corners is AF / cos 30 deg = AF * 2 / sqrt(3)
    assert SIX_POINT_CORNERS_PER_FLATS == pytest.approx(1.0 / math.cos(math.radians(30.0)), abs=1e-15)
    assert across_corners(16.0, SIX_POINT) == pytest.approx(18.475208614, abs=1e-9)  # 16 * 1.154700538...
    assert across_corners(20.8, SIX_POINT) == pytest.approx(24.017771198, abs=1e-9)  # 20.8 * 1.154700538...


def test_twelve_point_corners_are_the_flats_over_cos_15():
    # exact geometry: a regular dodecagon's across-corners is AF / cos 15 deg, and
    # cos 15 deg = (sqrt 6 + sqrt 2) / 4, so 1 / cos 15 deg = sqrt 6 - sqrt 2 = 1.035276180...
    assert TWELVE_POINT_CORNERS_PER_FLATS == pytest.approx(1.0 / math.cos(math.pi / 12.0), abs=1e-15)
    assert TWELVE_POINT_CORNERS_PER_FLATS == pytest.approx(1.0352761804, abs=1e-10)
    assert across_corners(14.0, TWELVE_POINT) == pytest.approx(14.493866526, abs=1e-9)


# --- the counterbore -----------------------------------------------------------------------

def test_a_counterbore_that_traps_a_20_8_mm_hex(catalog):
    """Hand-derived: the catalogue gives the 20.8 mm hex as six-point, so its corners are
    20.8 x 2/sqrt(3) = 24.018 mm across. A 24.0 mm counterbore is 0.018 mm too narrow: the
    hex cannot turn, the plug cannot be screwed home (fail). At 24.1 mm it turns."""
    trapped = check_fit(flat_plug(hex=20.8), flat_port(counterbore_diameter=24.0), None, catalog)
    finding = the(trapped, "HEX_TRAPPED")
    assert (trapped.verdict, finding.severity) == ("fail", "fail")
    assert finding.values["across_corners"][0] == pytest.approx(24.0178, abs=1e-4)
    assert finding.values["interference"][0] == pytest.approx(0.0178, abs=1e-4)
    assert trapped.analysis["seat_diameter"]["hex_form"] == "six-point"
    turning = check_fit(flat_plug(hex=20.8), flat_port(counterbore_diameter=24.1), None, catalog)
    assert not findings(turning, "HEX_TRAPPED")
    assert turning.verdict == "pass"


def test_a_twelve_point_14_mm_hex_turns_where_a_six_point_one_would_not_and_says_so(catalog):
    # 14 mm: twelve-point in the catalogue (hexes.csv); corners 14.494 mm (exact geometry),
    # a six-point 14 mm hex 16.166 mm (14 * 2/sqrt 3)
    result = check_fit(flat_plug(hex=14.0), flat_port(counterbore_diameter=15.0), None, catalog)
    assert not findings(result, "HEX_TRAPPED")
    assert any("six-point hex of that size is 16.17 mm" in text for text in result.assumptions)
    trapped = check_fit(flat_plug(hex=14.0), flat_port(counterbore_diameter=14.4), None, catalog)
    assert the(trapped, "HEX_TRAPPED").values["across_corners"][0] == pytest.approx(14.4939, abs=1e-4)


def test_a_hex_the_catalogue_does_not_list_is_taken_six_point(catalog):
    # 17 mm is not in hexes.csv: six-point, 17 * 2/sqrt 3 = 19.630 mm across its corners
    result = check_fit(flat_plug(hex=17.0), flat_port(counterbore_diameter=19.6), None, catalog)
    assert the(result, "HEX_TRAPPED").values["across_corners"][0] == pytest.approx(19.6299, abs=1e-4)
    assert any("taken as six-point" in text for text in result.assumptions)


# --- the spot face -------------------------------------------------------------------------

def test_a_gasket_wider_than_the_spot_face_warns_with_its_overhang(catalog):
    # hand-derived: a 20 mm gasket on a 19 mm face overhangs by (20 - 19) / 2 = 0.5 mm a side
    result = check_fit(flat_plug(gasket_outside_diameter=20.0), flat_port(spot_face_diameter=19.0), None, catalog)
    finding = the(result, "GASKET_OVERHANG")
    assert (result.verdict, finding.severity) == ("warn", "warn")
    assert finding.values["overhang"] == (0.5, "length")
    fits = check_fit(flat_plug(gasket_outside_diameter=19.0), flat_port(spot_face_diameter=19.0), None, catalog)
    assert fits.verdict == "pass"


def test_without_the_gaskets_outside_diameter_the_spot_face_is_not_checked(catalog):
    result = check_fit(flat_plug(), flat_port(spot_face_diameter=19.0), None, catalog)
    (skipped,) = [f for f in findings(result, "NOT_CHECKED") if f.check == "seat_diameter"]
    assert "gasket_outside_diameter" in skipped.message
    required = check_fit(flat_plug(), flat_port(spot_face_diameter=19.0),
                         Options(require=frozenset({"seat_diameter"})), catalog)
    assert required.verdict == "fail"


def test_a_head_without_seat_machining_is_not_checked_and_raises_nothing_else(catalog):
    result = check_fit(flat_plug(), flat_port(), None, catalog)
    (skipped,) = [f for f in result.findings if f.check == "seat_diameter"]
    assert skipped.code == "NOT_CHECKED"
    assert result.verdict == "pass"


# --- the conical seat ----------------------------------------------------------------------

def test_a_taper_angle_mismatch_fails_on_the_plugs_own_angle(catalog):
    # 63 deg against 60 deg: 3 deg apart, more than the 1 deg two tapers of +/-0.5 deg can differ
    result = check_fit(conical_plug(seat_angle_deg=63.0), conical_port(seat_angle_deg=60.0), None, catalog)
    finding = the(result, "SEAT_ANGLE_MISMATCH")
    assert (result.verdict, finding.severity) == ("fail", "fail")
    assert check_fit(conical_plug(seat_angle_deg=63.0), conical_port(seat_angle_deg=62.5), None,
                     catalog).verdict == "pass"


def test_a_plug_that_gives_no_angle_is_taken_at_63_degrees_and_only_warns(catalog):
    # 63 deg included: the angle usually quoted for plug tapers (common practice, reference-values.md)
    result = check_fit(conical_plug(), conical_port(seat_angle_deg=60.0), None, catalog)
    assert the(result, "SEAT_ANGLE_MISMATCH").severity == "warn"
    assert any("63 deg included" in text for text in result.assumptions)
    assert check_fit(conical_plug(), conical_port(seat_angle_deg=63.0), None, catalog).verdict == "pass"


def test_a_taper_mouth_wider_than_the_plugs_taper_warns(catalog):
    # hand-derived: an 18 mm mouth over a 17 mm plug taper leaves a ring (18 - 17) / 2 = 0.5 mm wide bare
    result = check_fit(conical_plug(seat_diameter=17.0), conical_port(spot_face_diameter=18.0), None, catalog)
    assert the(result, "TAPER_DIAMETER").values["bare_ring"] == (0.5, "length")
    assert check_fit(conical_plug(seat_diameter=18.5), conical_port(spot_face_diameter=18.0), None,
                     catalog).verdict == "pass"


# --- inserts: where the insert ends --------------------------------------------------------

def test_a_12_mm_coil_insert_in_a_9_5_mm_port_stands_proud_and_fails(catalog):
    """Hand-derived: the insert runs from the seat face to 12 mm; the port breaks into the
    chamber at 9.5 mm; so 12 - 9.5 = 2.5 mm of insert stands in the chamber, more than the
    default max_protrusion of one M14x1.25 pitch, 1.25 mm (ISO 261 pitch): INSERT_PROUD fails."""
    port = flat_port(port_depth=Dim(9.5), insert=Insert("coil", Dim(12.0)))
    result = check_fit(flat_plug(reach=Dim(11.0)), port, None, catalog)
    finding = the(result, "INSERT_PROUD")
    assert finding.severity == "fail"
    assert finding.values["distance"] == (2.5, "length")
    assert finding.values["limit"] == (1.25, "length")
    assert result.geometry["insert_protrusion_long_side"].nominal == 2.5
    assert the(result, "INSERT_FITTED").severity == "info"


def test_an_insert_short_of_the_chamber_leaves_the_tapped_thread_bare(catalog):
    # hand-derived: 16.0 +/- 0.1 mm in a 17.5 +/- 0.1 mm port: worst case 15.9 - 17.6 = -1.7 mm
    port = flat_port(port_depth=Dim(17.5, 0.1, 0.1), insert=Insert("solid", Dim(16.0, 0.1, 0.1), "M18x1.5"))
    result = check_fit(flat_plug(reach=Dim(19.0)), port, None, catalog)
    finding = the(result, "INSERT_SHORT")
    assert finding.severity == "warn"
    assert finding.values["distance"][0] == pytest.approx(1.7, abs=1e-9)


def test_every_result_with_an_insert_names_it_even_for_a_plug_that_cannot_be_fitted(catalog):
    port = flat_port(insert=Insert("coil", Dim(11.2)))
    for plug in (flat_plug(), conical_plug(), PlugSpec("M12x1.25", "flat")):
        result = check_fit(plug, port, None, catalog)
        assert the(result, "INSERT_FITTED")
        assert INSERT_CAUTION in result.cautions


def test_an_insert_without_its_length_is_named_and_its_reach_not_checked(catalog):
    result = check_fit(flat_plug(), flat_port(insert=Insert("coil")), None, catalog)
    assert the(result, "INSERT_FITTED")
    assert [f for f in findings(result, "NOT_CHECKED") if f.check == "insert"]


@settings(max_examples=200, deadline=None)
@given(depth=st.floats(5.0, 30.0), length=st.floats(5.0, 30.0), longer_by=st.floats(0.0, 10.0),
       tolerance=st.floats(0.0, 0.3))
def test_a_longer_insert_never_reduces_the_protrusion(catalog, depth, length, longer_by, tolerance):
    port_depth = Dim(depth, tolerance, tolerance)
    shorter = check_fit(flat_plug(), flat_port(port_depth=port_depth, insert=Insert("coil", Dim(length))), None,
                        catalog)
    longer = check_fit(flat_plug(), flat_port(port_depth=port_depth, insert=Insert("coil", Dim(length + longer_by))),
                       None, catalog)
    for side in ("insert_protrusion_short_side", "insert_protrusion_long_side"):
        for bound in ("nominal", "min", "max", "rss_min", "rss_max"):
            assert getattr(longer.geometry[side], bound) >= getattr(shorter.geometry[side], bound) - 1e-12
    rank = {None: 0, "warn": 1, "fail": 2}

    def proud(result):
        return max((rank[f.severity] for f in findings(result, "INSERT_PROUD")), default=0)

    assert proud(longer) >= proud(shorter)


# --- inserts: strength ---------------------------------------------------------------------

def test_the_coil_inserts_tapped_thread_is_the_nominal_plus_1_299_pitches():
    # from memory (the wire-insert standards were not re-read): major = d + 2 x 0.649519 P, the
    # 0.649519 P being ISO 68-1's depth from major to pitch diameter; M14x1.25: 14 + 1.623798 = 15.623798
    major, pitch, name = coil_outer_thread(14.0, 1.25)
    assert (major, pitch, name) == (pytest.approx(15.6237975, abs=1e-7), 1.25, "M15.624x1.25")


def test_in_an_aluminium_head_the_inserts_outer_thread_governs(catalog):
    """Hand-derived: a stainless coil (shear 0.6 x 515 = 309 MPa) against hot aluminium
    (162.5 x 0.6 = 97.5 MPa, strength.py): the outer thread is larger, but its material is
    about three times weaker, so it governs. It bears from the lead chamfer to the insert's
    end less one incomplete thread: 12.7 - 2 x 1.25 = 10.2 mm."""
    port = flat_port(port_depth=Dim(12.7), material="aluminium", insert=Insert("coil", Dim(12.7)))
    result = check_fit(flat_plug(reach=Dim(14.2)), port, Options(torque=25.0), catalog)
    strength = result.analysis["thread_strength"]
    assert strength["governing_interface"] == "insert_in_head"
    assert strength["insert_in_head_engaged_length"] == (pytest.approx(10.2), "length")
    assert strength["shear_strength"][0] == pytest.approx(207.0 * 179.0 / 228.0 * 0.6)
    assert strength["strip_strength"][0] == strength["insert_in_head_strip_strength"][0]
    assert strength["insert_in_head_strip_strength"][0] < strength["plug_in_insert_strip_strength"][0]


def test_a_plug_engages_an_insert_only_as_far_as_the_insert_goes(catalog):
    """Hand-derived (strength.engaged_length_mm: overlap less the lead chamfer and one
    incomplete thread, a pitch each, common practice): thread end 12.7 - 1.5 = 11.2 mm in an
    11.2 mm port engages 11.2 - 1.25 - 1.25 = 8.7 mm. An insert ending at 7.2 mm, 4 mm short of
    the thread end, takes those 4 mm off: 4.7 mm; its outer thread bears 7.2 - 2 x 1.25 = 4.7 mm
    in the head too."""
    plain = check_fit(flat_plug(), flat_port(material="cast_iron"), Options(torque=25.0), catalog)
    with_insert = check_fit(flat_plug(), flat_port(material="cast_iron", insert=Insert("coil", Dim(7.2))),
                            Options(torque=25.0), catalog)
    assert plain.analysis["thread_strength"]["engaged_length"][0] == pytest.approx(8.7)
    strength = with_insert.analysis["thread_strength"]
    assert strength["plug_in_insert_engaged_length"][0] == pytest.approx(4.7)
    assert strength["insert_in_head_engaged_length"][0] == pytest.approx(4.7)


def test_a_solid_insert_without_its_outer_thread_is_not_checked_for_strength(catalog):
    result = check_fit(flat_plug(), flat_port(insert=Insert("solid", Dim(11.2))), Options(torque=25.0), catalog)
    (skipped,) = [f for f in findings(result, "NOT_CHECKED") if f.check == "thread_strength"]
    assert "outer_thread" in skipped.message


# --- cautions ------------------------------------------------------------------------------

def test_an_aluminium_head_carries_the_work_cold_caution_and_a_cast_iron_one_does_not(catalog):
    assert ALUMINIUM_COLD_CAUTION in check_fit(flat_plug(), flat_port(material="aluminium"), None, catalog).cautions
    assert ALUMINIUM_COLD_CAUTION in check_fit(flat_plug(), flat_port(material=None), None, catalog).cautions
    assert ALUMINIUM_COLD_CAUTION not in check_fit(flat_plug(), flat_port(), None, catalog).cautions


# --- the schemas ---------------------------------------------------------------------------

HEAD = {"thread": "M14", "seat": "flat", "port_depth": 11.2}


@pytest.mark.parametrize(("document", "errors"), [
    ({**HEAD, "seat_angle": 60}, {"seat_angle": ["for a conical seat only: a flat seat has no taper"]}),
    ({**HEAD, "counterbore_diameter": 12}, {"counterbore_diameter": [("must be larger than the thread's 14 mm "
                                                                     "diameter")]}),
    ({**HEAD, "insert": {"kind": "coil", "outer_thread": "M16x1.5"}},
     {"insert": {"outer_thread": ["a coil insert's outer thread follows its tap: give it for a solid insert only"]}}),
    ({**HEAD, "insert": {"kind": "solid", "outer_thread": "M12x1.25"}},
     {"insert": {"outer_thread": ["must be larger than the port's thread, M14x1.25"]}}),
    ({**HEAD, "insert": {"length": 12}}, {"insert": {"kind": ["Missing data for required field."]}}),
])
def test_a_head_that_cannot_exist_names_the_field(document, errors):
    with pytest.raises(ValidationError) as raised:
        HeadInputSchema().load(document)
    assert raised.value.messages == errors


@pytest.mark.parametrize(("document", "field"), [
    ({"thread": "M14", "seat": "conical", "gasket_outside_diameter": 19}, "gasket_outside_diameter"),
    ({"thread": "M14", "seat": "flat", "seat_angle": 63}, "seat_angle"),
    ({"thread": "M14", "seat": "flat", "seat_diameter": 18}, "seat_diameter"),
    ({"thread": "M14", "seat": "flat", "gasket_outside_diameter": "0.5 in"}, "gasket_outside_diameter"),
])
def test_a_plug_that_cannot_exist_names_the_field(document, field):
    with pytest.raises(ValidationError) as raised:
        PlugInputSchema().load(document)
    assert field in raised.value.messages


def test_an_insert_is_read_with_units_and_aliases():
    loaded = HeadInputSchema().load({**HEAD, "insert": {"kind": "helical", "length": "0.5 in"},
                                     "spot_face_diameter": "0.75 in", "seat_angle": None})
    port = port_spec(loaded)
    # 0.5 in = 12.7 mm and 0.75 in = 19.05 mm exactly (NIST SP 811, 2008, appendix B)
    assert port.insert == Insert("coil", Dim(12.7))
    assert port.spot_face_diameter == pytest.approx(19.05)
