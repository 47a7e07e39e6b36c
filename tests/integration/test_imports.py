"""Imports into and exports out of a migrated SQLite database (service.usecases.stock)."""
from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest
from sqlalchemy import select

from schemas.problem import PROBLEM_MEDIA_TYPE
from service.formats import stock_file
from service.store import db, history, repository
from service.store.models import ChangeRecord, Plug, TableGeneration
from service.usecases import seeding, stock

PLUGS = stock_file.plug_format()


def documents(text: str, fmt=PLUGS) -> list[dict]:
    outcome = stock_file.validate(stock_file.read_csv(text, fmt), fmt, csv_columns=True)
    assert outcome.ok, outcome.errors
    return [document for _line, document in outcome.documents]


FILE = ("sku,thread,seat,reach_mm,reach_plus_mm,reach_minus_mm,hex_mm,quantity_on_hand,location\n"
        "A-1,M14x1.25,flat,19,0.1,0.1,16,4,A-01\n"
        "A-2,M14x1.25,flat,12.7,,,20.8,0,\n"
        "A-3,M12x1.25,flat,26.5,,,14,2,B-07\n")


def import_text(app, text: str, mode: str = "upsert", fmt=PLUGS) -> stock.ImportReport:
    with db.unit_of_work(app) as session:
        report = stock.apply_import(session, fmt.resource, documents(text, fmt), mode)
        session.commit()
    return report


def export_text(app, resource: str = "plugs") -> str:
    out = io.StringIO()
    with db.unit_of_work(app) as session:
        stock_file.write_csv(stock.export_documents(session, resource), stock_file.format_for(resource), out)
    return out.getvalue()


def stored(app) -> list[tuple]:
    with db.unit_of_work(app) as session:
        return sorted(session.execute(select(Plug.sku, Plug.version, Plug.quantity_on_hand, Plug.location)).all())


def test_an_upsert_adds_new_lines_and_counts_them(app):
    report = import_text(app, FILE)
    assert (report.rows, report.added, report.changed, report.unchanged, report.deleted) == (3, 3, 0, 0, 0)
    assert stored(app) == [("A-1", 1, 4, "A-01"), ("A-2", 1, 0, None), ("A-3", 1, 2, "B-07")]


def test_importing_the_same_file_again_rewrites_nothing(app):
    import_text(app, FILE)
    before = stored(app)
    report = import_text(app, FILE)
    assert (report.added, report.changed, report.unchanged) == (0, 0, 3)
    assert stored(app) == before  # versions (and so ETags) unchanged


def test_an_upsert_overwrites_a_changed_line_and_bumps_only_its_version(app):
    import_text(app, FILE)
    report = import_text(app, FILE.replace("A-2,M14x1.25,flat,12.7,,,20.8,0,", "A-2,M14x1.25,flat,12.7,,,20.8,9,C-1"))
    assert (report.changed, report.unchanged) == (1, 2)
    assert stored(app)[1] == ("A-2", 2, 9, "C-1")
    assert stored(app)[0][1] == 1


def test_an_upsert_leaves_lines_the_file_does_not_name_but_replace_deletes_them(app):
    import_text(app, FILE)
    only_first = "\n".join(FILE.splitlines()[:2]) + "\n"
    upsert = import_text(app, only_first, "upsert")
    assert upsert.deleted == 0 and len(stored(app)) == 3
    replace = import_text(app, only_first, "replace")
    assert (replace.deleted, replace.unchanged) == (2, 1)
    assert [row[0] for row in stored(app)] == ["A-1"]


def test_the_demo_shop_exports_and_imports_back_unchanged(app):
    with db.unit_of_work(app) as session:
        seeding.seed_demo(session)
        session.commit()
    for resource in ("plugs", "heads"):
        exported = export_text(app, resource)
        before = stored(app)
        report = import_text(app, exported, "replace", stock_file.format_for(resource))
        assert report.changed == report.added == report.deleted == 0
        assert report.unchanged == report.rows > 0
        assert export_text(app, resource) == exported
        assert stored(app) == before


def test_the_demo_files_are_exactly_what_an_export_of_the_seeded_shop_writes(app):
    """The committed files are in the exchange format, byte for byte (after the comments)."""
    with db.unit_of_work(app) as session:
        seeding.seed_demo(session)
        session.commit()
    for resource in ("plugs", "heads"):
        committed = (seeding.DEMO_DIRECTORY / f"{resource}.csv").read_text(encoding="utf-8")
        body = "".join(line for line in committed.splitlines(keepends=True) if not line.startswith("#"))
        assert export_text(app, resource) == body


