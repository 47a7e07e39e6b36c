"""The invented demo shop loads, is marked and named as invented, and its showcase pairs show
every finding code."""
from __future__ import annotations

import re

import pytest
from sqlalchemy import func, select

from schemas.specs import OptionsSchema, options_from, plug_spec, port_spec
from seed_catalog.demo import generate
from service.catalog_loader import load_catalog
from service.fitment import check_fit
from service.fitment.codes import FINDING_CODES
from service.store import db, repository
from service.store.models import Head, Plug
from service.usecases import seeding


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
    assert all(head["head_id"].startswith("DEMO-H-") and head["description"].startswith("Demo engine:")
               for head in heads)
    assert all(plug["description"].startswith("Demo house line:") for plug in plugs)
    for name in ("plugs.csv", "heads.csv"):
        assert (seeding.DEMO_DIRECTORY / name).read_text(encoding="utf-8").startswith("# DEMO DATA")


def test_demo_skus_are_opaque_and_carry_no_attributes(demo_shop):
    """Issue 15: a SKU that spells out size, seat, tip, resistor and heat echoes real part
    codes; the demo's say nothing (the description and the columns do)."""
    plugs, _heads = demo_shop
    assert all(re.fullmatch(r"DEMO-P-\d{4}", plug["sku"]) for plug in plugs)


def test_the_demo_heat_ranges_are_on_the_invented_index(demo_shop):
    """Issue 15: the demo's own scale is a 0.00 (hottest) to 1.00 (coldest) index in steps
    of 0.05, named as invented; no maker numbers heat ranges this way."""
    plugs, heads = demo_shop
    assert generate.HEAT_SCALE == "demo-cooling-index"
    values = [plug["heat_range"]["value"] for plug in plugs]
    values += [head["heat_range_band"][end] for head in heads if head.get("heat_range_band") for end in ("min", "max")]
    assert {plug["heat_range"]["scale"] for plug in plugs} == {"demo-cooling-index"}
    assert {head["heat_range_band"]["scale"] for head in heads if head.get("heat_range_band")} == {"demo-cooling-index"}
    assert all(0.0 <= value <= 1.0 and abs(value * 20 - round(value * 20)) < 1e-9 for value in values)


def _showcased(pair: generate.Showcase, plugs: list[dict], heads: list[dict]):
    plug = next(p for p in plugs if p["sku"] == pair.sku)
    head = next(h for h in heads if h["head_id"] == pair.head_id)
    return check_fit(plug_spec(plug), port_spec(head), options_from(OptionsSchema().load(pair.options)),
                     load_catalog())


@pytest.mark.parametrize("pair", generate.SHOWCASE, ids=lambda pair: f"{pair.sku}-in-{pair.head_id}")
def test_each_showcase_pair_shows_its_codes(demo_shop, pair):
    result = _showcased(pair, *demo_shop)
    assert set(pair.shows) <= set(result.codes()), [f.code for f in result.findings]
    if pair.verdict is not None:
        assert result.verdict == pair.verdict, [f.code for f in result.findings]
    if pair.running is not None:
        assert result.analysis["piston"]["dynamic_allowance_method"] == pair.running


def test_the_showcase_shows_every_registered_finding_code():
    shown = {code for pair in generate.SHOWCASE for code in pair.shows}
    missing = set(FINDING_CODES) - shown
    assert not missing, f"add a demo row and a SHOWCASE pair (seed_catalog/demo/generate.py) for {sorted(missing)}"


def test_seeding_the_demo_shop_again_changes_nothing(app, demo_shop):
    with db.unit_of_work(app) as session:
        before = sorted(session.execute(select(Plug.sku, Plug.version)).all())
        report = seeding.seed_demo(session)
        session.commit()
    assert (report.added, report.changed) == (0, 0)
    with db.unit_of_work(app) as session:
        assert sorted(session.execute(select(Plug.sku, Plug.version)).all()) == before
        assert session.scalar(select(func.count()).select_from(Head)) == len(demo_shop[1])


def test_the_generator_writes_the_committed_files_byte_for_byte(tmp_path):
    generate.write_shop(tmp_path)
    for name in ("plugs.csv", "heads.csv"):
        assert (tmp_path / name).read_bytes() == (seeding.DEMO_DIRECTORY / name).read_bytes()
