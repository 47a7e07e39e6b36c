"""Reading build lists: the CSV columns, units in headers and cells, tolerances, waivers,
and whole-file problems that name the line and the column."""
from __future__ import annotations

import json

import pytest

from service.formats.build_list import (
    BuildListError,
    NotJson,
    TooManyItems,
    decode,
    errors_by_column,
    field_specs,
    item_from_cells,
    read_build_list,
    read_csv,
    read_json_text,
)

HEADER = "ref,plug_thread,plug_seat,plug_reach_mm,head_thread,head_seat,head_port_depth_mm\n"


def only(text: str) -> dict:
    items = read_csv(text)
    assert len(items) == 1
    return items[0].data


def test_a_csv_line_becomes_an_item_shaped_like_the_json_one():
    data = only(HEADER + "front,M14x1.25,flat,19,M14,flat,17.5\n")
    assert data["ref"] == "front"
    assert data["plug"] == {"thread": "M14x1.25", "seat": "flat", "reach": 19.0}
    assert data["head"] == {"thread": "M14", "seat": "flat", "port_depth": 17.5}


def test_a_unit_in_the_header_applies_to_every_cell_of_the_column():
    data = only("plug_thread,plug_seat,plug_reach_in,head_thread,head_seat,torque_lbf_ft\n"
                "M14,flat,0.75,M14,flat,20\n")
    # 0.75 in x 25.4 mm/in (NIST SP 811, 2008, B.8) = 19.05 mm, scaled once per column.
    assert data["plug"]["reach"] == pytest.approx(19.05)
    # 1 lbf·ft = 1.355 818 N·m (NIST SP 811, 2008, B.8): the factor is applied once per column.
    assert data["options"]["torque"] == pytest.approx(20 * 1.3558179483314003)


def test_a_cell_may_carry_its_own_unit_when_the_header_has_none():
    data = only("plug_thread,plug_seat,plug_reach,head_thread,head_seat,torque\nM14,flat,0.75 in,M14,flat,20 ft-lb\n")
    assert data["plug"]["reach"] == "0.75 in"
    assert data["options"]["torque"] == "20 ft-lb"


def test_a_length_cell_may_carry_a_symmetric_or_an_uneven_tolerance():
    data = only("plug_thread,plug_seat,plug_reach,head_thread,head_seat,head_port_depth_mm\n"
                "M14,flat,0.75 in ± 0.005,M14,flat,17.5 +0.1/-0.3\n")
    assert data["plug"]["reach"] == {"value": 0.75, "unit": "in", "tol": 0.005}
    assert data["head"]["port_depth"] == {"value": 17.5, "unit": "mm", "plus": 0.1, "minus": 0.3}
    written_plainly = only("plug_thread,plug_seat,plug_reach,head_thread,head_seat\nM14,flat,19 +/- 0.2,M14,flat\n")
    assert written_plainly["plug"]["reach"] == {"value": 19.0, "unit": "mm", "tol": 0.2}


def test_a_cell_with_a_unit_under_a_header_with_a_unit_makes_only_that_line_invalid():
    items = read_csv(HEADER + "a,M14,flat,0.75 in,M14,flat,17.5\nb,M14,flat,19,M14,flat,17.5\n")
    assert items[0].cell_errors == {"plug_reach_mm": ["the column is in mm (see its header): write a plain number"]}
    assert items[1].cell_errors == {}


def test_nested_members_and_options_have_their_own_columns():
    data = only("plug_thread,plug_seat,plug_heat_range_scale,plug_heat_range_value,head_thread,head_seat,"
                "head_boot_range_min_mm,head_boot_range_max_mm,require,stack\n"
                "M14,flat,shop-scale,0.6,M14,flat,60,70,\"piston, valve\",rss\n")
    assert data["plug"]["heat_range"] == {"scale": "shop-scale", "value": "0.6"}
    assert data["head"]["boot_range"] == {"min": 60.0, "max": 70.0}
    assert data["options"] == {"require": ["piston", "valve"], "stack": "rss"}


def test_references_go_by_sku_and_head_id_and_a_note_column_is_ignored():
    data = only("ref,note,sku,head_id\nx,\"customer's van, rear bank\",DEMO-1,DEMO-HEAD\n")
    assert data == {"ref": "x", "plug": {"sku": "DEMO-1"}, "head": {"head_id": "DEMO-HEAD"}}


