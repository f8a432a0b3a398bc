"""Engine, sessions, SQLite pragmas, and "is the schema current?".

SQLite writes are serialised up front: every connection runs in WAL mode with foreign keys on
and a busy timeout, and a write transaction begins with BEGIN IMMEDIATE so that it takes the
write lock before reading (a deferred transaction that reads and then writes can fail with
"database is locked" whatever the timeout). The sqlite3 driver's own transaction handling is
switched off (isolation_level=None) and SQLAlchemy emits BEGIN itself, which is the documented
recipe that makes SAVEPOINT and rollback-per-test fixtures work on Python 3.11.
"""

from __future__ import annotations

import os
import random
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any, TypeVar

from sqlalchemy import Engine, create_engine, event
from sqlalchemy.engine import make_url
from sqlalchemy.exc import DBAPIError, IntegrityError, OperationalError
from sqlalchemy.orm import Session, sessionmaker

from plantdb.errors import ConflictError, PlantError, RaceLost, SchemaError

ENV_URL = "PLANTDB_DATABASE_URL"
DEFAULT_URL = "sqlite:///plantdb.sqlite"
SQLITE_BUSY_TIMEOUT_MS = 30_000
WRITE_OPTION = "plantdb_write"

T = TypeVar("T")


def resolve_url(url: str | None) -> str:
    """The database URL: the --db value, else $PLANTDB_DATABASE_URL, else ./plantdb.sqlite."""
    return url or os.environ.get(ENV_URL) or DEFAULT_URL


def _configure_sqlite(engine: Engine) -> None:
    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_connection: Any, _record: Any) -> None:
        dbapi_connection.isolation_level = None  # SQLAlchemy emits BEGIN itself, below
        cursor = dbapi_connection.cursor()
        cursor.execute("PRAGMA foreign_keys=ON")
        cursor.execute(f"PRAGMA busy_timeout={SQLITE_BUSY_TIMEOUT_MS}")
        cursor.execute("PRAGMA journal_mode=WAL")
        cursor.execute("PRAGMA synchronous=NORMAL")
        cursor.close()

    @event.listens_for(engine, "begin")
    def _on_begin(conn: Any) -> None:
        if conn.get_execution_options().get(WRITE_OPTION):
            conn.exec_driver_sql("BEGIN IMMEDIATE")
        else:
            conn.exec_driver_sql("BEGIN")


def make_engine(url: str) -> Engine:
    """An engine for any SQLAlchemy URL, with the SQLite discipline applied where it is SQLite."""
    try:
        parsed = make_url(url)
    except Exception as exc:
        raise PlantError(f"not a database URL: {url!r} ({exc})") from exc
    if parsed.get_backend_name() == "sqlite":
        database = parsed.database or ""
        if database and database != ":memory:" and not database.startswith("file:"):
            folder = Path(database).expanduser().resolve().parent
            if not folder.is_dir():
                raise PlantError(f"no such folder for the database file: {folder}")
        engine = create_engine(url)
        _configure_sqlite(engine)
        return engine
    try:
        return create_engine(url, pool_pre_ping=True)
    except Exception as exc:
        raise PlantError(f"cannot use database {parsed.render_as_string()}: {exc}") from exc


def is_sqlite(engine: Engine) -> bool:
    return engine.dialect.name == "sqlite"


class Database:
    """One database: its engine and the two kinds of session (reading and writing)."""

    def __init__(self, url: str) -> None:
        self.url = url
        self.engine = make_engine(url)
        self._read = sessionmaker(self.engine, expire_on_commit=False)
        write_engine = self.engine.execution_options(**{WRITE_OPTION: True})
        self._write = sessionmaker(write_engine, expire_on_commit=False)

    @property
    def dialect(self) -> str:
        return self.engine.dialect.name

    def reading(self) -> Session:
        """A session for reads; on SQLite its transactions are deferred."""
        return self._read()

    def writing(self) -> Session:
        """A session for writes; on SQLite each transaction begins IMMEDIATE."""
        return self._write()

    @contextmanager
    def read(self) -> Iterator[Session]:
        """A reading session in one transaction, closed afterwards."""
        with self._read() as session, session.begin():
            yield session

    def dispose(self) -> None:
        self.engine.dispose()


# SQLSTATEs PostgreSQL raises for a transaction that lost a race and may simply be retried.
RETRYABLE_SQLSTATES = {"40001", "40P01"}
# PostgreSQL's unique violation: a race only where a service says so (`racing_for`).
UNIQUE_VIOLATION = "23505"


def _sqlstate(exc: DBAPIError) -> str | None:
    found = getattr(exc.orig, "sqlstate", None)
    return found if isinstance(found, str) else None


def _retryable(exc: DBAPIError) -> bool:
    if _sqlstate(exc) in RETRYABLE_SQLSTATES:
        return True
    return isinstance(exc, OperationalError) and "database is locked" in str(exc.orig)


