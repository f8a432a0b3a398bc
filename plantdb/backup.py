"""A consistent copy of the database, taken while others keep working.

SQLite: the file is copied with SQLite's online backup API in one pass, which reads one
consistent snapshot; in WAL mode writers carry on meanwhile and their uncommitted work is not
copied. The copy is checked (`PRAGMA integrity_check`) before it takes the file's name.
PostgreSQL: the whole record is written as a bundle from one REPEATABLE READ snapshot; the
complete copy (people and history included) is pg_dump's job, and the recipe is printed.
"""

from __future__ import annotations

import json
import os
import sqlite3
from pathlib import Path
from typing import Any

from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session

from plantdb.db import Database, schema_revisions
from plantdb.errors import PlantError
from plantdb.files import written_whole
from plantdb.records.bundle import dump_bundle


def backup_database(database: Database, target: Path, *, overwrite: bool = False) -> dict[str, Any]:
    """Copy the database to `target`; what was written, as a document."""
    if target.exists() and not overwrite:
        raise PlantError(f"{target} already exists; give a new file (or --overwrite to replace it)")
    if not target.resolve().parent.is_dir():
        raise PlantError(f"no such folder for the backup: {target.resolve().parent}")
    current, _head = schema_revisions(database.engine)
    if database.dialect == "sqlite":
        document = _sqlite_backup(database, target)
    elif database.dialect == "postgresql":
        document = _bundle_backup(database, target)
    else:
        raise PlantError(f"backup knows SQLite and PostgreSQL, not {database.dialect}")
    document.update(
        database=database.engine.url.render_as_string(hide_password=True),
        backup=str(target),
        bytes=target.stat().st_size,
        schema=current,
    )
    return document


def _source_file(database: Database) -> Path:
    name = database.engine.url.database or ""
    if not name or name == ":memory:" or name.startswith("file:"):
        raise PlantError("backup copies a SQLite database file; this database is not one")
    return Path(name).expanduser().resolve()


def _partial(target: Path) -> Path:
    """Where a copy is written before it takes its name: never half a backup under it."""
    return target.with_name(f".{target.name}.partial-{os.getpid()}")


def _sqlite_backup(database: Database, target: Path) -> dict[str, Any]:
    source = _source_file(database)
    if target.resolve() == source:
        raise PlantError(f"{target} is the database itself; back it up to another file")
    partial = _partial(target)
    partial.unlink(missing_ok=True)
    try:
        with database.engine.connect() as connection:
            driver = connection.connection.driver_connection
            assert isinstance(driver, sqlite3.Connection)
            copy = sqlite3.connect(partial)
            try:
                driver.backup(copy)  # all pages in one step: one consistent snapshot
            finally:
                copy.close()
        _check_sqlite_copy(partial)
        partial.replace(target)
    finally:
        for leftover in (partial, *(Path(f"{partial}{end}") for end in ("-wal", "-shm"))):
            leftover.unlink(missing_ok=True)
    return {"method": "sqlite online backup"}


def _check_sqlite_copy(path: Path) -> None:
    copy = sqlite3.connect(path)
    try:
        verdict = copy.execute("PRAGMA integrity_check").fetchone()
    finally:
        copy.close()
    if not verdict or verdict[0] != "ok":
        raise PlantError(f"the copy failed its integrity check ({verdict}); nothing was kept")


def _bundle_backup(database: Database, target: Path) -> dict[str, Any]:
    # One snapshot for every query of the dump: under the default READ COMMITTED, a change
    # committed between two queries could leave a splice without the cable it joins.
    with database.engine.connect() as connection:
        snapshot = connection.execution_options(isolation_level="REPEATABLE READ")
        with Session(bind=snapshot) as session, session.begin():
            bundle = dump_bundle(session)
    with written_whole(target) as partial:
        partial.write_text(json.dumps(bundle, indent=1, ensure_ascii=False) + "\n", "utf-8")
    return {"method": "bundle", "hint": pg_dump_hint(database.url)}


def pg_dump_hint(url: str) -> str:
    """The documented pg_dump recipe for a complete copy of a PostgreSQL database."""
    parsed = make_url(url).set(drivername="postgresql")
    where = parsed.render_as_string(hide_password=True)
    return (
        "the bundle holds the plant record; for a complete copy (people, history and"
        f" settings too) run: pg_dump --format=custom --file=plantdb.dump '{where}'"
        " and restore it with: pg_restore --clean --if-exists --dbname=URL plantdb.dump"
    )
