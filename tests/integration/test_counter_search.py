"""The counter's database search equals a brute-force run of the engine over every plug."""
from __future__ import annotations

import random

import pytest
from sqlalchemy import insert, select

from schemas.specs import options_from, plug_spec, port_spec
from service.catalog_loader import load_catalog
from service.fitment import check_fit
from service.fitment.model import Dim
from service.fitment.search import GROUP, Tolerances, compare, result_rank_key
from service.store import db, repository
from service.store.models import Head, Plug
from service.usecases import parts_search, seeding

# Odd plugs the demo shop lacks: no firing end, no reach, no gasket given, a hex that is
# no catalogue size, tolerances wide enough to straddle every bound. Invented.
HEX_CHOICES = (None, 14.0, 15.875, 16.0, 16.1, 20.8, 22.225)


def odd_plugs(rng: random.Random, count: int) -> list[dict]:
    rows = []
    for number in range(count):
        thread, seat = rng.choice([("M14x1.25", "flat"), ("M14x1.25", "flat"), ("M14x1.25", "conical"),
                                   ("M12x1.25", "flat"), ("M10x1", "flat")])
        row = {"sku": f"ODD-{number:04d}", "thread": thread, "seat": seat, "description": "invented test line",
               "nonstandard_thread": False, "quantity_on_hand": rng.choice((0, 1, 3)), "hex_mm": rng.choice(HEX_CHOICES),
               "resistor": rng.choice((True, False, None))}
        if rng.random() < 0.95:
            row.update(reach_nominal_mm=rng.choice((9.5, 11.7, 12.7, 18.0, 19.0, 19.05, 26.5)) + rng.choice((0, 0, 0.3)),
                       reach_plus_mm=rng.choice((0.0, 0.1, 0.4)), reach_minus_mm=rng.choice((0.0, 0.2)))
        if seat == "flat" and rng.random() < 0.5:
            row.update(gasket_thickness_nominal_mm=rng.choice((1.0, 1.5, 2.0)), gasket_thickness_plus_mm=0.1,
                       gasket_thickness_minus_mm=rng.choice((0.0, 0.1)))
        if rng.random() < 0.85:
            row.update(firing_end_nominal_mm=rng.choice((-0.5, 1.5, 3.0, 4.5, 6.5, 7.5)),
                       firing_end_plus_mm=rng.choice((0.0, 0.3, 0.6)), firing_end_minus_mm=0.3)
        rows.append(row)
    return rows


@pytest.fixture(scope="module")
def shop(tmp_path_factory, migrated_template):
    """The demo shop plus the odd plugs, in one database for the whole module."""
    import shutil

    from service.web import create_app

    path = tmp_path_factory.mktemp("counter") / "plugfit.db"
    shutil.copyfile(migrated_template, path)
    app = create_app({"TESTING": True, "DATABASE_URL": f"sqlite:///{path}"})
    with db.unit_of_work(app) as session:
        seeding.seed_demo(session)
        session.execute(insert(Plug), odd_plugs(random.Random(20250614), 400))
        session.commit()
    with db.unit_of_work(app) as session:
        plugs = [repository.PLUGS.document_of(row) for row in session.scalars(select(Plug))]
        heads = [repository.HEADS.document_of(row) for row in session.scalars(select(Head).order_by(Head.head_id))]
    yield app, plugs, heads
    db.get_database(app).engine.dispose()


def brute_force(plugs, head, options, include=("pass", "warn"), keep=lambda plug: True):
    port, catalog = port_spec(head), load_catalog()
    listed = []
    for plug in plugs:
        if plug["thread"] != head["thread"] or plug["seat"] != head["seat"] or not keep(plug):
            continue
        result = check_fit(plug_spec(plug), port, options, catalog)
        if result.verdict in include:
            listed.append((result_rank_key(result).sort_key(GROUP[result.verdict], plug["sku"]),
                           plug["sku"], result.verdict))
    return [(sku, verdict) for _key, sku, verdict in sorted(listed)]


def searched(app, head, options, page_size=37, **kwargs):
    listed, total = [], None
    with db.unit_of_work(app) as session:
        offset = 0
        while True:
            page = parts_search.fitting_plugs(session, port_spec(head), options, load_catalog(), offset=offset,
                                         limit=page_size, **kwargs)
            total = page.total if total is None else total
            assert page.total == total  # every page agrees on the total
            listed += [(item.sku, item.verdict) for item in page.items]
            if len(page.items) < page_size:
                return listed, total
            offset += page_size


