"""The synthetic city generator: deterministic, sound, and its kept circuit paths true."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from sqlalchemy import select

from plantdb.db import Database
from plantdb.model import Circuit, CircuitPathItem
from plantdb.trace.circuits import refresh_circuits
from plantdb.trace.health import check_record
from tests.conftest import PlantCli


def _items(database: Database) -> list[tuple[Any, ...]]:
    columns = [c for c in CircuitPathItem.__table__.c if c.name != "id"]
    with database.read() as session:
        return sorted(tuple(row) for row in session.execute(select(*columns)))


def test_synth_builds_about_n_strands_and_a_sound_record(
    plant: PlantCli, database: Database
) -> None:
    document = plant.json("synth", "--fibers", "2000", "--seed", "7")
    assert 1500 <= document["strands"] <= 2600
    summary = plant.json("summary")
    assert summary["strands"] == document["strands"]
    assert summary["circuits_active"] > summary["circuits"] / 2  # most circuits active
    assert summary["splitters"] >= 1 and summary["cuts"] >= 1
    with database.writing() as session, session.begin():
        report = check_record(session)
    assert report["ok"], report["problems"][:5]


def test_synth_paths_match_a_fresh_trace(plant: PlantCli, database: Database) -> None:
    assert plant("synth", "--fibers", "2000").exit_code == 0
    written = _items(database)
    with database.read() as session:
        states = dict(iter(session.execute(select(Circuit.label, Circuit.path_state))))
    with database.writing() as session, session.begin():
        refresh_circuits(session)
    assert _items(database) == written
    with database.read() as session:
        assert dict(iter(session.execute(select(Circuit.label, Circuit.path_state)))) == states


def test_synth_is_deterministic_and_refuses_a_full_database(
    plant: PlantCli, tmp_path: Path
) -> None:
    assert plant("synth", "--fibers", "1200", "--seed", "3").exit_code == 0
    first = json.loads(plant("dump").stdout)
    other = PlantCli(f"sqlite:///{tmp_path / 'again.sqlite'}")
    assert other("init").exit_code == 0
    assert other("synth", "--fibers", "1200", "--seed", "3").exit_code == 0
    assert json.loads(other("dump").stdout) == first
    result = plant("synth", "--fibers", "1200", "--seed", "3")
    assert result.exit_code == 1 and "empty database" in result.stderr
    assert other("synth", "--fibers", "10").exit_code == 1
