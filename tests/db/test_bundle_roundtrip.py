"""Bundles load whole and dump back identically, on SQLite and PostgreSQL."""

from __future__ import annotations

import json
from pathlib import Path

from plantdb.db import Database, run_in_transaction, upgrade_schema
from plantdb.records.bundle import dump_bundle, load_bundle
from seed_data.demo_town import build_demo_bundle
from tests.conftest import migrated_postgres_schema
from tests.networks import ashgrove


def _dump(database: Database) -> dict:
    with database.read() as session:
        return dump_bundle(session)


def test_loaded_bundle_dumps_to_what_was_loaded(database: Database) -> None:
    bundle = ashgrove().data
    run_in_transaction(database, lambda s: load_bundle(s, bundle))
    dumped = _dump(database)
    assert dumped["splices"] == [
        {
            "closure": "AC-1",
            "a": "F-1:5/A",
            "b": "D-1:1",
            "tray": 1,
            "slot": 1,
            "method": "fusion",
            "loss_db": 0.05,
        }
    ]
    assert [c["label"] for c in dumped["circuits"]] == ["AG-1", "AG-2"]
    assert dumped["cables"][0]["stations"] == bundle["cables"][0]["stations"]
    assert dumped["cables"][0]["slack"] == [{"at": "AH-2", "length_m": 12.0}]


def _reload(first: dict, url: str) -> dict:
    """Load a dump into the empty, migrated database at `url` and dump it again."""
    copy = Database(url)
    try:
        upgrade_schema(copy.engine)
        run_in_transaction(copy, lambda s: load_bundle(s, json.loads(json.dumps(first))))
        return _dump(copy)
    finally:
        copy.dispose()


def test_demo_town_round_trips_through_an_empty_database(
    database: Database, tmp_path: Path
) -> None:
    """A dump loads back identically into an empty database of the same kind and of the
    other kind (a move from the embedded database to a server, or back)."""
    run_in_transaction(database, lambda s: load_bundle(s, build_demo_bundle()))
    first = _dump(database)
    assert _reload(first, f"sqlite:///{tmp_path / 'copy.sqlite'}") == first
    if database.engine.dialect.name == "postgresql":
        with migrated_postgres_schema("plantdb_roundtrip") as url:
            assert _reload(first, url) == first


def test_a_partial_bundle_adds_to_the_record(database: Database) -> None:
    whole = ashgrove().data
    places = {k: v for k, v in whole.items() if k not in ("splices", "terminations", "circuits")}
    run_in_transaction(database, lambda s: load_bundle(s, places))
    rest = {
        "format": "plantdb-bundle",
        "version": 1,
        "splices": whole["splices"],
        "terminations": whole["terminations"],
        "circuits": whole["circuits"],
    }
    counts = run_in_transaction(database, lambda s: load_bundle(s, rest))
    assert counts == {"cuts": 1, "splices": 1, "terminations": 16, "circuits": 2}
    assert len(_dump(database)["terminations"]) == 16
