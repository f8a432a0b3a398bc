"""The complete-copy recipe docs/operations.md gives for PostgreSQL, run as written there:
`pg_dump --format=custom`, then `pg_restore --no-owner` into a new, empty database, or
`pg_restore --clean --if-exists` over the old one. People, history and the record all come
back. Runs against the test server in databases of its own, dropped afterwards.
"""

from __future__ import annotations

import os
import shutil
import subprocess
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import create_engine, func, select, text
from sqlalchemy.engine import URL, make_url

from plantdb.db import Database, run_in_transaction, upgrade_schema
from plantdb.model import Change, Person, Splice
from plantdb.people import add_person
from plantdb.records.bundle import dump_bundle, load_bundle
from tests.conftest import NO_POSTGRES_REASON, POSTGRES_URL, REQUIRE_POSTGRES
from tests.networks import ashgrove

PASSWORD = "long enough and not common 7"


def _need_tools() -> None:
    if not POSTGRES_URL:
        if REQUIRE_POSTGRES:
            pytest.fail("PLANTDB_REQUIRE_POSTGRES=1 but PLANTDB_TEST_POSTGRES_URL is not set")
        pytest.skip(NO_POSTGRES_REASON)
    missing = [tool for tool in ("pg_dump", "pg_restore") if shutil.which(tool) is None]
    if missing:
        message = f"the backup recipe needs {', '.join(missing)} (PostgreSQL's client tools)"
        if REQUIRE_POSTGRES:
            pytest.fail(message)
        pytest.skip(message)


def _plain(url: URL) -> str:
    """The URL as libpq's tools take it (no SQLAlchemy driver name)."""
    return url.set(drivername="postgresql").render_as_string(hide_password=False)


@pytest.fixture
def two_databases() -> Iterator[tuple[URL, URL]]:
    """A source and a restore database of this test's own on the test server."""
    _need_tools()
    assert POSTGRES_URL is not None
    base = make_url(POSTGRES_URL)
    stem = f"plantdb_recipe_{os.environ.get('PYTEST_XDIST_WORKER', 'main')}_{os.getpid()}"
    names = (f"{stem}_source", f"{stem}_restored")
    admin = create_engine(base, isolation_level="AUTOCOMMIT")
    try:
        with admin.connect() as connection:
            for name in names:
                connection.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
                connection.execute(text(f'CREATE DATABASE "{name}"'))
        yield base.set(database=names[0]), base.set(database=names[1])
    finally:
        with admin.connect() as connection:
            for name in names:
                connection.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()


def _state(url: URL) -> dict[str, Any]:
    """The record as a bundle, the people, and the history's rows."""
    database = Database(url.render_as_string(hide_password=False))
    try:
        with database.read() as session:
            return {
                "bundle": dump_bundle(session),
                "people": sorted(session.scalars(select(Person.name))),
                "changes": session.scalar(select(func.count(Change.id))),
            }
    finally:
        database.dispose()


def _run(*argv: str) -> None:
    done = subprocess.run(argv, capture_output=True, text=True, check=False, timeout=120)
    assert done.returncode == 0, done.stderr


def test_the_pg_dump_recipe_restores_everything(
    two_databases: tuple[URL, URL], tmp_path: Path
) -> None:
    source, restored = two_databases
    database = Database(source.render_as_string(hide_password=False))
    try:
        upgrade_schema(database.engine)
        run_in_transaction(database, lambda s: load_bundle(s, ashgrove().data))
        run_in_transaction(database, lambda s: add_person(s, "morgan", "admin", PASSWORD))
    finally:
        database.dispose()
    before = _state(source)
    assert before["people"] == ["morgan"] and before["changes"] > 0

    dump = tmp_path / "plant.dump"
    _run("pg_dump", "--format=custom", f"--file={dump}", _plain(source))
    # Into a new, empty database.
    _run("pg_restore", "--no-owner", f"--dbname={_plain(restored)}", str(dump))
    assert _state(restored) == before

    # Over the old one, after a mistake there: the dump's record comes back.
    engine = create_engine(source)
    try:
        with engine.begin() as connection:
            connection.execute(text("DELETE FROM fiber_end WHERE splice_id IS NOT NULL"))
            connection.execute(Splice.__table__.delete())
    finally:
        engine.dispose()
    assert _state(source)["bundle"] != before["bundle"]
    over = f"--dbname={_plain(source)}"
    _run("pg_restore", "--clean", "--if-exists", "--no-owner", over, str(dump))
    assert _state(source) == before