def test_every_demo_head_lists_exactly_what_the_engine_lets_through_in_rank_order(shop):
    app, plugs, heads = shop
    options = options_from({})
    verdicts = set()
    for head in heads:
        expected = brute_force(plugs, head, options)
        listed, total = searched(app, head, options)
        assert listed == expected, head["head_id"]
        assert total == len(expected)
        assert all(verdict != "fail" for _sku, verdict in listed)
        verdicts.update(verdict for _sku, verdict in listed)
    assert verdicts == {"pass", "warn"}


@pytest.mark.parametrize("include", [("pass",), ("warn",)])
def test_include_lists_only_the_chosen_verdicts(shop, include):
    app, plugs, heads = shop
    options = options_from({})
    for head in heads:
        listed, total = searched(app, head, options, include=frozenset(include))
        assert listed == brute_force(plugs, head, options, include), head["head_id"]
        assert total == len(listed)


def test_the_filters_restrict_to_stock_resistor_and_hex(shop):
    app, plugs, heads = shop
    options = options_from({})
    head = next(h for h in heads if h["head_id"] == "DEMO-H-VAN-I4")
    filters = parts_search.PlugFilters(in_stock=True, resistor=True, hex_mm=16.0)
    listed, _total = searched(app, head, options, filters=filters, page_size=11)
    keep = (lambda plug: plug["quantity_on_hand"] > 0 and plug.get("resistor") is True
            and plug.get("hex") is not None and abs(plug["hex"] - 16.0) <= 0.3)
    assert listed == brute_force(plugs, head, options, keep=keep)
    assert listed  # the filter leaves something to compare


@pytest.mark.parametrize("given", [{"stack": "rss"}, {"min_clearance": 0.5, "flush_tolerance": 1.0},
                                   {"dynamic_allowance": 0.8, "min_clearance": 2.5},
                                   {"max_protrusion": 0.3, "max_recess": 0.6},
                                   {"flush_tolerance": 2.0, "stack": "rss"}])
def test_check_options_change_the_listing_exactly_as_they_change_the_checks(shop, given):
    app, plugs, heads = shop
    options = options_from(given)
    for head_id in ("DEMO-H-VAN-I4", "DEMO-H-TRACTOR-I2", "DEMO-H-RACE", "DEMO-H-PROJECT-I4"):
        head = next(h for h in heads if h["head_id"] == head_id)
        assert searched(app, head, options)[0] == brute_force(plugs, head, options), head_id


def test_inclined_plugs_and_roofs_list_exactly_what_the_engine_lets_through(shop):
    """Every demo head again with its plug leaning 25 deg and its roof 2 mm deeper on the
    long side (invented variants): the shell edge and the new reach policy at work."""
    app, plugs, heads = shop
    options, catalog = options_from({}), load_catalog()
    for head in heads:
        if head.get("port_depth") is not None:
            depth = head["port_depth"].nominal
        else:  # D = design reach less the standard gasket (flat) or the design reach (conical)
            flat = head["seat"] == "flat"
            depth = head["design_reach"].nominal - (catalog.thread(head["thread"]).standard_gasket_mm if flat else 0.0)
        leaning = dict(head, plug_inclination=25.0, port_depth_long_side=Dim(depth + 2.0, 0.1, 0.1))
        assert searched(app, leaning, options)[0] == brute_force(plugs, leaning, options), head["head_id"]


def test_interchanges_equal_a_brute_force_comparison(shop):
    app, plugs, _heads = shop
    catalog = load_catalog()
    rng = random.Random(7)
    for original in rng.sample(plugs, 40):
        spec = plug_spec(original)
        expected = sorted(
            (comparison.sort_key(plug["sku"]), plug["sku"]) for plug in plugs if plug["sku"] != original["sku"]
            for comparison in [compare(spec, plug_spec(plug), catalog, Tolerances())] if comparison is not None)
        listed = []
        with db.unit_of_work(app) as session:
            offset = 0
            while True:
                page = parts_search.interchanges(session, spec, original["sku"], catalog, offset=offset, limit=7)
                assert page.total == len(expected)
                listed += [item.sku for item in page.items]
                if len(page.items) < 7:
                    break
                offset += 7
        assert listed == [sku for _key, sku in expected], original["sku"]
