"""The invented demo shop loads, and every finding code appears in some check over it."""
from __future__ import annotations

import re

import pytest
from sqlalchemy import func, select

from schemas.specs import options_from, plug_spec, port_spec
from service.catalog_loader import load_catalog
from service.fitment import check_fit
from service.store import db, repository
from service.store.models import Head, Plug
from service.usecases import seeding

# The stable finding codes: the fit-check contract's table
# (shared/product/fit-check-contract.md, "Finding codes") plus the four deeper checks of
# the engineering-depth issue.
FINDING_CODES = {
    "THREAD_MISMATCH", "SEAT_MISMATCH", "REACH_LONG", "REACH_SHORT", "PISTON_CONTACT", "VALVE_CONTACT",
    "TOOL_CLEARANCE", "HEX_DIFFERS", "RESISTOR_REQUIRED", "TORQUE_OUT_OF_RANGE", "NOT_CHECKED",
    "THREAD_STRIP_RISK", "GAP_VOLTAGE_MARGIN", "HEAT_RANGE_OUT_OF_BAND", "BOOT_ENGAGEMENT",
}
# A planned torque is a request option, not data; above the 25-30 N*m guidance for M14
# flat seats in aluminium (seed_catalog/torques.csv, common practice).
OVER_TORQUE = options_from({"torque": 45.0})


@pytest.fixture
def demo_shop(app):
    with db.unit_of_work(app) as session:
        seeding.seed_demo(session)
        session.commit()
    with db.unit_of_work(app) as session:
        plugs = [repository.PLUGS.document_of(row) for row in session.scalars(select(Plug).order_by(Plug.sku))]
        heads = [repository.HEADS.document_of(row) for row in session.scalars(select(Head).order_by(Head.head_id))]
    return plugs, heads


def test_the_demo_shop_has_a_few_dozen_heads_and_a_few_hundred_plugs(demo_shop):
    plugs, heads = demo_shop
    assert 24 <= len(heads) <= 40 and 200 <= len(plugs) <= 500
    assert {plug["thread"] for plug in plugs} == {"M8x1", "M10x1", "M12x1.25", "M14x1.25", "M18x1.5"}
    assert {(head["thread"], head["seat"]) for head in heads} >= {("M14x1.25", "flat"), ("M14x1.25", "conical"),
                                                                   ("M12x1.25", "flat"), ("M10x1", "flat"),
                                                                   ("M18x1.5", "flat")}
    assert any(plug["quantity_on_hand"] == 0 for plug in plugs) and any(plug.get("location") for plug in plugs)


def test_every_name_in_the_demo_shop_is_marked_as_demo_data(demo_shop):
    plugs, heads = demo_shop
    assert all(re.fullmatch(r"DEMO-[A-Z0-9.-]+", plug["sku"]) for plug in plugs)
    assert all(head["head_id"].startswith("DEMO-H-") and head["description"].startswith("Demo engine:")
               for head in heads)
    for name in ("plugs.csv", "heads.csv"):
        assert (seeding.DEMO_DIRECTORY / name).read_text(encoding="utf-8").startswith("# DEMO DATA")


def test_every_finding_code_appears_in_some_check_over_the_demo_shop(demo_shop):
    plugs, heads = demo_shop
    catalog = load_catalog()
    plug_specs = [plug_spec(plug) for plug in plugs]
    seen: set[str] = set()
    for head in heads:
        port = port_spec(head)
        for plug in plug_specs:
            seen.update(check_fit(plug, port, None, catalog).codes())
    over = check_fit(plug_spec(next(p for p in plugs if p["sku"] == "DEMO-14F-190-SR6")),
                     port_spec(next(h for h in heads if h["head_id"] == "DEMO-H-PELLORIN-16")), OVER_TORQUE, catalog)
    seen.update(over.codes())
    assert FINDING_CODES - seen == set()


def test_the_featured_plug_passes_clean_in_its_demo_engine(demo_shop):
    plugs, heads = demo_shop
    result = check_fit(plug_spec(next(p for p in plugs if p["sku"] == "DEMO-14F-190-SR6")),
                       port_spec(next(h for h in heads if h["head_id"] == "DEMO-H-PELLORIN-16")), None, load_catalog())
    assert result.verdict == "pass", [f.code for f in result.findings]


def test_seeding_the_demo_shop_again_changes_nothing(app, demo_shop):
    with db.unit_of_work(app) as session:
        before = sorted(session.execute(select(Plug.sku, Plug.version)).all())
        report = seeding.seed_demo(session)
        session.commit()
    assert (report.added, report.changed) == (0, 0)
    with db.unit_of_work(app) as session:
        assert sorted(session.execute(select(Plug.sku, Plug.version)).all()) == before
        assert session.scalar(select(func.count()).select_from(Head)) == len(demo_shop[1])


def test_the_generator_writes_the_committed_files_byte_for_byte(tmp_path, monkeypatch):
    from seed_catalog.demo import generate

    monkeypatch.setattr(generate, "HERE", tmp_path)
    generate.main()
    for name in ("plugs.csv", "heads.csv"):
        assert (tmp_path / name).read_bytes() == (seeding.DEMO_DIRECTORY / name).read_bytes()
