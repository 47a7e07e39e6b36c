"""The import's fast reader (`stock_file.RowReader`) accepts and refuses exactly what the
schema does (`stock_file.validate`, which loads every row through `StoredPlugSchema` /
`StoredHeadSchema`): the same documents for good rows, the same errors, by line and
column, for bad ones. Rows are drawn from pools of good and bad cells for each column;
the bounds the bad cells probe are the schemas' own (schemas/specs.py), named beside them."""
from __future__ import annotations

import csv
import io

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from service.formats import stock_file

PLUGS = stock_file.plug_format()
HEADS = stock_file.head_format()

# Each column: (cells the schema accepts, cells it refuses). Rows are drawn from the
# first, and then one or two of their cells are spoilt from the second. Some good cells
# clash across columns (a gasket on a conical seat, a non-standard thread without
# nonstandard_thread): those are the schema's row rules.
LENGTHS = (["19", "12.7", "0.75 in", "19 mm", " 19 ", "", "0"],
           ["61",  # MAX_REACH_MM is 60
            "-1", "abc", "1e400", "nan", "inf", "9**9 mm", "x" * 70, "12,5"])
TOLERANCES = (["0.1", "0.05", "", "0.002 in"], ["-0.2", "11",  # MAX_TOLERANCE_MM is 10
                                                "abc"])
PLUG_CELLS = {
    "sku": (["A-1", "A-2", "A-3", "B.4", "C_5"], ["", "bad sku", "-A", "x" * 65]),
    "description": (["", "demo line", "=1+1", "'=1+1", " padded "], ["x" * 501]),
    "thread": (["M14x1.25", "M14", "M12x1.25", " M10x1 ", "m14x1.25", "M14x1.5"], ["M13x1.25", "", "foo", " " * 40]),
    "nonstandard_thread": (["", "true", "false"], ["maybe"]),
    "seat": (["flat", "gasket", "conical", "taper", "FLAT"], ["", "round"]),
    "reach_mm": LENGTHS, "reach_plus_mm": TOLERANCES, "reach_minus_mm": TOLERANCES,
    "gasket_thickness_mm": (["", "1.5"], ["6", "-0.1"]),  # MAX_GASKET_MM is 5
    "firing_end_mm": (["", "3", "-1.5"], ["-21", "21"]),  # at most 20 mm either way
    "hex_mm": (["", "16", "20.8", "5/8 in"], ["7", "41", "abc"]),  # 8-40 mm
    "resistor": (["", "true", "false", "yes", "no", "1", "0"], ["maybe"]),
    "heat_range_scale": (["", "demo-cooling-index"], ["x" * 41]),  # 1-40 characters
    "heat_range_value": (["", "0.5"], ["abc", "nan"]),
    "gap_mm": (["", "0.8", "0.03 in"], ["6", "-1"]),  # 0-5 mm
    "quantity_on_hand": (["", "4", "4.0", "0"], ["2.5", "-1", "abc", "10000001"]),  # 0-10,000,000, whole
    "location": (["", "B3", "-B3"], ["x" * 101]),  # at most 100 characters
}
HEAD_CELLS = {
    "head_id": (["H-1", "H-2", "H-3"], ["", "bad id"]),
    "description": (["", "demo head"], ["x" * 501]),
    "thread": (["M14x1.25", "M14"], ["M13x1.25", ""]),
    "seat": (["flat", "conical"], ["", "round"]),
    "design_reach_mm": LENGTHS, "design_reach_plus_mm": TOLERANCES,
    "port_depth_mm": (["", "17.5"], ["121"]),  # MAX_PORT_MM is 120; not with design_reach
    "piston_clearance_mm": (["", "8"], ["251"]), "seat_to_piston_mm": (["", "26"], ["-2"]),  # not both
    "intake_pressure_bar": (["", "1", "2.5", "15 psia"], ["0.01", "15 psig"]),  # 0.05-10 bar absolute
    "boost_pressure_bar": (["", "0", "1.5"], ["-1"]),  # not with intake_pressure
    "forced_induction": (["", "true", "false"], ["maybe"]),
    "intake_temperature_k": (["", "308.15", "35 degC"], ["150", "hot"]),  # 200-600 K
    "material": (["", "aluminium", "aluminum"], ["wood"]),
}