def test_the_ref_defaults_to_the_line_the_row_starts_on():
    text = ("plug_thread,plug_seat,head_thread,head_seat,note\n"
            "M14,flat,M14,flat,one\n"
            "\n"
            "M14,flat,M14,flat,\"two\nlines\"\n"
            "M14,flat,M14,flat,three\n")
    items = read_csv(text)
    assert [item.line for item in items] == [2, 4, 6]
    assert [item.data["ref"] for item in items] == ["2", "4", "6"]


def test_a_waive_cell_names_codes_and_a_reason_and_several_waivers_are_joined_by_a_bar():
    data = only("plug_thread,plug_seat,head_thread,head_seat,waive\n"
                "M14,flat,M14,flat,\"REACH_LONG, HEX_DIFFERS: relieved piston | TORQUE_OUT_OF_RANGE: stud kit\"\n")
    assert data["waive"] == [{"codes": ["REACH_LONG", "HEX_DIFFERS"], "reason": "relieved piston"},
                             {"codes": ["TORQUE_OUT_OF_RANGE"], "reason": "stud kit"}]
    without_reason = only("plug_thread,plug_seat,head_thread,head_seat,waive\nM14,flat,M14,flat,REACH_LONG\n")
    assert without_reason["waive"] == [{"codes": ["REACH_LONG"], "reason": ""}]


def refused(text: str) -> BuildListError:
    with pytest.raises(BuildListError) as caught:
        read_csv(text)
    return caught.value


def test_an_unknown_column_is_refused_naming_line_1_the_column_and_a_likely_meaning():
    error = refused("ref,plug_thread,plug_seat,plug_rech_mm,head_thread,head_seat\n1,M14,flat,19,M14,flat\n")
    assert str(error).startswith("line 1, column 'plug_rech_mm': unknown column; did you mean")
    assert "plug_reach" in str(error)
    assert error.errors() == {"line 1": {"plug_rech_mm": [error.problems[0].message]}}


def test_a_header_unit_that_is_not_a_unit_of_the_quantity_is_refused():
    error = refused("plug_thread,plug_seat,plug_reach_kg,head_thread,head_seat\nM14,flat,19,M14,flat\n")
    assert str(error) == "line 1, column 'plug_reach_kg': 'kg' is not a unit of length"


def test_a_unit_on_a_column_that_is_not_a_quantity_is_refused():
    error = refused("plug_thread_mm,plug_seat,head_thread,head_seat\nM14,flat,M14,flat\n")
    assert "plug_thread is not a quantity" in str(error)


def test_two_columns_filling_one_field_are_refused():
    error = refused("plug_thread,plug_seat,plug_reach_mm,plug_reach_in,head_thread,head_seat\n"
                    "M14,flat,19,0.75,M14,flat\n")
    assert str(error) == "line 1, column 'plug_reach_in': fills the same field as column 'plug_reach_mm'"


def test_a_row_with_more_or_fewer_cells_than_the_header_is_refused_naming_its_line():
    error = refused("plug_thread,plug_seat,head_thread,head_seat\nM14,flat,M14,flat\nM14,flat,M14\n"
                    "M14,flat,M14,flat,extra\n")
    assert [(p.line, p.column) for p in error.problems] == [(3, "head_seat"), (4, "5")]
    assert "expected 4 cells as in the header, found 3" in error.problems[0].message


@pytest.mark.parametrize("text, message", [
    ("", "the file is empty"),
    ("plug_thread,plug_seat,head_thread,head_seat\n", "no lines to check"),
    ("plug_thread;plug_seat;head_thread;head_seat\nM14;flat;M14;flat\n", "not semicolons"),
    ("ref,note\n1,x\n", "no plug or head columns"),
    ("plug_thread,plug_seat\n\"M14,flat\n", "cannot read the row"),
])
def test_a_file_that_cannot_be_a_build_list_is_refused_with_a_reason(text, message):
    assert message in str(refused(text))


def test_bytes_that_are_not_utf8_are_refused_naming_the_line():
    with pytest.raises(BuildListError) as caught:
        decode(b"plug_thread\nM14\n" + b"\xff\xfe")
    assert caught.value.problems[0].line == 3


def test_a_byte_order_mark_is_not_part_of_the_first_column_name():
    data = only(decode("\ufeffplug_thread,plug_seat,head_thread,head_seat\nM14,flat,M14,flat\n".encode("utf-8")))
    assert data["plug"]["thread"] == "M14"


