"""Alembic environment: runs on a connection handed in by plantdb, or on $PLANTDB_DATABASE_URL."""

from __future__ import annotations

from alembic import context

from plantdb.db import make_engine, resolve_url
from plantdb.model import Base

config = context.config
target_metadata = Base.metadata


def _configure(connection: object) -> None:
    context.configure(
        connection=connection,
        target_metadata=target_metadata,
        # Batch mode rebuilds tables on SQLite, which cannot ALTER most constraints in place.
        render_as_batch=True,
        compare_type=True,
    )


def run_migrations_online() -> None:
    connection = config.attributes.get("connection")
    if connection is not None:
        _configure(connection)
        with context.begin_transaction():
            context.run_migrations()
        return
    url = config.get_main_option("sqlalchemy.url") or resolve_url(None)
    engine = make_engine(url)
    with engine.connect() as fresh:
        _configure(fresh)
        with context.begin_transaction():
            context.run_migrations()
    engine.dispose()


if context.is_offline_mode():
    raise SystemExit("plantdb migrations run online only: give them a database")
run_migrations_online()
