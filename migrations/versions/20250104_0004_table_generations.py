"""Table generations: a number the database raises on every change to plugs or heads.

The parts counter keeps, per worker process, what it derived from the plugs and heads
(a head's port, its candidate designs grouped and ranked, the pages cut from them). It
may reuse that only while no plug or head has changed, whichever process or program
changed it: another gunicorn worker, a `plugfit import`, a script, an operator at the
SQL prompt. So the database itself counts the changes: triggers on `plugs` and `heads`
raise that table's row of `table_generations` in the same transaction as the change,
and a reader compares the numbers with the ones its cache was built at
(service/store/records_cache.py says why that is enough).

- PostgreSQL: one statement-level trigger per table, BEFORE INSERT, UPDATE, DELETE or
  TRUNCATE, so a bulk statement or a COPY costs one increment. It runs before the
  statement touches a row, so every transaction that writes the table takes the
  counter row's lock before any of the table's rows: writers of plugs (of heads) queue
  on it, as they do on SQLite's single write lock, and can never deadlock on it.
- SQLite has row-level triggers only (AFTER INSERT, UPDATE, DELETE): one increment per
  row written, about 2.5 microseconds each (measured on 100,000 inserts). SQLite turns
  off its truncate shortcut for `DELETE FROM plugs` when the table has triggers.

The increment is an upsert, so a counter comes back by itself if its row is deleted.

Revision ID: 0004
Revises: 0003
Create Date: 2025-01-04 00:00:00
"""
from __future__ import annotations

from typing import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0004"
down_revision: str | Sequence[str] | None = "0003"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

TABLES = ("plugs", "heads")
SQLITE_EVENTS = ("INSERT", "UPDATE", "DELETE")


def _bump(name: str) -> str:
    return (f"INSERT INTO table_generations (name, generation) VALUES ({name}, 1) "
            "ON CONFLICT (name) DO UPDATE SET generation = table_generations.generation + 1")


def upgrade() -> None:
    op.create_table(
        "table_generations",
        sa.Column("name", sa.String(32), nullable=False),
        sa.Column("generation", sa.BigInteger(), server_default="0", nullable=False),
        sa.PrimaryKeyConstraint("name", name="pk_table_generations"),
    )
    for table in TABLES:
        op.execute(f"INSERT INTO table_generations (name, generation) VALUES ('{table}', 0)")
    if op.get_bind().dialect.name == "postgresql":
        op.execute(f"""
            CREATE FUNCTION table_generation_bump() RETURNS trigger LANGUAGE plpgsql AS $$
            BEGIN {_bump("TG_TABLE_NAME")}; RETURN NULL; END $$
        """)
        for table in TABLES:
            op.execute(f"""
                CREATE TRIGGER {table}_generation BEFORE INSERT OR UPDATE OR DELETE OR TRUNCATE ON {table}
                FOR EACH STATEMENT EXECUTE FUNCTION table_generation_bump()
            """)
    else:
        for table in TABLES:
            for event in SQLITE_EVENTS:
                op.execute(f"CREATE TRIGGER {table}_generation_{event.lower()} AFTER {event} ON {table} "
                           f"BEGIN {_bump(repr(table))}; END")


def downgrade() -> None:
    if op.get_bind().dialect.name == "postgresql":
        for table in TABLES:
            op.execute(f"DROP TRIGGER {table}_generation ON {table}")
        op.execute("DROP FUNCTION table_generation_bump()")
    else:
        for table in TABLES:
            for event in SQLITE_EVENTS:
                op.execute(f"DROP TRIGGER {table}_generation_{event.lower()}")
    op.drop_table("table_generations")
