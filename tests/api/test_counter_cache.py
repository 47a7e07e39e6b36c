"""The database counts every change to plugs itself (migration 0004), on SQLite and,
under PLUGFIT_TEST_POSTGRES_URL, PostgreSQL."""
from __future__ import annotations

import json

from sqlalchemy import text

from service.store import db, repository
from tests.api.test_counter import HEAD, plug

FITTING = "/v1/heads/T-HEAD/fitting-plugs"
# Hand-worked as in test_counter.py: port depth 17.5 mm, piston 8 mm beyond it (25.5 mm
# from the seat); a 19 mm reach on 1.5 mm is flush, the tip at 17.5 + firing end.
FLUSH, DEEP_TIP = plug("K-FLUSH", 19.0, 2.0), plug("K-DEEP-TIP", 19.0, 3.0)


def generation(app) -> int:
    with db.unit_of_work(app) as session:
        return repository.plugs_generation(session) or 0  # None after the test harness emptied the table


def skus(client, path: str = FITTING) -> list[str]:
    response = client.get(path)
    assert response.status_code == 200, response.get_data(as_text=True)
    return [entry["sku"] for entry in response.get_json()]


def test_every_write_to_plugs_raises_the_generation_and_a_head_write_does_not(app, client, auth):
    def raised_by(write) -> bool:
        before = generation(app)
        write()
        return generation(app) > before

    assert raised_by(lambda: client.post("/v1/plugs", json=FLUSH, headers=auth))
    assert raised_by(lambda: client.put("/v1/plugs/K-FLUSH", json={**FLUSH, "quantity_on_hand": 0}, headers=auth))
    lines = "\n".join(json.dumps(p) for p in (DEEP_TIP, plug("K-OTHER", 19.0, 2.5))) + "\n"
    assert raised_by(lambda: client.post("/v1/imports/plugs", data=lines,
                                         headers={**auth, "Content-Type": "application/x-ndjson"}))
    assert raised_by(lambda: client.delete("/v1/plugs/K-OTHER", headers=auth))

    def by_hand() -> None:  # a script or an operator at the SQL prompt, past the service
        with db.get_database(app).engine.begin() as connection:
            connection.execute(text("UPDATE plugs SET location = 'bin 9'"))

    assert raised_by(by_hand)
    assert not raised_by(lambda: client.post("/v1/heads", json=HEAD, headers=auth))
    # A write that is rolled back leaves the count where it was.
    assert not raised_by(lambda: client.post("/v1/plugs", json={**FLUSH, "sku": "K-FLUSH"}, headers=auth))
