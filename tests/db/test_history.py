"""The audit history, on SQLite and PostgreSQL: every change of the record writes its rows
(who, when, what, before and after) in the same transaction as the change, and nothing when
the change is refused or rolled back; `plantdb history` shows them.

Networks: `ashgrove()` and `larkspur()` of tests/networks.py.
"""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path
from typing import Any

import pytest
from alembic import command
from sqlalchemy import func, inspect, select, text, update

from plantdb import audit
from plantdb.audit import ChangeRow, acting_as, current_actor, record_changes
from plantdb.bulk import COPY_ROWS
from plantdb.db import Database, _alembic_config, run_in_transaction, upgrade_schema
from plantdb.errors import PlantError
from plantdb.model import (
    Cable,
    Change,
    ChangeAction,
    Circuit,
    Closure,
    Panel,
    Span,
    Splice,
    Structure,
)
from plantdb.records.bundle import BundleError, load_bundle
from plantdb.records.circuit_status import set_circuit_status
from plantdb.records.splice_edits import move_splices, remove_splices
from plantdb.records.splicing import SpliceRequest, end_group, record_splices
from tests.conftest import PlantCli
from tests.networks import Bundle, ashgrove, larkspur


def history(database: Database, **where: Any) -> list[Change]:
    """Every change row (matching `where`), oldest first."""
    with database.read() as session:
        query = select(Change).filter_by(**where).order_by(Change.id)
        return list(session.scalars(query))


def count(database: Database) -> int:
    with database.read() as session:
        return session.scalar(select(func.count()).select_from(Change)) or 0


def id_of(database: Database, model: Any, label: str) -> int:
    with database.read() as session:
        found = session.scalar(select(model.id).where(model.label == label))
    assert found is not None, label
    return int(found)


def splice(database: Database, a: str, b: str, tray: int = 1, slot: int = 1) -> Any:
    request = SpliceRequest("LC-1", tray, slot, end_group(a), end_group(b))
    report = run_in_transaction(database, lambda s: record_splices(s, [request]))
    assert report.problems == [] and report.added, report.problems
    return report


@pytest.fixture
def yard(database: Database) -> Database:
    """larkspur loaded: closure LC-1 (2 trays of 24) with C-A:48 to C-B:48 in tray 2 slot 24."""
    run_in_transaction(database, lambda s: load_bundle(s, larkspur().data))
    return database


# -- the bundle loader ---------------------------------------------------------------------


def test_loading_a_bundle_writes_one_row_per_thing_with_the_item_as_after(
    database: Database,
) -> None:
    bundle = ashgrove().data
    started = audit.now_utc()
    run_in_transaction(database, lambda s: load_bundle(s, bundle))
    rows = history(database)
    kinds: dict[str, int] = {}
    for row in rows:
        kinds[row.entity] = kinds.get(row.entity, 0) + 1
    # ashgrove: 1 fiber type, 5 structures, 4 spans, 1 closure, 3 panels, 2 cables, the cut
    # its one mid-span splice implies, 1 splice, 8 + 7 + 1 terminations, 2 circuits.
    assert kinds == {
        "fiber_type": 1, "structure": 5, "span": 4, "closure": 1, "panel": 3, "cable": 2,
        "cut": 1, "splice": 1, "termination": 16, "circuit": 2,
    }  # fmt: skip
    assert {row.action for row in rows} == {ChangeAction.INSERT}
    assert {row.actor for row in rows} == {current_actor()}
    assert all(started <= row.at <= audit.now_utc() for row in rows)
    assert all(row.before is None for row in rows)
    (cable,) = [r for r in rows if r.label == "cable F-1"]
    assert cable.after == bundle["cables"][0]
    assert cable.cable_id == cable.entity_id == id_of(database, Cable, "F-1")
    (joint,) = [r for r in rows if r.entity == "splice"]
    assert joint.label == "AC-1 tray 1 slot 1" and joint.after == bundle["splices"][0]
    assert joint.closure_id == id_of(database, Closure, "AC-1")
    assert {joint.cable_id, joint.other_cable_id} == {
        id_of(database, Cable, "F-1"),
        id_of(database, Cable, "D-1"),
    }
    (cut,) = [r for r in rows if r.entity == "cut"]
    assert cut.label == "F-1:5 cut at AC-1"
    assert cut.after == {"closure": "AC-1", "fiber": "F-1:5"}
    circuit = next(r for r in rows if r.label == "circuit AG-2")
    assert circuit.circuit_id == id_of(database, Circuit, "AG-2")
    assert circuit.after == bundle["circuits"][1]


