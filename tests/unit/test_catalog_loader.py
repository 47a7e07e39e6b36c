"""The seed catalogue: its numbers against their named sources, and the loader's strictness.

Sources (graded as in ../shared/product/reference-values.md (beside the repository)):
- NIST SP 811 (2008), appendix B: 1 in = 25.4 mm exactly (published); cross-checked
  against scipy.constants, a general-purpose library.
- Hex across corners = across flats / cos 30° (six-point) or / cos 15° (twelve-point),
  exact geometry.
- Thin-wall socket wall 2.0 mm: common practice, from memory.
- I.S. 34:1954: 14 mm plug reaches 0.500 and 0.750 in ± 0.010 in (published).
- Torque and turn angles: common torque guidance (common practice); the M10/M12 new-gasket
  angles from memory.

Catalogue rounding: the I.S. 34:1954 reaches are listed at their exact conversion (0.750 in
= 19.05 mm); the other inch reaches as the trade quotes them in millimetres, to 0.1 mm
(3/8 in = 9.525 mm is listed as 9.5), so they must lie within 0.05 mm of the exact value.
Socket outside diameters are listed to 0.001 mm.
"""
from __future__ import annotations

import csv
import json
import math
import pathlib
import re
import shutil

import pytest
import scipy.constants

from service.catalog_loader import (
    CATALOG_FILES,
    THIN_WALL_SOCKET_WALL_MM,
    catalog_as_document,
    default_catalog_directory,
    load_catalog,
)
from service.fitment.catalog import MATERIALS, SEATS
from service.fitment.model import GRADES

INCH_MM = 25.4  # NIST SP 811 (2008), appendix B: exact
TRADE_REACH_ROUNDING_MM = 0.05  # half of the 0.1 mm step the trade quotes reaches in
SOCKET_OD_ROUNDING_MM = 0.0005  # socket_od_mm is listed to 3 decimals


@pytest.fixture()
def seed_copy(tmp_path: pathlib.Path) -> pathlib.Path:
    """A private copy of the seed catalogue that a test may break."""
    target = tmp_path / "catalog"
    target.mkdir()
    for name in CATALOG_FILES:
        shutil.copy(default_catalog_directory() / name, target / name)
    return target


def _edit(path: pathlib.Path, old: str, new: str) -> None:
    text = path.read_text()
    assert old in text, f"fixture text {old!r} not found in {path.name}"
    path.write_text(text.replace(old, new, 1))


# --- the shipped data -------------------------------------------------------------------


def test_the_installed_seed_catalogue_is_found_without_a_path():
    catalog = load_catalog()
    assert {"M10x1", "M12x1.25", "M14x1.25", "M18x1.5"} <= set(catalog.threads)
    assert (default_catalog_directory() / "threads.csv").is_file()