@contextmanager
def racing_for(what: str) -> Iterator[None]:
    """Within the block, a unique violation on PostgreSQL is a lost race (`RaceLost`).

    Under READ COMMITTED two clerks may both check that a fiber end is free; the second to
    insert it meets the first one's committed row. Only a service that checked those rows
    itself may say so: elsewhere a unique violation is a mistake, not retried. (SQLite
    serialises writers with BEGIN IMMEDIATE, so there it is never a race.)
    """
    try:
        yield
    except IntegrityError as exc:
        if _sqlstate(exc) != UNIQUE_VIOLATION:
            raise
        raise RaceLost(f"{what} just now; nothing was written; try again") from exc


def run_in_transaction(database: Database, work: Callable[[Session], T], *, attempts: int = 5) -> T:
    """Run `work` in one write transaction, committing once; retry lost races.

    A serialization failure or deadlock on PostgreSQL, a `RaceLost` (and a lock timeout on
    SQLite) rolls the whole transaction back and runs `work` again from the start, so it must
    not have effects outside the session. When every attempt loses, a `ConflictError`.
    """
    for attempt in range(1, attempts + 1):
        try:
            with database.writing() as session, session.begin():
                return work(session)
        except RaceLost:
            if attempt == attempts:
                raise
        except DBAPIError as exc:
            if not _retryable(exc):
                raise
            if attempt == attempts:
                raise ConflictError(
                    "the record is busy with another change; nothing was written; try again"
                ) from exc
        # Jitter keeps two losers of the same race from retrying in lockstep.
        time.sleep(0.05 * 2**attempt * random.uniform(0.5, 1.0))
    raise AssertionError("unreachable")


def migrations_folder() -> Path:
    """Where the Alembic scripts live (the `migrations` package beside `plantdb`)."""
    import migrations

    return Path(migrations.__file__).resolve().parent


def _alembic_config(engine: Engine) -> Any:
    from alembic.config import Config

    config = Config()
    config.set_main_option("script_location", str(migrations_folder()))
    # The option goes through ConfigParser interpolation: a literal % must be doubled.
    url = engine.url.render_as_string(hide_password=False).replace("%", "%%")
    config.set_main_option("sqlalchemy.url", url)
    return config


def schema_revisions(engine: Engine) -> tuple[str | None, str]:
    """(the database's current revision or None, the code's head revision)."""
    from alembic.runtime.migration import MigrationContext
    from alembic.script import ScriptDirectory

    head = ScriptDirectory.from_config(_alembic_config(engine)).get_current_head()
    assert head is not None
    if _missing_sqlite_file(engine):
        return None, head  # asking SQLite would create an empty file as a side effect
    try:
        with engine.connect() as connection:
            current = MigrationContext.configure(connection).get_current_revision()
    except OperationalError as exc:
        raise SchemaError(f"cannot open the database {_describe(engine)}: {exc.orig}") from exc
    return current, head


def _missing_sqlite_file(engine: Engine) -> bool:
    database = engine.url.database or ""
    if not is_sqlite(engine) or not database or database == ":memory:":
        return False
    return not database.startswith("file:") and not Path(database).expanduser().exists()


def _describe(engine: Engine) -> str:
    return engine.url.render_as_string(hide_password=True)


def require_current_schema(engine: Engine) -> None:
    """Refuse a database that is not initialised or whose schema differs from the code's."""
    current, head = schema_revisions(engine)
    if current is None:
        raise SchemaError(
            f"the database {_describe(engine)} is not initialised; run `plantdb init` first"
        )
    if current != head:
        _refuse_unknown_revision(engine, current)
        raise SchemaError(
            f"the database {_describe(engine)} is at schema {current}, behind the code's"
            f" {head}; run `plantdb init` to upgrade it"
        )


def _refuse_unknown_revision(engine: Engine, current: str) -> None:
    """Refuse a database stamped by a newer plantdb: no migration here knows its schema."""
    from alembic.script import ScriptDirectory

    script = ScriptDirectory.from_config(_alembic_config(engine))
    if current not in {rev.revision for rev in script.walk_revisions()}:
        raise SchemaError(
            f"the database {_describe(engine)} is at schema {current}, which this version of"
            " plantdb does not know (it is newer); upgrade plantdb"
        )


def upgrade_schema(engine: Engine) -> tuple[str | None, str]:
    """Create or upgrade the schema to the newest migration; safe to run again."""
    from alembic import command

    before, head = schema_revisions(engine)
    if before is not None and before != head:
        _refuse_unknown_revision(engine, before)
    config = _alembic_config(engine)
    with engine.connect() as connection:
        sqlite = is_sqlite(engine)
        if sqlite:
            # Batch migrations rebuild tables on SQLite; with foreign keys on, dropping the
            # old copy of a parent table would cascade-delete its children. The pragma only
            # takes effect outside a transaction, so set it on the driver before BEGIN.
            connection.connection.driver_connection.execute(  # type: ignore[union-attr]
                "PRAGMA foreign_keys=OFF"
            )
        with connection.begin():
            config.attributes["connection"] = connection
            command.upgrade(config, "head")
            if sqlite:
                broken = connection.exec_driver_sql("PRAGMA foreign_key_check").fetchall()
                if broken:
                    raise SchemaError(f"the upgrade left broken references: {broken[:5]}")
        if sqlite:
            connection.connection.driver_connection.execute(  # type: ignore[union-attr]
                "PRAGMA foreign_keys=ON"
            )
    return before, head
