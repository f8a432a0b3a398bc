"""Shared fixtures: a fresh, migrated database per test, on SQLite and on PostgreSQL.

Every database is made by the real migrations. SQLite tests copy a migrated template file;
PostgreSQL tests use one schema per test worker (migrated once) and empty its tables before
each test. PostgreSQL runs when PLANTDB_TEST_POSTGRES_URL is set; with
PLANTDB_REQUIRE_POSTGRES=1 (CI) a missing server fails the run instead of skipping.
"""

from __future__ import annotations

import os
import shutil
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner, Result
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

from plantdb.cli import cli
from plantdb.db import Database, upgrade_schema
from plantdb.model import Base

POSTGRES_URL = os.environ.get("PLANTDB_TEST_POSTGRES_URL")
REQUIRE_POSTGRES = os.environ.get("PLANTDB_REQUIRE_POSTGRES") == "1"
NO_POSTGRES_REASON = "PostgreSQL tests need PLANTDB_TEST_POSTGRES_URL (CI sets it)"

# Where the web app keeps its generated secret key (webui.ENV_INSTANCE).
ENV_INSTANCE = "PLANTDB_INSTANCE_PATH"

BACKENDS = ["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)]


@pytest.fixture(scope="session", autouse=True)
def instance_folder(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Path]:
    """Web apps made by the tests (and `plantdb serve` processes they start) keep their
    generated secret key in a temporary instance folder, never in the checkout."""
    folder = tmp_path_factory.mktemp("instance")
    before = os.environ.get(ENV_INSTANCE)
    os.environ[ENV_INSTANCE] = str(folder)
    yield folder
    if before is None:
        os.environ.pop(ENV_INSTANCE, None)
    else:
        os.environ[ENV_INSTANCE] = before


@pytest.fixture(scope="session")
def sqlite_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A SQLite file migrated to head once per test session."""
    path = tmp_path_factory.mktemp("template") / "plant.sqlite"
    database = Database(f"sqlite:///{path}")
    upgrade_schema(database.engine)
    database.dispose()
    return path


@contextmanager
def migrated_postgres_schema(prefix: str) -> Iterator[str]:
    """The URL of a PostgreSQL schema of its own, migrated to head, dropped afterwards.

    Named `prefix`, the test worker and the process id, which keeps two test runs on one
    server (two people, two checkouts) apart. Skipped without a server, failed under
    PLANTDB_REQUIRE_POSTGRES=1.
    """
    if not POSTGRES_URL:
        if REQUIRE_POSTGRES:
            pytest.fail("PLANTDB_REQUIRE_POSTGRES=1 but PLANTDB_TEST_POSTGRES_URL is not set")
        pytest.skip(NO_POSTGRES_REASON)
    schema = f"{prefix}_{os.environ.get('PYTEST_XDIST_WORKER', 'main')}_{os.getpid()}"
    admin = create_engine(POSTGRES_URL)
    try:
        with admin.begin() as connection:
            connection.execute(text(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE'))
            connection.execute(text(f'CREATE SCHEMA "{schema}"'))
    except Exception as exc:  # noqa: BLE001 - any failure to reach the server
        admin.dispose()
        message = f"PostgreSQL at {POSTGRES_URL} is not usable: {exc}"
        if REQUIRE_POSTGRES:
            pytest.fail(message)
        pytest.skip(message)
    url = make_url(POSTGRES_URL).update_query_dict({"options": f"-csearch_path={schema}"})
    rendered = url.render_as_string(hide_password=False)
    database = Database(rendered)
    upgrade_schema(database.engine)
    database.dispose()
    try:
        yield rendered
    finally:
        with admin.begin() as connection:
            connection.execute(text(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE'))
        admin.dispose()


@pytest.fixture(scope="session")
def postgres_schema_url() -> Iterator[str]:
    """A PostgreSQL schema of this test worker's own, migrated to head once."""
    with migrated_postgres_schema("plantdb_test") as url:
        yield url


def _empty_postgres(url: str) -> None:
    engine = create_engine(url)
    tables = ", ".join(f'"{t.name}"' for t in Base.metadata.sorted_tables)
    try:
        with engine.begin() as connection:
            connection.execute(text(f"TRUNCATE {tables} RESTART IDENTITY CASCADE"))
    finally:
        engine.dispose()


@pytest.fixture(params=BACKENDS)
def db_url(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    """The URL of a fresh, migrated, empty database (SQLite file or PostgreSQL schema)."""
    if request.param == "sqlite":
        template: Path = request.getfixturevalue("sqlite_template")
        path = tmp_path / "plant.sqlite"
        shutil.copyfile(template, path)
        return f"sqlite:///{path}"
    url: str = request.getfixturevalue("postgres_schema_url")
    _empty_postgres(url)
    return url


@pytest.fixture
def database(db_url: str) -> Iterator[Database]:
    """A `Database` on a fresh, migrated, empty database."""
    db = Database(db_url)
    yield db
    db.dispose()


class PlantCli:
    """Runs `plantdb` in-process against one database, as a user would."""

    def __init__(self, url: str) -> None:
        self.url = url
        self.runner = CliRunner()

    def __call__(self, *args: str, input: str | None = None, db: bool = True) -> Result:
        argv = [*args, "--db", self.url] if db else list(args)
        return self.runner.invoke(cli, argv, input=input, catch_exceptions=False)

    def json(self, *args: str) -> Any:
        import json

        result = self(*args, "--json")
        assert result.exit_code == 0, result.output + (result.stderr or "")
        return json.loads(result.stdout)


@pytest.fixture
def plant(db_url: str) -> PlantCli:
    """The `plantdb` command bound to a fresh database."""
    return PlantCli(db_url)
