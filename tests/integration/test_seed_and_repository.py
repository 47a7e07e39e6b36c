"""The seed loader and the row ↔ document mapping, against a migrated SQLite database."""
from __future__ import annotations

import json

import pytest
from sqlalchemy import func, select

from schemas.specs import StoredHeadSchema, StoredPlugSchema
from service.fitment.model import Dim
from service.store import db, repository
from service.store.models import Head, Plug
from service.usecases import seeding

DEMO_PLUGS = [
    {"sku": "DEMO-1", "description": "demo data (invented)", "thread": "M14x1.25", "seat": "flat",
     "reach": {"value": 19.0, "plus": 0.1, "minus": 0.2}, "hex": 16.0, "resistor": True},
    {"sku": "DEMO-2", "description": "demo data (invented)", "thread": "M18", "seat": "taper", "reach": 11.2},
]
DEMO_HEADS = [
    {"head_id": "DEMO-HEAD", "description": "demo data (invented)", "thread": "M14x1.25", "seat": "flat",
     "port_depth": 17.5, "intake_temperature": 40, "boot_range": {"min": 50, "max": 60}},
]


@pytest.fixture
def demo_directory(tmp_path):
    directory = tmp_path / "demo"
    directory.mkdir()
    (directory / "plugs.jsonl").write_text("\n".join(json.dumps(p) for p in DEMO_PLUGS) + "\n\n")
    (directory / "heads.jsonl").write_text("\n".join(json.dumps(h) for h in DEMO_HEADS) + "\n")
    return directory


def versions(app):
    with db.unit_of_work(app) as session:
        return (sorted(session.execute(select(Plug.sku, Plug.version, Plug.updated_at)).all()),
                sorted(session.execute(select(Head.head_id, Head.version, Head.updated_at)).all()))


def test_seeding_the_demo_shop_twice_changes_nothing_the_second_time(app, demo_directory):
    with db.unit_of_work(app) as session:
        first = seeding.seed_demo(session, demo_directory)
        session.commit()
    assert (first.added, first.changed, first.unchanged) == (3, 0, 0)
    before = versions(app)
    with db.unit_of_work(app) as session:
        second = seeding.seed_demo(session, demo_directory)
        session.commit()
    assert (second.added, second.changed, second.unchanged) == (0, 0, 3)
    assert versions(app) == before


def test_a_changed_demo_record_is_replaced_in_place(app, demo_directory):
    with db.unit_of_work(app) as session:
        seeding.seed_demo(session, demo_directory)
        session.commit()
    changed = [{**DEMO_PLUGS[0], "hex": 20.8}, DEMO_PLUGS[1]]
    (demo_directory / "plugs.jsonl").write_text("\n".join(json.dumps(p) for p in changed))
    with db.unit_of_work(app) as session:
        report = seeding.seed_demo(session, demo_directory)
        session.commit()
    assert (report.added, report.changed, report.unchanged) == (0, 1, 2)
    with db.unit_of_work(app) as session:
        row = session.scalars(select(Plug).where(Plug.sku == "DEMO-1")).one()
        assert (row.hex_mm, row.version) == (20.8, 2)


def test_a_bad_demo_line_stops_the_seed_and_writes_nothing(app, demo_directory):
    (demo_directory / "heads.jsonl").write_text(json.dumps({**DEMO_HEADS[0], "port_depth": "3 kg"}) + "\n")
    with db.unit_of_work(app) as session, pytest.raises(seeding.SeedError, match="heads.jsonl line 1"):
        seeding.seed_demo(session, demo_directory)
    with db.unit_of_work(app) as session:
        assert session.scalar(select(func.count()).select_from(Plug)) == 0


def test_plugfit_seed_is_idempotent_and_says_where_standard_sizes_live(runner):
    first = runner.invoke("seed")
    second = runner.invoke("seed")
    assert first.exit_code == second.exit_code == 0
    assert first.stderr == second.stderr
    assert "served from seed_catalog/" in first.stderr


def test_plugfit_seed_demo_without_demo_files_loads_nothing_and_says_so(runner, monkeypatch, tmp_path):
    monkeypatch.setattr(seeding, "DEMO_DIRECTORY", tmp_path / "empty")
    result = runner.invoke("seed", "--demo")
    assert result.exit_code == 0
    assert "nothing loaded" in result.stderr


def test_plugfit_seed_demo_loads_the_demo_shop_once(runner, monkeypatch, demo_directory):
    monkeypatch.setattr(seeding, "DEMO_DIRECTORY", demo_directory)
    first = runner.invoke("seed", "--demo")
    assert first.exit_code == 0, first.output
    assert "3 added, 0 changed, 0 unchanged" in first.stderr
    second = runner.invoke("seed", "--demo")
    assert "0 added, 0 changed, 3 unchanged" in second.stderr


def test_every_plug_field_survives_a_trip_through_the_database(app):
    document = StoredPlugSchema().load({
        "sku": "RT-1", "description": "round trip", "thread": "M12x1.25", "seat": "flat",
        "reach": {"value": 19, "plus": 0.05, "minus": 0.15}, "gasket_thickness": {"value": 1.2, "tol": 0.1},
        "firing_end": -0.5, "terminal_height": 55.0, "hex": 14.0, "resistor": False,
        "heat_range": {"scale": "s", "value": 0.7}, "gap": 0.7, "quantity_on_hand": 3, "location": "A1"})
    with db.unit_of_work(app) as session:
        repository.plugs(session).add(document)
        session.commit()
    with db.unit_of_work(app) as session:
        assert repository.plugs(session).document("RT-1") == document
    assert document["reach"] == Dim(19.0, 0.05, 0.15)


def test_every_head_field_survives_a_trip_through_the_database(app):
    document = StoredHeadSchema().load({
        "head_id": "RT-H", "description": "round trip", "thread": "M10", "seat": "flat",
        "design_reach": {"value": 12.7, "tol": 0.1}, "port_depth_long_side": 13.0,
        "seat_to_piston": 22.0, "seat_to_valve": {"value": 25.0, "plus": 0.2, "minus": 0.4},
        "well_bore": 20.0, "hex": 16.0, "resistor_required": False, "material": "cast iron",
        "heat_range_band": {"scale": "s", "min": 0.4, "max": 0.6},
        "boot_range": {"min": {"value": 40, "tol": 1}, "max": 45},
        "compression_ratio": 9.5, "intake_pressure": "14.7 psi", "intake_temperature": "300 K",
        "peak_pressure": 55, "ignition_voltage": 25, "bore": 70, "stroke": 60, "rod_length": 110,
        "spark_advance": 25})
    with db.unit_of_work(app) as session:
        repository.heads(session).add(document)
        session.commit()
    with db.unit_of_work(app) as session:
        assert repository.heads(session).document("RT-H") == document


def test_a_unit_of_work_rolls_back_unless_committed(app):
    document = StoredPlugSchema().load({"sku": "UNCOMMITTED", "thread": "M14", "seat": "flat"})
    with db.unit_of_work(app) as session:
        repository.plugs(session).add(document)
    with db.unit_of_work(app) as session:
        assert repository.plugs(session).get("UNCOMMITTED") is None