def test_a_csv_list_past_the_limit_stops_reading_at_the_limit():
    text = "plug_thread,plug_seat,head_thread,head_seat\n" + "M14,flat,M14,flat\n" * 4
    assert len(read_csv(text, max_items=4)) == 4
    with pytest.raises(TooManyItems) as caught:
        read_csv(text, max_items=3)
    assert caught.value.limit == 3


def test_a_json_list_keeps_its_items_raw_and_numbers_them_from_1():
    items = read_json_text(json.dumps({"items": [{"plug": {}, "head": {}}, "not an object"]}))
    assert [(item.position, item.default_ref, item.line) for item in items] == [(1, "1", None), (2, "2", None)]
    assert items[1].data == "not an object"


def test_json_that_does_not_parse_is_refused_naming_line_and_column():
    with pytest.raises(NotJson) as caught:
        read_json_text('{"items": [\n  {"plug": }\n]}')
    assert str(caught.value) == "line 2, column 12: not valid JSON: Expecting value"


@pytest.mark.parametrize("document, message", [
    ({"items": []}, "no lines to check"),
    ({"items": 3}, "Not a valid list."),
    ({"rows": []}, "Unknown field."),
    ([1, 2], '{"items": [...]}'),
])
def test_a_json_document_without_a_list_of_items_is_refused(document, message):
    with pytest.raises(BuildListError) as caught:
        read_json_text(json.dumps(document))
    assert message in str(caught.value)


def test_json_or_csv_is_told_apart_by_the_first_character():
    assert read_build_list('  {"items": [{"plug": {}, "head": {}}]}')[0].line is None
    assert read_build_list("plug_thread,plug_seat,head_thread,head_seat\nM14,flat,M14,flat\n")[0].line == 2


def test_every_schema_field_has_a_column_and_references_keep_their_own_names():
    columns = field_specs()
    for name in ("sku", "head_id", "plug_reach", "plug_gasket_thickness", "plug_heat_range_scale", "head_port_depth",
                 "head_port_depth_long_side", "head_boot_range_min", "head_intake_temperature", "torque",
                 "min_clearance", "require", "stack"):
        assert name in columns, name
    assert "plug_sku" not in columns and "head_head_id" not in columns


def test_field_errors_are_reported_under_the_columns_the_user_wrote():
    columns = {("plug", "reach"): "plug_reach_in", ("waive",): "waive"}
    errors = {"plug": {"reach": ["not a length"], "thread": ["required (or give sku)"]},
              "waive": {0: {"reason": ["a waiver needs a written reason"]}}, "head": {"head_id": ["no head"]}}
    assert errors_by_column(errors, columns) == {"plug_reach_in": ["not a length"],
                                                 "plug_thread": ["required (or give sku)"],
                                                 "waive": ["a waiver needs a written reason"],
                                                 "head_id": ["no head"]}


def test_cells_given_as_options_are_read_exactly_like_a_csv_line():
    item = item_from_cells({"plug_thread": "M14", "plug_seat": "flat", "plug_reach": "19 ± 0.2",
                            "head_id": "DEMO-HEAD"})
    assert item.data == {"plug": {"thread": "M14", "seat": "flat", "reach": {"value": 19.0, "unit": "mm", "tol": 0.2}},
                         "head": {"head_id": "DEMO-HEAD"}}
    assert item.line is None and item.default_ref == "1"


def test_comment_lines_before_the_header_are_skipped_and_lines_keep_their_numbers():
    text = "# DEMO DATA: invented\n\n# another comment\nplug_thread,plug_seat,head_thread,head_seat,plug_reach_zz\n"
    error = refused(text + "M14,flat,M14,flat,1\n")
    assert (error.problems[0].line, error.problems[0].column) == (4, "plug_reach_zz")
    items = read_csv(text.replace(",plug_reach_zz", "") + "M14,flat,M14,flat\n")
    assert items[0].line == 5


def test_lines_that_repeat_the_same_plug_cells_share_one_plug_document_and_each_keeps_its_own_errors():
    items = read_csv(HEADER + "a,M14,flat,19,M14,flat,17.5\nb,M14,flat,19,M14,flat,12\n"
                     "c,M14,flat,19 in,M14,flat,17.5\nd,M14,flat,19 in,M14,flat,17.5\n")
    assert items[0].data["plug"] is items[1].data["plug"]
    assert items[0].data["head"] is not items[1].data["head"]
    assert items[0].data["head"] is items[2].data["head"]
    assert items[2].cell_errors == items[3].cell_errors == {
        "plug_reach_mm": ["the column is in mm (see its header): write a plain number"]}
    assert items[2].cell_errors is not items[3].cell_errors