def test_routes_splitters_jumpers_and_loss_tests_are_in_the_history(database: Database) -> None:
    town = ashgrove().splitter("AS-1", "AC-1", "1x4").equipment("OLT-A", "AG-CO", ["1/1"])
    town.jumper("CO-P1:1", "OLT-A:1/1", length_m=2.0)
    bundle = town.data
    bundle["routes"] = [{"label": "R-EAST", "spans": ["S1", "S2", "S3"]}]
    bundle["loss_tests"] = [{"circuit": "AG-1", "wavelength_nm": 1310, "measured_db": 0.9}]
    run_in_transaction(database, lambda s: load_bundle(s, bundle))
    by_label = {row.label: row for row in history(database)}
    assert by_label["route R-EAST"].after == bundle["routes"][0]
    splitter = by_label["splitter AS-1"]
    assert splitter.closure_id == id_of(database, Closure, "AC-1")
    assert by_label["equipment OLT-A"].entity == "equipment"
    jumper = by_label["jumper CO-P1:1 to OLT-A:1/1"]
    assert (jumper.entity, jumper.after) == ("jumper", bundle["jumpers"][0])
    test = by_label["loss test of AG-1 at 1310 nm"]
    assert test.circuit_id == id_of(database, Circuit, "AG-1")
    assert test.after == bundle["loss_tests"][0]
    termination = by_label["F-1:1 on CO-P1:1"]
    assert termination.entity == "termination"
    assert termination.cable_id == id_of(database, Cable, "F-1")


def office() -> Bundle:
    """ashgrove with a second panel CO-P2, a switch SW-1 and a splitter PS-1 at the office
    AG-CO: jumpers CO-P1:10 to CO-P2:10 (panel to panel) and CO-P2:11 to SW-1:1 (to gear)."""
    town = ashgrove().panel("CO-P2", "AG-CO").equipment("SW-1", "AG-CO", ["1"])
    town.splitter("PS-1", "CO-P2", "1x2")
    return town.jumper("CO-P1:10", "CO-P2:10").jumper("CO-P2:11", "SW-1:1")


CONCERNS = ("panel_id", "other_panel_id", "structure_id", "span_id")


def concerns(database: Database) -> dict[str, tuple[int | None, ...]]:
    """What each change row concerns among panels, structures and spans, by its label."""
    return {row.label: tuple(getattr(row, c) for c in CONCERNS) for row in history(database)}


def test_changes_name_the_panels_structures_and_spans_they_concern(database: Database) -> None:
    run_in_transaction(database, lambda s: load_bundle(s, office().data))
    p1, p2 = id_of(database, Panel, "CO-P1"), id_of(database, Panel, "CO-P2")
    office_id = id_of(database, Structure, "AG-CO")
    found = concerns(database)
    assert found["panel CO-P1"] == (p1, None, office_id, None)
    assert found["structure AG-CO"] == (None, None, office_id, None)
    assert found["span S4"] == (None, None, None, id_of(database, Span, "S4"))
    assert found["closure AC-1"] == (None, None, id_of(database, Structure, "AH-1"), None)
    assert found["equipment SW-1"] == (None, None, office_id, None)
    assert found["F-1:3 on CO-P1:3"] == (p1, None, None, None)
    assert found["jumper CO-P1:10 to CO-P2:10"] == (p1, p2, None, None)
    assert found["jumper CO-P2:11 to SW-1:1"] == (p2, None, None, None)
    assert found["splitter PS-1"] == (p2, None, None, None)
    assert found["cable F-1"] == (None, None, None, None)


def test_the_upgrade_fills_in_what_earlier_changes_concern(database: Database) -> None:
    """A database recorded before the history named panels, structures and spans gets them
    from its record on upgrade, the same as the services now write them."""
    run_in_transaction(database, lambda s: load_bundle(s, office().data))
    written = concerns(database)
    config = _alembic_config(database.engine)
    database.engine.dispose()
    try:
        command.downgrade(config, "0007")
        with database.engine.connect() as connection:
            columns = {c["name"] for c in inspect(connection).get_columns("change")}
        assert not columns & set(CONCERNS)
    finally:
        upgrade_schema(database.engine)
    assert concerns(database) == written
    assert any(value is not None for row in written.values() for value in row)