@pytest.mark.parametrize("mode", ["upsert", "replace"])
def test_a_file_with_a_bad_row_in_the_middle_changes_nothing(runner, app, tmp_path, mode):
    import_text(app, FILE)
    before = export_text(app)
    lines = FILE.splitlines()
    bad = "\n".join([lines[0], lines[1].replace(",4,", ",40,"), "B-9,M14x1.25,flat,300,,,16,1,", lines[3]]) + "\n"
    path = tmp_path / "stock.csv"
    path.write_text(bad)
    result = runner.invoke("import", "plugs", str(path), "--mode", mode)
    assert result.exit_code == 1
    assert f"{path}:3: reach_mm: must be at most 60 mm" in result.output
    assert "nothing was written" in result.output
    assert export_text(app) == before


def test_the_cli_imports_exports_and_reimports_the_same_file(runner, tmp_path):
    source = tmp_path / "in.csv"
    source.write_text(FILE)
    assert runner.invoke("import", "plugs", str(source)).exit_code == 0
    exported = tmp_path / "out.csv"
    result = runner.invoke("export", "plugs", "-o", str(exported))
    assert result.exit_code == 0, result.output
    assert "exported 3 plugs" in result.output
    again = runner.invoke("import", "plugs", str(exported), "--mode", "replace")
    assert "3 rows, 0 added, 0 changed, 3 unchanged, 0 deleted" in again.output
    to_stdout = runner.invoke("export", "plugs")
    assert to_stdout.stdout == exported.read_text()


def test_a_dry_run_counts_but_writes_nothing(runner, app, tmp_path):
    source = tmp_path / "in.jsonl"
    source.write_text('{"sku": "J-1", "thread": "M14", "seat": "taper", "reach": 11.7}\n')
    result = runner.invoke("import", "plugs", str(source), "--dry-run")
    assert result.exit_code == 0
    assert "would change (upsert): 1 rows, 1 added" in result.output
    assert stored(app) == []


# --- the streaming, bulk import (issue 17) and its limits -----------------------------------

def plug_lines(count: int, start: int = 0) -> str:
    return "".join(f"S-{number:05d},M14x1.25,flat,19,0.1,0.1,16,{number % 9},B-{number % 4}\n"
                   for number in range(start, start + count))


HEADER = FILE.splitlines()[0] + "\n"


def post(client, auth, body, query="", content_type="text/csv"):
    return client.post(f"/v1/imports/plugs{query}", data=body, headers={**auth, "Content-Type": content_type})


def history_rows(app) -> list[tuple]:
    with db.unit_of_work(app) as session:
        return [tuple(row) for row in session.execute(select(
            ChangeRecord.identifier, ChangeRecord.action, ChangeRecord.before, ChangeRecord.after
        ).order_by(ChangeRecord.id)).all()]


def generations(app) -> tuple[int, int]:
    """The plugs' and heads' generations (migration 0004's triggers), 0 while a row is
    missing (the PostgreSQL runs empty every table between tests)."""
    with db.unit_of_work(app) as session:
        found = dict(session.execute(select(TableGeneration.name, TableGeneration.generation)).all())
    return found.get("plugs", 0), found.get("heads", 0)


def test_a_file_over_the_row_cap_is_a_413_naming_the_cap_and_the_command_and_nothing_is_written(
        app, client, auth, monkeypatch):
    app.config["MAX_IMPORT_ROWS"] = 5
    before = generations(app)
    monkeypatch.setattr(stock, "import_rows", lambda *a, **k: pytest.fail("a row was read"))
    for body, content_type in ((HEADER + plug_lines(6), "text/csv"),
                               ("".join(f'{{"sku": "J-{n}", "thread": "M14", "seat": "flat"}}\n' for n in range(6)),
                                "application/x-ndjson")):
        response = post(client, auth, body, content_type=content_type)
        assert response.status_code == 413
        assert response.mimetype == PROBLEM_MEDIA_TYPE
        problem = response.get_json()
        assert problem["type"].endswith("/too-many-rows")
        assert problem["limit"] == 5
        assert "6 rows" in problem["detail"] and "PLUGFIT_MAX_IMPORT_ROWS" in problem["detail"]
        assert "plugfit import plugs FILE" in problem["detail"]
    assert stored(app) == [] and history_rows(app) == []
    assert generations(app) == before


