"""The schema and the database discipline: migrations match the models, `init` is safe to run
again, other commands refuse a database that is not current, SQLite is set up to serialise
writers, and lost races are retried.
"""

from __future__ import annotations

import json
import os
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from alembic import command
from sqlalchemy import create_engine, event, inspect, select, text
from sqlalchemy.engine import make_url
from sqlalchemy.exc import DBAPIError, IntegrityError, OperationalError
from sqlalchemy.orm import Session

from plantdb.db import (
    SQLITE_BUSY_TIMEOUT_MS,
    Database,
    _alembic_config,
    run_in_transaction,
    schema_revisions,
)
from plantdb.errors import ConflictError
from plantdb.model import Structure, StructureKind
from tests.conftest import BACKENDS, NO_POSTGRES_REASON, POSTGRES_URL, REQUIRE_POSTGRES, PlantCli
from tests.networks import ashgrove

UNKNOWN_REVISION = "9999_from_a_newer_plantdb"


@pytest.fixture(params=BACKENDS)
def blank_url(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    """The URL of a database nobody has initialised: a new SQLite file or an empty schema."""
    if request.param == "sqlite":
        yield f"sqlite:///{tmp_path / 'blank.sqlite'}"
        return
    if not POSTGRES_URL:
        if REQUIRE_POSTGRES:
            pytest.fail("PLANTDB_REQUIRE_POSTGRES=1 but PLANTDB_TEST_POSTGRES_URL is not set")
        pytest.skip(NO_POSTGRES_REASON)
    schema = "plantdb_blank_" + os.environ.get("PYTEST_XDIST_WORKER", "main")
    admin = create_engine(POSTGRES_URL)
    with admin.begin() as connection:
        connection.execute(text(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE'))
        connection.execute(text(f'CREATE SCHEMA "{schema}"'))
    url = make_url(POSTGRES_URL).update_query_dict({"options": f"-csearch_path={schema}"})
    yield url.render_as_string(hide_password=False)
    with admin.begin() as connection:
        connection.execute(text(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE'))
    admin.dispose()


def _stamp(url: str, revision: str) -> None:
    engine = create_engine(url)
    with engine.begin() as connection:
        connection.execute(text("UPDATE alembic_version SET version_num = :r"), {"r": revision})
    engine.dispose()


@pytest.fixture
def restamp(db_url: str) -> Iterator[str]:
    """The database's current revision; it is put back afterwards (a PostgreSQL test schema
    outlives the test, and emptying its tables leaves alembic_version alone)."""
    engine = create_engine(db_url)
    current, _head = schema_revisions(engine)
    engine.dispose()
    assert current is not None
    yield current
    _stamp(db_url, current)


def test_models_and_migrations_agree(database: Database) -> None:
    """`alembic check`: autogenerate against the migrated database finds nothing to add."""
    command.check(_alembic_config(database.engine))


def test_init_creates_then_says_already_current(blank_url: str) -> None:
    plant = PlantCli(blank_url)
    first = plant("init", "--json")
    assert first.exit_code == 0, first.output
    created = json.loads(first.stdout)
    assert created["state"] == "created" and created["previous"] is None
    again = plant("init")
    assert again.exit_code == 0, again.output
    assert f"schema {created['schema']} already current" in again.stdout
    assert plant("summary").exit_code == 0


@pytest.mark.parametrize(
    "command_line",
    [["dump"], ["load", "BUNDLE"], ["demo"], ["summary"], ["summary", "--json"]],
    ids=["dump", "load", "demo", "summary", "summary-json"],
)
def test_other_commands_refuse_an_uninitialised_database(
    blank_url: str, tmp_path: Path, command_line: list[str]
) -> None:
    bundle = tmp_path / "ashgrove.json"
    bundle.write_text(json.dumps(ashgrove().data), encoding="utf-8")
    argv = [str(bundle) if arg == "BUNDLE" else arg for arg in command_line]
    result = PlantCli(blank_url)(*argv)
    assert result.exit_code == 1
    assert "Traceback" not in result.output and result.stdout == ""
    first = result.stderr.splitlines()[0]
    assert "not initialised" in first and "plantdb init" in first, first
    # Refusing wrote nothing: still no schema at all.
    engine = create_engine(blank_url)
    assert inspect(engine).get_table_names() == []
    engine.dispose()


def test_a_database_from_a_newer_plantdb_is_refused(
    plant: PlantCli, db_url: str, restamp: str
) -> None:
    _stamp(db_url, UNKNOWN_REVISION)
    for command_line in (["summary"], ["dump"], ["init"]):
        result = plant(*command_line)
        assert result.exit_code == 1, command_line
        assert "Traceback" not in result.output
        assert result.stderr.startswith("plantdb: the database ")
        assert (
            f"is at schema {UNKNOWN_REVISION}, which this version of plantdb does not know"
            in result.stderr
        )
        assert result.stderr.rstrip().endswith("upgrade plantdb")


def test_a_database_behind_the_code_is_sent_to_init(
    plant: PlantCli, db_url: str, restamp: str
) -> None:
    from alembic.script import ScriptDirectory

    engine = create_engine(db_url)
    current, head = schema_revisions(engine)
    script = ScriptDirectory.from_config(_alembic_config(engine))
    engine.dispose()
    assert current == head
    older = [rev.revision for rev in script.walk_revisions() if rev.revision != head]
    assert older, "needs a migration before the newest one"
    _stamp(db_url, older[0])
    result = plant("summary")
    assert result.exit_code == 1 and "Traceback" not in result.output
    assert f"behind the code's {head}; run `plantdb init`" in result.stderr


# -- SQLite's discipline -------------------------------------------------------------------


@pytest.fixture
def sqlite_database(tmp_path: Path) -> Iterator[Database]:
    """A migrated SQLite file of its own (these tests are about SQLite only)."""
    from plantdb.db import upgrade_schema

    database = Database(f"sqlite:///{tmp_path / 'plant.sqlite'}")
    upgrade_schema(database.engine)
    yield database
    database.dispose()


def test_sqlite_connections_are_set_up(sqlite_database: Database) -> None:
    with sqlite_database.engine.connect() as connection:

        def pragma(name: str) -> Any:
            return connection.exec_driver_sql(f"PRAGMA {name}").scalar()

        assert pragma("foreign_keys") == 1
        assert pragma("journal_mode") == "wal"
        assert pragma("busy_timeout") == SQLITE_BUSY_TIMEOUT_MS
        assert SQLITE_BUSY_TIMEOUT_MS >= 1000


def _impatient(database: Database) -> Database:
    """Give up on a lock after 50 ms instead of the usual timeout, to keep the test quick."""

    def shorten(dbapi_connection: Any, _record: Any) -> None:
        dbapi_connection.execute("PRAGMA busy_timeout=50")

    event.listen(database.engine, "connect", shorten)
    return database


def test_a_write_transaction_takes_the_write_lock_at_once(sqlite_database: Database) -> None:
    """BEGIN IMMEDIATE: a second writer waits (here: fails fast), a reader carries on."""
    url = sqlite_database.url
    with sqlite_database.writing() as writer, writer.begin():
        # Only a read so far: under a deferred BEGIN this would hold no write lock at all.
        writer.execute(select(Structure.id)).all()
        other = _impatient(Database(url))
        try:
            started = time.monotonic()
            with (
                pytest.raises(OperationalError, match="database is locked"),
                other.writing() as second,
                second.begin(),
            ):
                second.execute(select(Structure.id)).all()
            assert time.monotonic() - started < 5
            with other.read() as reader:
                assert reader.execute(select(Structure.id)).all() == []
        finally:
            other.dispose()


def _structure(label: str) -> Structure:
    return Structure(label=label, kind=StructureKind.MANHOLE, lon=-0.6, lat=51.0)


def _labels(database: Database) -> list[str]:
    with database.read() as session:
        return list(session.scalars(select(Structure.label).order_by(Structure.label)))


def test_a_savepoint_rolls_back_alone(database: Database) -> None:
    with database.writing() as session, session.begin():
        session.add(_structure("KEPT"))
        session.flush()
        nested = session.begin_nested()
        session.add(_structure("DROPPED"))
        session.flush()
        nested.rollback()
        # A failing statement inside a savepoint leaves the outer transaction usable.
        with pytest.raises(IntegrityError), session.begin_nested():
            session.add(_structure("KEPT"))
            session.flush()
        session.add(_structure("ALSO-KEPT"))
    assert _labels(database) == ["ALSO-KEPT", "KEPT"]


class _LostRace(Exception):
    """Stands in for the driver's error when PostgreSQL cancels a serialisable transaction."""

    sqlstate = "40001"


def test_a_lost_race_is_retried_and_committed_once(database: Database) -> None:
    attempts: list[int] = []

    def work(session: Session) -> str:
        attempts.append(1)
        session.add(_structure(f"TRY-{len(attempts)}"))
        session.flush()
        if len(attempts) == 1:
            raise DBAPIError("UPDATE ...", None, _LostRace("could not serialize access"))
        return "done"

    assert run_in_transaction(database, work) == "done"
    assert len(attempts) == 2
    assert _labels(database) == ["TRY-2"]


def test_a_race_lost_every_time_is_refused_as_busy(database: Database) -> None:
    attempts: list[int] = []

    def work(session: Session) -> None:
        attempts.append(1)
        session.add(_structure(f"TRY-{len(attempts)}"))
        session.flush()
        raise DBAPIError("UPDATE ...", None, _LostRace("could not serialize access"))

    with pytest.raises(ConflictError, match="busy with another change"):
        run_in_transaction(database, work, attempts=2)
    assert len(attempts) == 2
    assert _labels(database) == []


def test_other_database_errors_are_not_retried(database: Database) -> None:
    attempts: list[int] = []

    def work(session: Session) -> None:
        attempts.append(1)
        session.add_all([_structure("TWICE"), _structure("TWICE")])
        session.flush()

    with pytest.raises(IntegrityError):
        run_in_transaction(database, work)
    assert len(attempts) == 1
    assert _labels(database) == []