def test_a_refused_bundle_writes_no_history(yard: Database) -> None:
    before = count(yard)
    bad = ashgrove().data
    bad["splices"][0]["tray"] = 9  # AC-1 has two trays
    with pytest.raises(BundleError):
        run_in_transaction(yard, lambda s: load_bundle(s, bad))
    assert count(yard) == before


# -- splicing ------------------------------------------------------------------------------


def test_recorded_splices_and_their_cuts_are_in_the_history(yard: Database) -> None:
    first = count(yard)
    splice(yard, "C-T:9-10/B", "C-B:9-10", slot=9)
    rows = history(yard)[first:]
    assert [(r.entity, r.label) for r in rows] == [
        ("cut", "C-T:9 cut at LC-1"),
        ("cut", "C-T:10 cut at LC-1"),
        ("splice", "LC-1 tray 1 slot 9"),
        ("splice", "LC-1 tray 1 slot 10"),
    ]
    with yard.read() as session:
        query = select(Splice.slot, Splice.id).where(Splice.slot.in_([9, 10]))
        ids = {slot: splice_id for slot, splice_id in session.execute(query)}
    assert [r.entity_id for r in rows[2:]] == [ids[9], ids[10]]
    assert all(r.entity_id is not None for r in rows)
    # As a bundle item: keys without a value are left out, as `plantdb dump` leaves them.
    assert rows[2].after == {
        "closure": "LC-1", "a": "C-T:9/B", "b": "C-B:9", "tray": 1, "slot": 9, "method": "fusion",
    }  # fmt: skip
    assert rows[2].cable_id == id_of(yard, Cable, "C-T")
    assert rows[2].other_cable_id == id_of(yard, Cable, "C-B")


def test_changes_rolled_back_take_their_history_with_them(yard: Database) -> None:
    before = count(yard)

    def work(session: Any) -> None:
        request = SpliceRequest("LC-1", 1, 1, end_group("C-A:1"), end_group("C-B:1"))
        assert record_splices(session, [request]).added == 1
        raise PlantError("the clerk gave up")

    with pytest.raises(PlantError, match="gave up"):
        run_in_transaction(yard, work)
    assert count(yard) == before


def test_a_refused_sheet_import_writes_no_history(
    yard: Database, plant: PlantCli, tmp_path: Path
) -> None:
    sheet = tmp_path / "sheet.csv"
    sheet.write_text(
        "closure,tray,slot,a_cable,a_strand,a_side,b_cable,b_strand,b_side,method\n"
        "LC-1,1,1,C-A,1,,C-B,1,,fusion\n"
        "LC-1,1,2,C-A,99,,C-B,2,,fusion\n",
        encoding="utf-8",
    )
    before = count(yard)
    result = plant("import", "splices", str(sheet))
    assert result.exit_code == 1 and "line 3" in result.stderr
    assert count(yard) == before
    sheet.write_text(sheet.read_text().replace("C-A,99", "C-A,2"), encoding="utf-8")
    assert plant("import", "splices", str(sheet)).exit_code == 0
    assert count(yard) == before + 2


def test_a_removal_records_what_was_removed(yard: Database) -> None:
    first = count(yard)
    run_in_transaction(yard, lambda s: remove_splices(s, "LC-1", 2, [24]))
    (row,) = history(yard)[first:]
    assert (row.action, row.entity, row.label) == (
        ChangeAction.DELETE,
        "splice",
        "LC-1 tray 2 slot 24",
    )
    assert row.after is None
    assert row.before == {
        "closure": "LC-1", "a": "C-A:48", "b": "C-B:48", "tray": 2, "slot": 24,
        "method": "fusion", "loss_db": 0.04,
    }  # fmt: skip
    assert row.closure_id == id_of(yard, Closure, "LC-1")


def test_a_move_records_where_from_and_where_to_and_bumps_the_version(yard: Database) -> None:
    first = count(yard)
    run_in_transaction(yard, lambda s: move_splices(s, "LC-1", 2, [24], 1, 7))
    (row,) = history(yard)[first:]
    assert row.action == ChangeAction.UPDATE
    assert row.before is not None and row.after is not None
    assert (row.before["tray"], row.before["slot"]) == (2, 24)
    assert (row.after["tray"], row.after["slot"]) == (1, 7)
    assert {k: v for k, v in row.before.items() if k not in ("tray", "slot")} == {
        k: v for k, v in row.after.items() if k not in ("tray", "slot")
    }
    with yard.read() as session:
        assert session.scalar(select(Splice.version)) == 2