def test_rows_at_the_cap_are_counted_as_rows_not_lines(app, client, auth):
    app.config["MAX_IMPORT_ROWS"] = 5
    # 5 rows on 10 lines: a comment, blank lines, and a description spanning two lines.
    body = ("# a comment\n" + "sku,description,thread,seat\n\n" + 'Q-1,"two\nlines",M14,flat\n' +
            "Q-2,,M14,flat\n\nQ-3,,M14,flat\nQ-4,,M14,flat\nQ-5,,M14,flat\n")
    response = post(client, auth, body)
    assert response.status_code == 200, response.get_json()
    assert response.get_json()["added"] == 5
    lines = "".join(f'{{"sku": "J-{n}", "thread": "M14", "seat": "flat"}}\n\n' for n in range(5))
    assert post(client, auth, lines, content_type="application/x-ndjson").get_json()["added"] == 5


def test_the_default_cap_is_documented_with_its_value(app):
    from service.config import Defaults

    assert app.config["MAX_IMPORT_ROWS"] == Defaults.MAX_IMPORT_ROWS == 50_000
    operations = (Path(__file__).resolve().parents[2] / "docs" / "operations.md").read_text()
    assert "`PLUGFIT_MAX_IMPORT_ROWS` | `50000`" in operations


@pytest.mark.parametrize("mode", ["upsert", "replace"])
def test_a_bad_row_after_chunks_were_written_leaves_the_database_as_it_was(app, client, auth, monkeypatch, mode):
    import_text(app, FILE)
    before, before_history, before_generations = export_text(app), history_rows(app), generations(app)
    monkeypatch.setattr(stock, "CHUNK", 10)  # four chunks are written before line 42 is read
    good = plug_lines(40)
    body = HEADER + good + "S-BAD,M14x1.25,flat,300,,,16,1,\n" + plug_lines(5, start=100) + \
        "S-00001,M14x1.25,flat,19,,,16,1,\n"
    response = post(client, auth, body, f"?mode={mode}")
    assert response.status_code == 422
    assert response.get_json()["errors"] == {
        "42": {"reach_mm": ["must be at most 60 mm"]},
        "48": {"sku": ["'S-00001' appears again (first on line 3)"]}}
    assert export_text(app) == before
    assert history_rows(app) == before_history
    assert generations(app) == before_generations


def test_every_written_row_has_its_history_entry_as_the_api_shows_it(app, client, auth, monkeypatch):
    monkeypatch.setattr(stock, "CHUNK", 7)
    before_generations = generations(app)
    assert post(client, auth, HEADER + plug_lines(30)).get_json()["added"] == 30
    assert generations(app)[0] > before_generations[0]  # the triggers of migration 0004 saw the rows
    changed = HEADER + plug_lines(30).replace("S-00003,M14x1.25,flat,19,0.1,0.1,16,3,B-3",
                                              "S-00003,M14x1.25,flat,19,0.1,0.1,16,8,C-9")
    report = post(client, auth, changed, "?mode=replace").get_json()
    assert (report["changed"], report["unchanged"]) == (1, 29)
    without_last = "".join(line for line in changed.splitlines(keepends=True) if not line.startswith("S-00029"))
    assert post(client, auth, without_last, "?mode=replace").get_json()["deleted"] == 1
    entries = history_rows(app)
    with db.unit_of_work(app) as session:
        plugs = repository.plugs(session)
        for sku, action, before, after in entries:
            if action == "create":
                assert before is None
                if sku != "S-00029":
                    assert after["sku"] == sku and after["reach"]["plus"] == 0.1
            if action == "replace":
                assert (sku, before["quantity_on_hand"], after["quantity_on_hand"]) == ("S-00003", 3, 8)
            if action == "delete":
                assert (sku, after) == ("S-00029", None)
        latest = {sku: after for sku, _action, _before, after in entries}  # entries are in order
        for sku, after in latest.items():
            assert after == history.as_shown(history.PLUG, plugs.document(sku))
    assert [action for sku, action, *_ in entries if sku == "S-00003"] == ["create", "replace"]
    assert len(entries) == 30 + 1 + 1


def test_the_cli_streams_a_file_larger_than_the_http_cap_with_no_bar_off_a_terminal(runner, app, tmp_path,
                                                                                       monkeypatch):
    monkeypatch.setenv("PLUGFIT_MAX_IMPORT_ROWS", "10")
    monkeypatch.setattr(stock, "CHUNK", 100)
    source = tmp_path / "stock.csv"
    source.write_text(HEADER + plug_lines(2500))
    result = runner.invoke("import", "plugs", str(source))
    assert result.exit_code == 0, result.output
    assert "2500 rows, 2500 added" in result.output
    assert "importing" not in result.output  # the bar is drawn on a terminal only
    assert len(stored(app)) == 2500


