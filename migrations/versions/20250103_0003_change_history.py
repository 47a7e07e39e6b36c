"""Append-only change history of plugs and heads.

One row per create, replace or delete (API or import): who (the API key's name), when,
and the record before and after as the API shows it. Triggers refuse UPDATE and DELETE
on the table, on SQLite and PostgreSQL alike, so not even a mistaken script of ours can
rewrite the past; dropping the table (downgrade) is the only way out.

Revision ID: 0003
Revises: 0002
Create Date: 2025-01-03 00:00:00
"""
from __future__ import annotations

from typing import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0003"
down_revision: str | Sequence[str] | None = "0002"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

REFUSAL = "change_history is append-only"


def upgrade() -> None:
    op.create_table(
        "change_history",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("resource", sa.String(8), nullable=False),
        sa.Column("identifier", sa.String(64), nullable=False),
        sa.Column("action", sa.String(16), nullable=False),
        sa.Column("actor", sa.String(100), nullable=False),
        sa.Column("source", sa.String(16), nullable=False),
        sa.Column("changed_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("version_before", sa.Integer(), nullable=True),
        sa.Column("version_after", sa.Integer(), nullable=True),
        sa.Column("before", sa.JSON(), nullable=True),
        sa.Column("after", sa.JSON(), nullable=True),
        sa.PrimaryKeyConstraint("id", name="pk_change_history"),
    )
    op.create_index("ix_change_history_record", "change_history", ["resource", "identifier", "id"])

    if op.get_bind().dialect.name == "postgresql":
        op.execute(f"""
            CREATE FUNCTION change_history_refuse() RETURNS trigger LANGUAGE plpgsql AS $$
            BEGIN RAISE EXCEPTION '{REFUSAL}'; END $$
        """)
        op.execute("""
            CREATE TRIGGER change_history_append_only BEFORE UPDATE OR DELETE ON change_history
            FOR EACH ROW EXECUTE FUNCTION change_history_refuse()
        """)
    else:
        for event in ("UPDATE", "DELETE"):
            op.execute(f"""
                CREATE TRIGGER change_history_no_{event.lower()} BEFORE {event} ON change_history
                BEGIN SELECT RAISE(ABORT, '{REFUSAL}'); END
            """)


def downgrade() -> None:
    # Dropping the table drops its triggers on both databases.
    op.drop_index("ix_change_history_record", table_name="change_history")
    op.drop_table("change_history")
    if op.get_bind().dialect.name == "postgresql":
        op.execute("DROP FUNCTION change_history_refuse()")