def test_a_status_change_records_both_statuses_and_who(database: Database) -> None:
    run_in_transaction(database, lambda s: load_bundle(s, ashgrove().data))
    first = count(database)
    with acting_as("Dispatcher Quill"):
        change = run_in_transaction(
            database, lambda s: set_circuit_status(s, "AG-1", "out_of_service")
        )
    assert change["changed"] and change["version"] == 2
    (row,) = history(database)[first:]
    assert (row.actor, row.action, row.label) == (
        "Dispatcher Quill",
        ChangeAction.UPDATE,
        "circuit AG-1",
    )
    assert row.before == {"label": "AG-1", "status": "active"}
    assert row.after == {"label": "AG-1", "status": "out_of_service"}
    assert row.circuit_id == id_of(database, Circuit, "AG-1")
    # Setting the status it already has changes nothing, and records nothing.
    again = run_in_transaction(database, lambda s: set_circuit_status(s, "AG-1", "out_of_service"))
    assert not again["changed"] and again["version"] == 2
    assert count(database) == first + 1


def test_a_synthetic_plant_is_one_summary_row(plant: PlantCli, database: Database) -> None:
    document = plant.json("synth", "--fibers", "600", "--seed", "2")
    (row,) = history(database)
    assert row.entity == "synthetic_plant" and row.action == ChangeAction.INSERT
    assert row.label == f"synthetic plant of {document['strands']:,} strands generated"
    assert row.after is not None and row.after["seed"] == 2


