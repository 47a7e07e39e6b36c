"""Alembic environment: the database URL comes from the same settings as the service.

`plugfit db upgrade` passes the URL in `config.attributes["database_url"]`; a bare
`alembic -c migrations/alembic.ini ...` (used to write new revisions) builds the app's
settings from the environment instead, so both reach the same database.
"""
from __future__ import annotations

from alembic import context

from service.store.models import Base

config = context.config
target_metadata = Base.metadata


def _database_url() -> str:
    url = config.attributes.get("database_url")
    if url:
        return url
    from service.web import create_app

    return create_app().config["DATABASE_URL"]


def run_migrations_offline() -> None:
    """Emit SQL to standard output instead of running it (`alembic upgrade --sql`)."""
    url = _database_url()
    context.configure(
        url=url,
        target_metadata=target_metadata,
        literal_binds=True,
        render_as_batch=url.startswith("sqlite"),
        compare_type=True,
    )
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_online() -> None:
    from service.store.db import make_engine

    url = _database_url()
    engine = make_engine(url)
    try:
        with engine.connect() as connection:
            context.configure(
                connection=connection,
                target_metadata=target_metadata,
                # SQLite cannot ALTER most things; batch mode copies the table instead.
                render_as_batch=connection.dialect.name == "sqlite",
                compare_type=True,
            )
            with context.begin_transaction():
                context.run_migrations()
    finally:
        engine.dispose()


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
