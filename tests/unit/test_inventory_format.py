"""The inventory exchange format (service.formats.stock_file): columns, reading, writing. No I/O."""
from __future__ import annotations

import io

import pytest

from service.fitment.model import Dim
from service.formats import stock_file

PLUGS = stock_file.plug_format()
HEADS = stock_file.head_format()


def load_csv(text: str, fmt=PLUGS) -> stock_file.Validated:
    return stock_file.validate(stock_file.read_csv(text, fmt), fmt, csv_columns=True)


def test_every_length_gets_a_value_column_and_two_tolerance_columns_beside_it():
    header = PLUGS.header
    for stem in ("reach", "gasket_thickness", "firing_end", "terminal_height"):
        at = header.index(f"{stem}_mm")
        assert header[at + 1:at + 3] == (f"{stem}_plus_mm", f"{stem}_minus_mm")
    assert header[0] == "sku" and header[-2:] == ("quantity_on_hand", "location")


def test_head_columns_name_their_units_so_a_number_is_never_ambiguous():
    header = HEADS.header
    for name in ("intake_pressure_bar", "intake_temperature_k", "peak_pressure_bar", "ignition_voltage_kv",
                 "spark_advance_deg", "well_bore_mm", "boot_range_min_mm", "heat_range_band_scale",
                 "max_rpm", "rod_material", "reciprocating_mass_g", "rod_section_area_mm2"):
        assert name in header
    assert "max_rpm_rpm" not in header  # a name that ends in its unit keeps it once


def test_a_heads_running_data_round_trips_through_the_exchange_file():
    text = ("head_id,thread,seat,stroke_mm,rod_length_mm,max_rpm,rod_material,reciprocating_mass_g,"
            "rod_section_area_mm2\n"
            "H-1,M14x1.25,flat,86,145,7000,steel,600.5,150\n")
    first = stock_file.validate(stock_file.read_csv(text, HEADS), HEADS, csv_columns=True)
    assert first.ok, first.errors
    document = first.documents[0][1]
    assert (document["max_rpm"], document["rod_material"], document["reciprocating_mass"],
            document["rod_section_area"]) == (7000.0, "steel", 600.5, 150.0)
    out = io.StringIO()
    stock_file.write_csv([document], HEADS, out)
    again = stock_file.validate(stock_file.read_csv(out.getvalue(), HEADS), HEADS, csv_columns=True)
    assert [d for _l, d in again.documents] == [document]


def test_a_row_loads_through_the_schema_with_its_tolerances_and_stock():
    outcome = load_csv("sku,thread,seat,reach_mm,reach_plus_mm,reach_minus_mm,hex_mm,resistor,quantity_on_hand,location\n"
                       "A-1,M14,gasket,19,0.1,0.3,16,yes,7,B3\n")
    assert outcome.ok, outcome.errors
    (line, document), = outcome.documents
    assert line == 2
    assert document["thread"] == "M14x1.25" and document["seat"] == "flat"  # contract aliases
    assert document["reach"] == Dim(19.0, 0.1, 0.3)
    assert document["resistor"] is True and document["quantity_on_hand"] == 7 and document["location"] == "B3"


def test_an_empty_cell_is_an_absent_value_not_zero():
    outcome = load_csv("sku,thread,seat,reach_mm,firing_end_mm,quantity_on_hand\nA-1,M14x1.25,flat,19,,\n")
    (_line, document), = outcome.documents
    assert "firing_end" not in document
    assert document["quantity_on_hand"] == 0  # the schema's documented default, not a parsed zero


def test_a_value_cell_may_carry_its_unit():
    # 0.75 in = 19.05 mm exactly (NIST SP 811, 2008, appendix B)
    outcome = load_csv("sku,thread,seat,reach_mm,reach_plus_mm\nA-1,M14x1.25,flat,0.75 in,0.1\n")
    (_line, document), = outcome.documents
    assert document["reach"].nominal == pytest.approx(19.05, abs=1e-9)
    assert document["reach"].plus == 0.1 and document["reach"].minus == 0.0


def test_a_temperature_in_kelvin_reads_back_as_the_same_kelvin():
    outcome = load_csv("head_id,thread,seat,intake_temperature_k\nH-1,M14x1.25,flat,308.15\n", HEADS)
    (_line, document), = outcome.documents
    assert document["intake_temperature"] == 308.15