def csv_text(header: list[str], rows: list[list[str]], extra_cells: list[bool]) -> str:
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(header)
    for row, extra in zip(rows, extra_cells, strict=True):
        writer.writerow(row + (["surplus"] if extra else []))
    return out.getvalue()


def fast(text: str, fmt: stock_file.ExchangeFormat, json_lines: bool = False):
    reader = stock_file.RowReader(fmt)  # as the endpoint reads a body: bytes, line by line
    media_type = stock_file.JSON_LINES_MEDIA_TYPES[0] if json_lines else stock_file.CSV_MEDIA_TYPE
    rows = stock_file.rows_of(text.encode(), media_type, reader)
    documents, errors = {}, {}
    for row in rows:
        if row.document is not None:
            documents[row.line] = row.document
        else:
            errors[str(row.line)] = row.errors
    return documents, errors


def reference(text: str, fmt: stock_file.ExchangeFormat, json_lines: bool = False):
    records = stock_file.read_json_lines(text) if json_lines else stock_file.read_csv(text, fmt)
    outcome = stock_file.validate(records, fmt, csv_columns=not json_lines)
    return dict(outcome.documents), outcome.errors


@st.composite
def a_row(draw, cells: dict[str, tuple[list[str], list[str]]]) -> dict[str, str]:
    row = {name: draw(st.sampled_from(good)) for name, (good, _bad) in cells.items()}
    for name in draw(st.lists(st.sampled_from(list(cells)), max_size=2)):
        row[name] = draw(st.sampled_from(cells[name][1]))
    return row


def rows_of(cells: dict[str, tuple[list[str], list[str]]]):
    surplus = st.sampled_from([False] * 9 + [True])  # now and then a row with one cell too many
    return st.lists(st.tuples(a_row(cells), surplus), min_size=1, max_size=30)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rows=rows_of(PLUG_CELLS), columns=st.permutations(list(PLUG_CELLS)))
def test_plug_rows_are_accepted_and_refused_exactly_as_the_schema_does(rows, columns):
    text = csv_text(columns, [[row[name] for name in columns] for row, _ in rows], [extra for _, extra in rows])
    assert fast(text, PLUGS) == reference(text, PLUGS)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rows=rows_of(HEAD_CELLS))
def test_head_rows_are_accepted_and_refused_exactly_as_the_schema_does(rows):
    header = list(HEAD_CELLS)
    text = csv_text(header, [[row[name] for name in header] for row, _ in rows], [extra for _, extra in rows])
    assert fast(text, HEADS) == reference(text, HEADS)


JSON_VALUES = st.one_of(st.none(), st.booleans(), st.integers(-5, 70), st.floats(allow_nan=False, width=32),
                        st.sampled_from(["19", "0.75 in", "M14", "flat", "conical", "", "A-1", "x" * 70]),
                        st.just({"value": 19, "unit": "mm", "tol": 0.1}), st.just([1, 2]),
                        st.just(10 ** 30))


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(lines=st.lists(st.one_of(
    st.fixed_dictionaries({"sku": st.sampled_from(["J-1", "J-2", "J-3", "bad sku"]),
                           "thread": st.sampled_from(["M14x1.25", "M14", "M13x1.25"]),
                           "seat": st.sampled_from(["flat", "taper", "round"])},
                          optional={"reach": JSON_VALUES, "quantity_on_hand": JSON_VALUES, "location": JSON_VALUES,
                                    "description": JSON_VALUES, "hex": JSON_VALUES, "surplus": JSON_VALUES}),
    st.sampled_from([[1], "text", None, 3])), min_size=1, max_size=20))
