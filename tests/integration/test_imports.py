"""Imports into and exports out of a migrated SQLite database (service.usecases.stock)."""
from __future__ import annotations

import io

import pytest
from sqlalchemy import select

from service.formats import stock_file
from service.store import db
from service.store.models import Plug
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