def test_every_bad_row_is_reported_by_line_and_column_and_good_rows_do_not_hide_them():
    text = ("# a comment before the header\n"
            "sku,thread,seat,reach_mm,reach_plus_mm,hex_mm\n"
            "A-1,M14x1.25,flat,19,,16\n"
            "A-2,M14x1.25,flat,99,,16\n"     # line 4: reach beyond 60 mm
            "A-3,M13x1.25,flat,19,,16\n"     # line 5: not a spark-plug thread
            "A-4,M14x1.25,flat,19,-0.2,16\n"  # line 6: a negative tolerance
            "A-1,M14x1.25,flat,19,,16\n")    # line 7: the sku again
    outcome = load_csv(text)
    assert outcome.bad_rows == 4
    assert set(outcome.errors) == {"4", "5", "6", "7"}
    assert "reach_mm" in outcome.errors["4"]
    assert "thread" in outcome.errors["5"]
    assert "reach_mm" in outcome.errors["6"]
    assert outcome.errors["7"] == {"sku": ["'A-1' appears again (first on line 3)"]}


def test_a_nested_member_error_names_its_own_column():
    outcome = load_csv("sku,thread,seat,heat_range_scale\nA-1,M14x1.25,flat,shop\n")
    assert outcome.errors == {"2": {"heat_range_value": ["Missing data for required field."]}}


def test_an_unknown_or_repeated_column_makes_the_file_unusable():
    with pytest.raises(stock_file.FileUnusable) as caught:
        list(stock_file.read_csv("sku,thread,seat,reach\nA,M14x1.25,flat,19\n", PLUGS))
    assert caught.value.errors == {"header": ["unknown column 'reach'"]}
    with pytest.raises(stock_file.FileUnusable):
        list(stock_file.read_csv("sku,sku\nA,B\n", PLUGS))
    with pytest.raises(stock_file.FileUnusable):
        list(stock_file.read_csv("# only a comment\n", PLUGS))


def test_a_row_with_more_cells_than_the_header_is_a_bad_row():
    outcome = load_csv("sku,thread,seat\nA,M14x1.25,flat,surplus\n")
    assert outcome.errors == {"2": {"_row": ["4 cells but the header names 3 columns"]}}


def test_a_quoted_cell_over_two_lines_keeps_the_line_numbers_of_later_rows_right():
    outcome = load_csv('sku,description,thread,seat\nA,"two\nlines",M14x1.25,flat\nB,x,M99,flat\n')
    assert list(outcome.errors) == ["4"]


def test_json_lines_errors_mirror_the_record_fields():
    outcome = stock_file.parse(b'{"sku": "A", "thread": "M14x1.25", "seat": "flat", "reach": "3 kg"}\n\n[1]\n{',
                              "application/x-ndjson", PLUGS)
    assert set(outcome.errors) == {"1", "3", "4"}
    assert "reach" in outcome.errors["1"]
    assert outcome.errors["3"] == {"_row": ["each line must be a JSON object"]}


def test_a_file_that_is_not_utf8_is_unusable():
    with pytest.raises(stock_file.FileUnusable):
        stock_file.parse(b"sku\n\xff\n", "text/csv", PLUGS)


@pytest.mark.parametrize("value, text", [(19.0, "19"), (0.1, "0.1"), (15.875, "15.875"), (1e-05, "1e-05"),
                                         (308.15, "308.15"), (1 / 3, repr(1 / 3))])
def test_numbers_are_written_in_the_shortest_form_that_reads_back_as_the_same_float(value, text):
    assert stock_file.format_number(value) == text
    assert float(stock_file.format_number(value)) == value


def test_writing_then_reading_gives_back_the_same_documents():
    text = ("sku,description,thread,seat,reach_mm,reach_plus_mm,reach_minus_mm,gasket_thickness_mm,"
            "firing_end_mm,firing_end_plus_mm,firing_end_minus_mm,hex_mm,resistor,terminal_height_mm,"
            "heat_range_scale,heat_range_value,gap_mm,quantity_on_hand,location\n"
            'A-1," spaced, with comma ",M14x1.25,flat,19.05,0.254,0.1,1.5,-0.5,0.3,0.3,15.875,false,53.5,'
            "shop,6,0.7,3,\n"
            "B-2,,M12x1.25,flat,26.5,,,,3,,,14,true,,,,,0,A-01-2\n")
    first = load_csv(text)
    assert first.ok, first.errors
    out = io.StringIO()
    stock_file.write_csv([document for _line, document in first.documents], PLUGS, out)
    second = load_csv(out.getvalue())
    assert [d for _l, d in second.documents] == [d for _l, d in first.documents]
    # and writing again gives the same text
    again = io.StringIO()
    stock_file.write_csv([document for _line, document in second.documents], PLUGS, again)
    assert again.getvalue() == out.getvalue()


def test_comments_are_written_before_the_header_and_skipped_when_read():
    out = io.StringIO()
    stock_file.write_csv([], PLUGS, out, comments=["DEMO DATA"])
    assert out.getvalue().startswith("# DEMO DATA\nsku,")
    assert load_csv(out.getvalue()).documents == []


def test_the_file_name_chooses_between_csv_and_json_lines():
    assert stock_file.media_type_of("stock.CSV") == "text/csv"
    assert stock_file.media_type_of("stock.jsonl") in stock_file.JSON_LINES_MEDIA_TYPES
