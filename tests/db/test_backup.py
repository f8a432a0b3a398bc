"""`plantdb backup FILE`: a consistent copy taken while others write, and a restore that gives
back an identical dump. SQLite: the online backup API's copy opened as a database. PostgreSQL:
the bundle written, loaded into a fresh database, dumped again.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import select
from sqlalchemy.engine import make_url

from plantdb.backup import backup_database
from plantdb.db import Database, run_in_transaction
from plantdb.errors import PlantError
from plantdb.model import Change, Structure, StructureKind
from plantdb.records.bundle import dump_bundle, load_bundle, read_bundle_file
from plantdb.records.circuit_status import set_circuit_status
from tests.conftest import PlantCli, migrated_postgres_schema
from tests.networks import ashgrove


def dumped(url: str) -> dict[str, Any]:
    database = Database(url)
    try:
        with database.read() as session:
            return dump_bundle(session)
    finally:
        database.dispose()


def history(url: str) -> list[tuple[Any, ...]]:
    database = Database(url)
    try:
        with database.read() as session:
            rows = session.scalars(select(Change).order_by(Change.id))
            return [(c.id, c.at, c.actor, c.action, c.label, c.before, c.after) for c in rows]
    finally:
        database.dispose()


@pytest.fixture
def sqlite_town(tmp_path: Path, sqlite_template: Path) -> Iterator[Database]:
    """A SQLite file of its own holding ashgrove, with one status change in its history."""
    path = tmp_path / "town.sqlite"
    path.write_bytes(sqlite_template.read_bytes())
    database = Database(f"sqlite:///{path}")
    run_in_transaction(database, lambda s: load_bundle(s, ashgrove().data))
    run_in_transaction(database, lambda s: set_circuit_status(s, "AG-2", "reserved"))
    yield database
    database.dispose()


def test_a_sqlite_backup_opens_as_the_same_record(sqlite_town: Database, tmp_path: Path) -> None:
    target = tmp_path / "copies" / "town-backup.sqlite"
    target.parent.mkdir()
    result = PlantCli(sqlite_town.url)("backup", str(target), "--json")
    assert result.exit_code == 0, result.output
    document = json.loads(result.stdout)
    assert document["method"] == "sqlite online backup" and document["schema"]
    assert document["bytes"] == target.stat().st_size > 0
    copy = f"sqlite:///{target}"
    assert dumped(copy) == dumped(sqlite_town.url)
    # The whole database is copied, the history with it.
    assert history(copy) == history(sqlite_town.url) and len(history(copy)) > 30
    assert PlantCli(copy)("summary").exit_code == 0  # current schema: usable as it is
    assert [p.name for p in target.parent.iterdir()] == ["town-backup.sqlite"]


def test_a_sqlite_backup_taken_while_someone_writes(sqlite_town: Database, tmp_path: Path) -> None:
    """Another clerk holds the write lock mid-change: the copy is made all the same, and holds
    the record as last committed."""
    committed = dumped(sqlite_town.url)
    target = tmp_path / "during.sqlite"
    other = Database(sqlite_town.url)
    try:
        with other.writing() as session, session.begin():
            session.add(Structure(label="MH-NEW", kind=StructureKind.MANHOLE, lon=-0.6, lat=51.0))
            session.flush()  # written, not committed: this connection holds the write lock
            backup_database(sqlite_town, target)
        assert dumped(f"sqlite:///{target}") == committed
        labels = [s["label"] for s in dumped(sqlite_town.url)["structures"]]
        assert "MH-NEW" in labels
    finally:
        other.dispose()


def test_backup_refusals(sqlite_town: Database, tmp_path: Path) -> None:
    plant = PlantCli(sqlite_town.url)
    target = tmp_path / "kept.sqlite"
    target.write_bytes(b"an earlier backup")
    refused = plant("backup", str(target))
    assert refused.exit_code == 1
    assert refused.stderr == (
        f"plantdb: {target} already exists; give a new file (or --overwrite to replace it)\n"
    )
    assert target.read_bytes() == b"an earlier backup"
    assert plant("backup", str(target), "--overwrite").exit_code == 0
    assert dumped(f"sqlite:///{target}") == dumped(sqlite_town.url)
    itself = Path(make_url(sqlite_town.url).database or "")
    same = plant("backup", str(itself), "--overwrite")
    assert same.exit_code == 1 and "is the database itself" in same.stderr
    nowhere = plant("backup", str(tmp_path / "no" / "such" / "folder.sqlite"))
    assert nowhere.exit_code == 1 and "no such folder for the backup" in nowhere.stderr
    with pytest.raises(PlantError, match="not one"):
        backup_database(Database("sqlite://"), tmp_path / "memory.sqlite")


def test_a_damaged_copy_is_not_kept(
    sqlite_town: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from plantdb import backup

    def damaged(path: Path) -> None:
        copy = sqlite3.connect(path)
        assert copy.execute("PRAGMA quick_check").fetchone() == ("ok",)
        copy.close()
        raise PlantError("the copy failed its integrity check (('page 2 is never used',))")

    monkeypatch.setattr(backup, "_check_sqlite_copy", damaged)
    target = tmp_path / "bad.sqlite"
    with pytest.raises(PlantError, match="integrity check"):
        backup_database(sqlite_town, target)
    assert list(tmp_path.glob("*bad.sqlite*")) == []


# -- PostgreSQL ------------------------------------------------------------------------------


@pytest.fixture
def fresh_postgres() -> Iterator[str]:
    """An initialised, empty PostgreSQL schema to restore into."""
    with migrated_postgres_schema("plantdb_restore") as url:
        yield url


@pytest.mark.postgres
@pytest.mark.parametrize("db_url", ["postgresql"], indirect=True)
def test_a_postgresql_backup_restores_to_an_identical_dump(
    db_url: str, fresh_postgres: str, tmp_path: Path
) -> None:
    source = Database(db_url)
    try:
        run_in_transaction(source, lambda s: load_bundle(s, ashgrove().data))
        run_in_transaction(source, lambda s: set_circuit_status(s, "AG-1", "out_of_service"))
    finally:
        source.dispose()
    target = tmp_path / "plant-backup.json"
    result = PlantCli(db_url)("backup", str(target))
    assert result.exit_code == 0, result.output
    first, note = result.stdout.splitlines()
    assert first.startswith("backed up postgresql+psycopg://") and "(bundle, " in first
    assert note.startswith("note: the bundle holds the plant record; for a complete copy")
    assert "pg_dump --format=custom --file=plantdb.dump 'postgresql://" in note
    assert "pg_restore --clean --if-exists" in note
    restored = PlantCli(fresh_postgres)("load", str(target))
    assert restored.exit_code == 0, restored.output
    assert dumped(fresh_postgres) == dumped(db_url)
    assert read_bundle_file(target) == dumped(db_url)