def test_spreadsheet_formulas_are_exported_marked_and_imported_back_unmarked(app, client, auth):
    """Issue 12, item 6: export → import → export is byte-identical, and the stored text
    is what the client sent."""
    descriptions = ["=HYPERLINK(\"http://example.invalid\",\"x\")", "+1+1", "@SUM(A1)", "\t-1 tab", "-0.5",
                    "'=already marked", "plain"]
    lines = "".join(json.dumps({"sku": f"F-{number}", "thread": "M14", "seat": "flat", "description": text,
                                "location": "-B3" if number == 0 else None}) + "\n"
                    for number, text in enumerate(descriptions))
    assert post(client, auth, lines, content_type="application/x-ndjson").status_code == 200
    exported = client.get("/v1/exports/plugs").data
    rows = list(csv.DictReader(io.StringIO(exported.decode())))
    assert [row["description"] for row in rows] == ["'=HYPERLINK(\"http://example.invalid\",\"x\")", "'+1+1",
                                                    "'@SUM(A1)", "'\t-1 tab", "-0.5", "''=already marked",
                                                    "plain"]
    assert rows[0]["location"] == "'-B3"
    report = post(client, auth, exported, "?mode=replace").get_json()
    assert report["unchanged"] == len(descriptions)
    assert client.get("/v1/exports/plugs").data == exported
    assert [client.get(f"/v1/plugs/F-{n}").get_json()["description"] for n in range(len(descriptions))] == \
        descriptions


def test_bytes_that_are_not_utf8_after_chunks_were_written_leave_nothing_behind(app, client, auth, monkeypatch):
    monkeypatch.setattr(stock, "CHUNK", 10)
    body = (HEADER + plug_lines(35)).encode() + b"S-99999,M14x1.25,flat,19,,,16,1,\xff\n"
    response = post(client, auth, body)
    assert response.status_code == 422
    problem = response.get_json()
    assert problem["type"].endswith("/file-unusable")
    assert list(problem["errors"]) == ["37"]
    assert "not UTF-8" in problem["errors"]["37"]["_row"][0]
    assert stored(app) == [] and history_rows(app) == []


def test_the_streaming_reader_reads_the_file_as_it_goes(tmp_path):
    """A row is handed on before the rest of the file is read: memory stays flat."""
    path = tmp_path / "stock.csv"
    path.write_text(HEADER + plug_lines(10_000))
    with path.open("rb") as stream:
        rows = stock_file.rows_of(stream, stock_file.CSV_MEDIA_TYPE, stock_file.RowReader(PLUGS))
        first = next(rows)
        assert first.document["sku"] == "S-00000"
        assert stream.tell() < path.stat().st_size / 10
        assert sum(1 for _ in rows) == 9_999


def test_a_row_changed_while_the_import_ran_is_not_overwritten(app, monkeypatch):
    from sqlalchemy import text
    from sqlalchemy.orm.exc import StaleDataError

    import_text(app, FILE)
    before = export_text(app)
    original = stock._Writer._columns

    def columns_after_another_write(self, row):  # runs after the chunk's stored rows were read
        self.session.execute(text("UPDATE plugs SET version = version + 1 WHERE sku = 'A-2'"))
        return original(self, row)

    monkeypatch.setattr(stock._Writer, "_columns", columns_after_another_write)
    with pytest.raises(StaleDataError):
        import_text(app, FILE.replace("A-2,M14x1.25,flat,12.7,,,20.8,0,", "A-2,M14x1.25,flat,12.7,,,20.8,9,C-1"))
    assert export_text(app) == before


def test_a_key_created_by_another_write_while_the_import_ran_is_a_409(app, client, auth, monkeypatch):
    """Two imports naming the same new sku at once: the second to write gets a 409 problem
    (nothing written, send it again), never a 500."""
    from sqlalchemy import text

    original = stock._Writer._columns

    def columns_after_another_insert(self, row):  # runs after the chunk's stored rows were read
        if row.document["sku"] == "A-2":
            self.session.execute(text("INSERT INTO plugs (sku, thread, seat, nonstandard_thread, quantity_on_hand, "
                                      "version, created_at, updated_at) VALUES ('A-2', 'M14x1.25', 'flat', false, "
                                      "0, 1, CURRENT_TIMESTAMP, CURRENT_TIMESTAMP)"))
        return original(self, row)

    monkeypatch.setattr(stock._Writer, "_columns", columns_after_another_insert)
    response = post(client, auth, FILE)
    assert response.status_code == 409
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    assert "nothing was written" in response.get_json()["detail"]
    assert stored(app) == [] and history_rows(app) == []