@pytest.mark.parametrize("count", [2, COPY_ROWS], ids=["few", "bulk"])
def test_the_portable_statement_writes_the_same_rows(
    database: Database, monkeypatch: pytest.MonkeyPatch, count: int
) -> None:
    """A driver plantdb does not write to straight gets the ordinary insert, and the rows
    come out the same (a bulk write is COPY on PostgreSQL)."""
    rows = [
        ChangeRow(ChangeAction.INSERT, "closure", 7, "closure X-1", None, {"label": "X-1"}),
        ChangeRow(ChangeAction.DELETE, "splice", 9, "X-1 tray 1 slot 1", {"slot": 1}, None),
    ] * (count // 2)
    at = dt.datetime(2026, 3, 4, 5, 6, 7)
    run_in_transaction(database, lambda s: record_changes(s, rows, at=at))
    monkeypatch.setattr(audit, "BULK_DIALECTS", ())
    run_in_transaction(database, lambda s: record_changes(s, rows, at=at))
    written = [
        (r.at, r.actor, r.action, r.entity, r.entity_id, r.label, r.before, r.after)
        for r in history(database)
    ]
    assert len(written) == 2 * len(rows)
    assert written[: len(rows)] == written[len(rows) :]
    assert written[0] == (
        at, current_actor(), ChangeAction.INSERT, "closure", 7, "closure X-1", None,
        {"label": "X-1"},
    )  # fmt: skip
    # Stored alike too, not only read back alike: on SQLite the time is text, compared as
    # text by `--since`, so the straight path must write it in SQLAlchemy's own format.
    with database.read() as session:
        stored = session.execute(text("SELECT DISTINCT CAST(at AS TEXT) FROM change")).all()
    assert len(stored) == 1, stored


# -- plantdb history -------------------------------------------------------------------------


def _dated(database: Database, first_id: int, at: dt.datetime) -> None:
    """Give the change rows from `first_id` on the time `at` (a test sets the clock)."""
    with database.writing() as session, session.begin():
        session.execute(update(Change).where(Change.id >= first_id).values(at=at))


def test_history_command_lists_changes_oldest_first(yard: Database, plant: PlantCli) -> None:
    _dated(yard, 0, dt.datetime(2026, 1, 5, 9, 30))
    first = count(yard) + 1
    with acting_as("Clerk Ashby"):
        run_in_transaction(yard, lambda s: move_splices(s, "LC-1", 2, [24], 1, 3))
    _dated(yard, first, dt.datetime(2026, 2, 1, 14, 5))
    result = plant("history", "--closure", "LC-1")
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    # The closure, its two splitters, its splice; then the move.
    assert lines[0] == "history of closure LC-1: 5 change(s)"
    assert lines[3].split() == ["2026-01-05", "09:30", current_actor(), "added", "closure", "LC-1"]
    assert lines[-1].split()[:5] == ["2026-02-01", "14:05", "Clerk", "Ashby", "changed"]
    assert "LC-1 tray 2 slot 24, moved to tray 1 slot 3" in lines[-1]
    assert lines[-1].endswith("slot 24 -> 3, tray 2 -> 1")
    document = plant.json("history", "--closure", "LC-1", "--since", "2026-02-01")
    assert document["target"] == {"kind": "closure", "label": "LC-1"}
    assert document["since"] == "2026-02-01T00:00:00Z"
    (change,) = document["changes"]
    assert change["actor"] == "Clerk Ashby" and change["action"] == "update"
    assert change["at"] == "2026-02-01T14:05:00Z"
    assert change["before"]["tray"] == 2 and change["after"]["tray"] == 1


def test_history_of_a_cable_takes_both_cables_of_a_splice(yard: Database, plant: PlantCli) -> None:
    splice(yard, "C-A:1", "C-B:1")
    for cable in ("C-A", "C-B"):
        labels = [c["label"] for c in plant.json("history", "--cable", cable)["changes"]]
        assert labels == [f"cable {cable}", "LC-1 tray 2 slot 24", "LC-1 tray 1 slot 1"]
    assert [c["label"] for c in plant.json("history", "--cable", "C-X")["changes"]] == ["cable C-X"]


def test_history_of_a_circuit_and_the_refusals(database: Database, plant: PlantCli) -> None:
    run_in_transaction(database, lambda s: load_bundle(s, ashgrove().data))
    run_in_transaction(database, lambda s: set_circuit_status(s, "AG-2", "retired"))
    document = plant.json("history", "--circuit", "AG-2")
    assert [c["label"] for c in document["changes"]] == ["circuit AG-2", "circuit AG-2"]
    assert document["changes"][1]["after"] == {"label": "AG-2", "status": "retired"}
    text = plant("history", "--circuit", "AG-2").stdout
    assert "status active -> retired" in text
    unknown = plant("history", "--circuit", "AG-9")
    assert unknown.exit_code == 1 and unknown.stderr == "plantdb: no circuit is labelled AG-9\n"
    for wrong in (["history"], ["history", "--cable", "F-1", "--closure", "AC-1"]):
        result = plant(*wrong)
        assert result.exit_code == 2 and "give exactly one of --closure" in result.stderr
    bad_date = plant("history", "--cable", "F-1", "--since", "last week")
    assert bad_date.exit_code == 2 and "Traceback" not in bad_date.output
    assert json.loads(plant("history", "--cable", "D-1", "--json").stdout)["changes"]


def test_history_of_a_panel_a_structure_and_a_span(database: Database, plant: PlantCli) -> None:
    run_in_transaction(database, lambda s: load_bundle(s, office().data))

    def labels(*args: str) -> list[str]:
        return [c["label"] for c in plant.json("history", *args)["changes"]]

    terminations = [f"F-1:{n} on CO-P1:{n}" for n in range(1, 9)]
    assert labels("--panel", "CO-P1") == [
        "panel CO-P1",
        *terminations,
        "jumper CO-P1:10 to CO-P2:10",
    ]
    # A jumper is in the history of both its panels; a splitter in that of its panel.
    assert labels("--panel", "CO-P2") == [
        "panel CO-P2",
        "splitter PS-1",
        "jumper CO-P1:10 to CO-P2:10",
        "jumper CO-P2:11 to SW-1:1",
    ]
    assert labels("--structure", "AG-CO") == [
        "structure AG-CO",
        "panel CO-P1",
        "panel CO-P2",
        "equipment SW-1",
    ]
    assert labels("--span", "S2") == ["span S2"]
    text = plant("history", "--panel", "CO-P2").stdout
    assert text.startswith("history of panel CO-P2: 4 change(s)")
    assert "CO-P1:10 to CO-P2:10" in text  # a jumper's details: what it joins
    unknown = plant("history", "--span", "S9")
    assert unknown.exit_code == 1 and unknown.stderr == "plantdb: no span is labelled S9\n"
    both = plant("history", "--panel", "CO-P1", "--structure", "AG-CO")
    assert both.exit_code == 2
    assert "--panel LABEL, --structure LABEL or --span LABEL" in both.stderr