@pytest.mark.parametrize("name", CATALOG_FILES)
def test_every_row_of_every_file_names_its_source(name):
    with open(default_catalog_directory() / name, newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert rows
    for row in rows:
        assert row["source"].strip(), row


def test_every_loaded_value_carries_a_source():
    catalog = load_catalog()
    records = [*catalog.threads.values(), *catalog.reaches, *catalog.hexes, *catalog.torques.values()]
    assert all(record.source.strip() for record in records)


@pytest.mark.parametrize("name", CATALOG_FILES)
def test_every_row_grades_its_source(name):
    # the grades of the shared reference values: published, derived, from memory, common practice
    with open(default_catalog_directory() / name, newline="") as handle:
        for row in csv.DictReader(handle):
            assert any(grade in row["source"] for grade in GRADES), row


def test_the_torque_rows_say_common_torque_guidance_not_a_table_of_the_trade():
    for guide in load_catalog().torques.values():
        assert "common torque guidance" in guide.source
        assert "torque table" not in guide.source


def test_every_plug_thread_is_the_looser_class_6e_where_unsure():
    # reference-values.md: plug shells are 6e (from memory); where unsure take the looser class
    catalog = load_catalog()
    assert {size.plug_thread_class for size in catalog.threads.values()} == {"6e"}
    assert all("6e" in size.source for size in catalog.threads.values())


def test_the_spark_plug_threads_have_their_iso_pitches_and_seats():
    # ISO 261 fine series (from memory); seats: common practice / ISO 28741 preview
    catalog = load_catalog()
    assert catalog.thread("M14x1.25").pitch_mm == 1.25
    assert catalog.thread("M18x1.5").pitch_mm == 1.5
    assert catalog.thread("M14x1.25").seats == frozenset({"flat", "conical"})
    assert catalog.thread("M12x1.25").seats == frozenset({"flat"})
    assert catalog.thread_for_diameter(14.0).designation == "M14x1.25"


def test_standard_gaskets_lie_in_the_common_practice_range_and_only_on_flat_seats():
    # Installed (crushed) gasket 1.0–1.5 mm: common practice
    for size in load_catalog().threads.values():
        if "flat" in size.seats:
            assert 1.0 <= size.standard_gasket_mm <= 1.5
        else:
            assert size.standard_gasket_mm is None


def test_nist_sp_811_inch_agrees_with_scipy_constants():
    # NIST SP 811 (2008), appendix B: 1 in = 0.0254 m exactly; scipy.constants.inch
    assert scipy.constants.inch == pytest.approx(INCH_MM / 1000.0, rel=0, abs=1e-15)


@pytest.mark.parametrize(("label", "exact_mm"), [("5/8 in", 15.875), ("13/16 in", 20.6375), ("7/8 in", 22.225)])
def test_inch_hexes_equal_their_exact_nist_millimetres(label, exact_mm):
    # NIST SP 811 (2008), appendix B: 5/8 in = 15.875 mm, 13/16 in = 20.6375 mm exactly
    hexes = {h.label: h for h in load_catalog().hexes}
    assert hexes[label].across_flats_mm == exact_mm
    numerator, denominator = (int(part) for part in label.removesuffix(" in").split("/"))
    assert math.isclose(numerator / denominator * INCH_MM, exact_mm, rel_tol=0, abs_tol=1e-12)


def test_every_socket_od_is_across_corners_of_its_form_plus_two_thin_walls():
    # across corners = AF / cos 30° six-point, AF / cos 15° twelve-point (exact geometry);
    # wall 2.0 mm (common practice, from memory)
    assert THIN_WALL_SOCKET_WALL_MM == 2.0
    for size in load_catalog().hexes:
        corner_half_angle = {"six-point": 30, "twelve-point": 15}[size.form]
        expected = size.across_flats_mm / math.cos(math.radians(corner_half_angle)) + 2 * 2.0
        assert abs(size.socket_od_mm - expected) <= SOCKET_OD_ROUNDING_MM, size


def test_a_14_mm_hex_is_twelve_point_and_its_socket_is_about_18_5_mm_not_20_2():
    # exact geometry: a twelve-point's corners lie at AF / cos 15° = 1.0353 × AF (14.494 mm),
    # a hexagon's at AF / cos 30° = 1.1547 × AF (16.166 mm); + 2 × 2.0 mm wall
    size = load_catalog().hex_size(14.0)
    assert size.form == "twelve-point"
    assert 1 / math.cos(math.radians(15)) == pytest.approx(1.0353, abs=5e-5)
    assert size.socket_od_mm == pytest.approx(14.0 / math.cos(math.radians(15)) + 4.0, abs=SOCKET_OD_ROUNDING_MM)
    assert size.socket_od_mm == pytest.approx(18.494, abs=SOCKET_OD_ROUNDING_MM)
    assert 14.0 / math.cos(math.radians(30)) + 4.0 == pytest.approx(20.166, abs=SOCKET_OD_ROUNDING_MM)


def test_the_13_16_in_socket_is_27_830_mm_across():
    # 13/16 in = 20.6375 mm (NIST SP 811); / cos 30° = 23.830 mm (exact geometry) + 4.0 mm wall
    size = load_catalog().hex_size(20.6375)
    assert size.form == "six-point" and size.label == "13/16 in"
    assert size.socket_od_mm == pytest.approx(27.830, abs=SOCKET_OD_ROUNDING_MM)


def test_a_16_mm_socket_is_22_475_mm_across():
    # 16 / cos 30° = 18.475 mm (exact geometry) + 2 × 2.0 mm wall (common practice, from memory)
    assert load_catalog().hex_size(16.0).socket_od_mm == 22.475


@pytest.mark.parametrize(("metric", "inch"), [(16.0, 15.875), (20.8, 20.6375)])
def test_the_metric_and_inch_hexes_of_one_trade_size_share_a_family(metric, inch):
    # common practice: 16 mm ~ 5/8 in and 20.8 mm ~ 13/16 in are one hex family each
    catalog = load_catalog()
    assert catalog.hex_size(metric).family == catalog.hex_size(inch).family
    assert catalog.hex_size(metric).across_flats_mm == metric
    assert catalog.hex_size(inch).across_flats_mm == inch
    assert catalog.hex_size(14.0).family != catalog.hex_size(16.0).family


@pytest.mark.parametrize(("label", "inches"), [("3/8 in", 3 / 8), ("1/2 in", 1 / 2), ("3/4 in", 3 / 4)])
def test_the_inch_reaches_equal_their_millimetre_values_within_the_trade_rounding(label, inches):
    # NIST SP 811: 3/8 in = 9.525 mm, 1/2 in = 12.7 mm, 3/4 in = 19.05 mm exactly
    flat_m14 = {r.label: r for r in load_catalog().reaches if r.thread == "M14x1.25" and r.seat == "flat"}
    assert abs(flat_m14[label].reach_mm - inches * INCH_MM) <= TRADE_REACH_ROUNDING_MM + 1e-12


def test_the_14_mm_reaches_from_is_34_carry_its_ten_thou_tolerance():
    # I.S. 34:1954: 0.500 and 0.750 in, each ± 0.010 in = ± 0.254 mm (NIST SP 811)
    flat_m14 = {r.label: r for r in load_catalog().reaches if r.thread == "M14x1.25" and r.seat == "flat"}
    for label in ("1/2 in", "3/4 in"):
        assert flat_m14[label].tolerance_mm == pytest.approx(0.010 * INCH_MM)
        assert "I.S. 34:1954" in flat_m14[label].source and "published" in flat_m14[label].source
    # listed at the standard's exact value, 0.750 in = 19.05 mm (NIST SP 811), not the trade's 19.0
    assert flat_m14["3/4 in"].reach_mm == 19.05
    assert flat_m14["3/8 in"].tolerance_mm is None  # common practice gives no tolerance


def test_the_m14_conical_reaches_are_0_460_and_0_708_in():
    # common practice: about 11.7 mm (0.460 in) and 18 mm (0.708 in)
    conical = sorted(r.reach_mm for r in load_catalog().reaches if r.thread == "M14x1.25" and r.seat == "conical")
    assert conical == [11.7, 18.0]
    assert abs(0.460 * INCH_MM - 11.7) <= TRADE_REACH_ROUNDING_MM
    assert abs(0.708 * INCH_MM - 18.0) <= TRADE_REACH_ROUNDING_MM


def test_torque_guidance_matches_the_common_practice_table():
    # common practice (reference-values.md), N·m: flat M14 25–35 cast iron / 25–30 aluminium;
    # conical M14 15–25 / 10–20; turn after finger-tight: new gasket 1/2 turn, conical 1/16 turn
    catalog = load_catalog()
    flat_iron = catalog.torque_for("M14x1.25", "flat", "cast_iron")
    flat_alu = catalog.torque_for("M14x1.25", "flat", "aluminium")
    conical_alu = catalog.torque_for("M14x1.25", "conical", "aluminium")
    assert (flat_iron.min_nm, flat_iron.max_nm) == (25.0, 35.0)
    assert (flat_alu.min_nm, flat_alu.max_nm) == (25.0, 30.0)
    assert (conical_alu.min_nm, conical_alu.max_nm) == (10.0, 20.0)
    assert flat_alu.turn_angle_deg == 180.0 and flat_alu.reused_gasket_turn_angle_deg == 30.0
    assert conical_alu.turn_angle_deg == 22.5 and conical_alu.reused_gasket_turn_angle_deg is None
    assert catalog.torque_for("M8x1", "flat", "aluminium") is None  # the guidance gives none


@pytest.mark.parametrize(("thread", "new_gasket_deg", "grade"), [
    ("M18x1.5", 180.0, "common practice"), ("M14x1.25", 180.0, "common practice"),  # 1/2 turn
    ("M12x1.25", 120.0, "from memory"), ("M10x1", 90.0, "from memory"),  # about 1/4-1/3 turn, unsure
    ("M8x1", None, "common practice")])  # no source gives an angle for M8
def test_turn_angles_are_graded_per_size_with_the_reused_gasket_beside(thread, new_gasket_deg, grade):
    # reference-values.md: new flat gasket about 1/2 turn on M14/M18, about 1/4-1/3 turn on
    # M10/M12 (from memory, unsure); re-used gasket about 1/12 turn (30°), common practice
    guide = load_catalog().torque_for(thread, "flat", "cast_iron")
    assert guide.turn_angle_deg == new_gasket_deg
    assert guide.reused_gasket_turn_angle_deg == (None if new_gasket_deg is None else 30.0)
    assert grade in guide.source
    if new_gasket_deg is not None:
        assert "with a new gasket" in guide.source and "with a re-used gasket" in guide.source


def test_torque_ranges_are_kept_as_their_source_states_them():
    # common torque guidance (reference-values.md) is given in N·m, to whole units
    for guide in load_catalog().torques.values():
        assert guide.stated.unit == "N*m" and guide.stated.resolution == 1.0
        assert (guide.stated.min, guide.stated.max) == (guide.min_nm, guide.max_nm)


def test_a_range_stated_in_foot_pounds_is_converted_by_nist_sp_811(seed_copy):
    # NIST SP 811 (2008), appendix B: 1 lbf·ft = 1.355 818 N·m
    _edit(seed_copy / "torques.csv", "M14x1.25,flat,aluminium,25,30,N*m", "M14x1.25,flat,aluminium,18.5,22,lbf*ft")
    guide = load_catalog(seed_copy).torque_for("M14x1.25", "flat", "aluminium")
    assert guide.stated.unit == "lbf*ft" and guide.stated.resolution == pytest.approx(0.1)
    assert guide.min_nm == pytest.approx(18.5 * 1.355818, abs=1e-5)
    assert guide.max_nm == pytest.approx(22 * 1.355818, abs=1e-5)
    assert guide.stated.newton_metres_per_unit == pytest.approx(
        scipy.constants.pound_force * scipy.constants.foot, rel=1e-12)


# --- version and cache ------------------------------------------------------------------


def test_the_version_is_stable_across_loads_and_locations(seed_copy, tmp_path):
    other = tmp_path / "elsewhere"
    shutil.copytree(seed_copy, other)
    first, second = load_catalog(seed_copy), load_catalog(seed_copy)
    assert first is second  # cached per directory
    assert load_catalog(other).version == first.version == load_catalog().version
    assert len(first.version) == 12 and int(first.version, 16) >= 0


def test_the_version_changes_when_a_file_changes(seed_copy):
    before = load_catalog(seed_copy)
    _edit(seed_copy / "torques.csv", "M14x1.25,flat,aluminium,25,30", "M14x1.25,flat,aluminium,25,31")
    after = load_catalog(seed_copy)
    assert after.version != before.version
    assert after.torque_for("M14x1.25", "flat", "aluminium").max_nm == 31.0


# --- strictness ---------------------------------------------------------------------------

BAD_EDITS = [
    # (file, start of the row to break, text in that row, replacement, column named)
    ("threads.csv", "M10x1,", re.compile(r'"[^"]*"$'), '""', "source"),
    ("threads.csv", "M10x1,", "M10x1,10,1,flat,1.0", "M10x1,10,1,flat,1.O", "standard_gasket_mm"),
    ("threads.csv", "M10x1,", ",flat,", ",flat;dome,", "seats"),
    ("threads.csv", "M10x1,", "M10x1,10,1,", "M10x1,10,1.25,", "designation"),
    ("threads.csv", "M12x1.25,", ",flat,1.0", ",conical,1.0", "standard_gasket_mm"),
    ("reaches.csv", "M14x1.25,flat,26.5,", ",26.5,", ",nan,", "reach_mm"),
    ("reaches.csv", "M14x1.25,flat,26.5,", ",flat,", ",taper,", "seat"),
    ("reaches.csv", "M12x1.25,flat,26.5,", ",flat,", ",conical,", "seat"),
    ("reaches.csv", "M12x1.25,flat,26.5,", ",26.5,", ",19.0,", "reach_mm"),  # duplicate
    ("reaches.csv", "M10x1,flat,12.7,", "M10x1,", "M11x1,", "thread"),
    ("threads.csv", "M10x1,", ",6e,", ",6x,", "plug_thread_class"),
    ("threads.csv", "M10x1,", re.compile(r'"[^"]*"$'), '"trade knowledge"', "source"),  # no grade
    ("hexes.csv", "18,", ",24.785,", ",19.5,", "socket_od_mm"),
    ("hexes.csv", "14,", ",18.494,", ",14.4,", "socket_od_mm"),  # inside a twelve-point's corners
    ("hexes.csv", "16,", "16,", "15.875,", "across_flats_mm"),  # duplicate
    ("hexes.csv", "16,", ",six-point,", ",eight-point,", "form"),
    ("torques.csv", "M10x1,flat,aluminium,", "aluminium", "magnesium", "material"),
    ("torques.csv", "M10x1,flat,aluminium,", "aluminium", "cast_iron", "material"),  # duplicate
    ("torques.csv", "M10x1,flat,aluminium,", ",10,12,", ",12,10,", "max"),
    ("torques.csv", "M10x1,flat,aluminium,", ",10,12,", ",-10,12,", "min"),
    ("torques.csv", "M10x1,flat,aluminium,", ",N*m,", ",kgf*m,", "unit"),
    ("torques.csv", "M14x1.25,conical,aluminium,", ",22.5,,", ",22.5,30,", "reused_gasket_turn_angle_deg"),
]


@pytest.mark.parametrize(("name", "row_start", "old", "new", "column"), BAD_EDITS)
def test_a_bad_row_stops_the_load_naming_file_line_and_column(seed_copy, name, row_start, old, new, column):
    path = seed_copy / name
    lines = path.read_text().splitlines()
    index = next(i for i, text in enumerate(lines) if text.startswith(row_start))
    if isinstance(old, re.Pattern):
        lines[index], count = old.subn(new, lines[index])
    else:
        count = lines[index].count(old)
        lines[index] = lines[index].replace(old, new, 1)
    assert count >= 1, f"fixture text {old!r} not in line {index + 1} of {name}"
    path.write_text("\n".join(lines) + "\n")
    with pytest.raises(ValueError) as caught:
        load_catalog(seed_copy)
    assert f"{name}: line {index + 1}, column {column!r}" in str(caught.value)


def test_a_wrong_header_is_named_on_line_one(seed_copy):
    _edit(seed_copy / "hexes.csv", "across_flats_mm,family", "across_flats,family")
    with pytest.raises(ValueError, match=r"hexes\.csv: line 1, column 'across_flats_mm'"):
        load_catalog(seed_copy)


def test_a_short_row_names_the_first_missing_column(seed_copy):
    path = seed_copy / "reaches.csv"
    path.write_text(path.read_text() + "M14x1.25,flat,12.7\n")
    line = len(path.read_text().splitlines())
    with pytest.raises(ValueError, match=rf"reaches\.csv: line {line}, column 'tolerance_mm'"):
        load_catalog(seed_copy)


def test_a_missing_file_is_named(seed_copy):
    (seed_copy / "torques.csv").unlink()
    with pytest.raises(ValueError, match=r"torques\.csv"):
        load_catalog(seed_copy)


# --- the JSON document --------------------------------------------------------------------


def test_the_document_is_json_with_sources_and_the_torque_caution():
    document = json.loads(json.dumps(catalog_as_document(load_catalog())))
    assert document["catalog_version"] == load_catalog().version
    m14 = next(t for t in document["threads"] if t["designation"] == "M14x1.25")
    # ISO 724 (from memory, reference-values.md): d2 = 13.188, d1 = 12.647 for M14x1.25
    assert m14["basic_diameters"]["pitch_diameter_mm"] == 13.188
    assert m14["basic_diameters"]["minor_diameter_mm"] == 12.647
    # ISO 965-1 (derived, reference-values.md): 6H D2 13.188 / 13.368
    assert m14["limits_6g_6H"]["internal_pitch_mm"] == [13.188, 13.368]
    assert {r["label"] for r in m14["reaches"]} >= {"3/8 in", "1/2 in", "3/4 in", "26.5 mm"}
    families = {f["family"]: set(f["members"]) for f in document["hex_families"]}
    assert families["16 mm / 5/8 in"] == {"16 mm", "5/8 in"}
    assert all(entry["source"] for entry in document["hexes"] + document["torque"] + document["threads"])
    # the plug's class 6e: es = -63 µm for P = 1.25 (ISO 965-1), d 13.725 / 13.937 (derived)
    assert m14["plug_thread_class"] == "6e"
    assert m14["plug_thread_limits"]["external_major_mm"] == [13.725, 13.937]
    assert {h["label"]: h["form"] for h in document["hexes"]}["14 mm"] == "twelve-point"
    flat_alu = next(t for t in document["torque"] if (t["thread"], t["seat"], t["material"])
                    == ("M14x1.25", "flat", "aluminium"))
    assert flat_alu["as_stated"] == {"min": 25.0, "max": 30.0, "unit": "N*m"}
    assert flat_alu["turn_angle_note"] == "after finger-tight, with a new gasket"
    assert flat_alu["reused_gasket_turn_angle_deg"] == 30.0
    assert all(t["seat"] in SEATS and t["material"] in MATERIALS for t in document["torque"])
    assert any("service data" in c and "regulations" in c and "licensed practice" in c
               for c in document["cautions"])