def test_json_lines_are_accepted_and_refused_exactly_as_the_schema_does(lines):
    import json

    text = "".join(json.dumps(line) + "\n" for line in lines) + '{"sku": \n' + '{"a":' * 5000 + "1" + "}" * 5000
    assert fast(text, PLUGS, json_lines=True) == reference(text, PLUGS, json_lines=True)


def test_json_lines_nested_too_deeply_are_an_error_on_their_line():
    text = '{"sku": "J-1", "thread": "M14", "seat": "flat"}\n' + "[" * 100_000 + "]" * 100_000 + "\n"
    documents, errors = fast(text, PLUGS, json_lines=True)
    assert list(documents) == [1]
    assert errors == {"2": {"_row": ["not JSON this service reads: nested too deeply"]}}


def test_a_design_is_loaded_once_for_all_the_rows_that_share_it(monkeypatch):
    loads = []
    reader = stock_file.RowReader(PLUGS)
    original = stock_file.field_loader.load  # a design loads through the schema's fields and rules
    monkeypatch.setattr(stock_file.field_loader, "load",
                        lambda schema, data: loads.append(data) or original(schema, data))
    text = "sku,thread,seat,reach_mm,quantity_on_hand\n" + "".join(
        f"S-{number},M14x1.25,flat,19,{number % 7}\n" for number in range(500))
    rows = list(reader.csv(text))
    assert all(row.document is not None for row in rows) and len(rows) == 500
    assert len(loads) == 1


# --- spreadsheet formulas (issue 12, item 6) ---------------------------------------------

# The cells the usual guidance for CSV exports names (OWASP, "CSV Injection", from memory):
# a leading = + - @ tab or carriage return makes a spreadsheet evaluate the cell.
FORMULAS = ["=HYPERLINK(\"http://example.invalid\",\"x\")", "+1+1", "-1+1", "@SUM(A1)", "\t-1", "\r=1",
            "'=already marked", "''+two marks"]


def test_cells_a_spreadsheet_would_run_are_written_with_a_leading_quote():
    for cell in FORMULAS:
        assert stock_file.neutralise(cell) == "'" + cell
    for cell in ("-0.5", "+3", "1e-05", "-2.5E+3", "plain", "'quoted but harmless", "", "a=b"):
        assert stock_file.neutralise(cell) == cell


@given(st.text(alphabet=st.sampled_from("=+-@\t\r'a1.e "), max_size=8) | st.text(max_size=8))
def test_the_mark_is_undone_exactly_on_import(cell):
    marked = stock_file.neutralise(cell)
    assert stock_file.unmark(marked) == cell
    assert not marked.startswith(stock_file.FORMULA_STARTS) or stock_file._PLAIN_NUMBER.fullmatch(marked)


# --- the row cap's count (PLUGFIT_MAX_IMPORT_ROWS) ------------------------------------------

@settings(max_examples=300, deadline=None)
@given(comments=st.integers(0, 2), blank_before=st.booleans(),
       rows=st.lists(st.lists(st.text(alphabet=st.sampled_from('ab,"\n\r #'), max_size=5), min_size=2, max_size=2)
                     | st.just(None), max_size=12))
def test_the_cap_counts_rows_as_the_reader_reads_them(comments, blank_before, rows):
    out = io.StringIO()
    out.write("# invented\n" * comments + ("\n" if blank_before else ""))
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["sku", "description"])
    for row in rows:
        if row is None:
            out.write("\n")  # a blank line
        else:
            writer.writerow(row)
    text = out.getvalue()
    data = ("\ufeff" + text).encode()
    read = sum(1 for _ in stock_file.read_csv(text, PLUGS))
    assert sum(1 for _ in stock_file.rows_of(data, stock_file.CSV_MEDIA_TYPE, stock_file.RowReader(PLUGS))) == read
    assert stock_file.more_rows_than(data, "text/csv", read) is None
    if read:
        assert stock_file.more_rows_than(data, "text/csv", read - 1) == read
