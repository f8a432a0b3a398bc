"""Optimistic version checks, on SQLite and PostgreSQL: an edit made on a page that showed an
older version of a circuit or a splice is refused (naming who changed it since), never applied
over the other person's change; and a change committed between the service's read and its
write is refused the same way.

Networks: `ashgrove()` (circuits AG-1, AG-2) and `larkspur()` (closure LC-1 with C-A:48 to
C-B:48 in tray 2 slot 24) of tests/networks.py.
"""

from __future__ import annotations

import dataclasses
from typing import Any

import pytest
from sqlalchemy import func, select

from plantdb.audit import acting_as
from plantdb.db import Database, run_in_transaction
from plantdb.errors import ConflictError
from plantdb.model import Change, Circuit, Splice, Tray
from plantdb.records import splice_edits
from plantdb.records.bundle import dump_bundle, load_bundle
from plantdb.records.circuit_status import set_circuit_status
from plantdb.records.splice_edits import SeenSplice, move_splices, remove_splices
from plantdb.records.splicing import SpliceRequest, end_group, record_splices
from tests.networks import ashgrove, larkspur


def changes(database: Database) -> int:
    with database.read() as session:
        return session.scalar(select(func.count()).select_from(Change)) or 0


def the_splice(database: Database, tray: int, slot: int) -> SeenSplice:
    """The splice in a slot of LC-1 as a page would show it (its id and version)."""
    with database.read() as session:
        row = session.execute(
            select(Splice.id, Splice.version)
            .join(Tray, Tray.id == Splice.tray_id)
            .where(Splice.slot == slot, Tray.number == tray)
        ).one()
    return SeenSplice(row.id, row.version)


def sheet(database: Database) -> list[tuple[int, int, str]]:
    with database.read() as session:
        return [(s["tray"], s["slot"], s["a"]) for s in dump_bundle(session).get("splices", [])]


@pytest.fixture
def yard(database: Database) -> Database:
    run_in_transaction(database, lambda s: load_bundle(s, larkspur().data))
    return database


@pytest.fixture
def town(database: Database) -> Database:
    run_in_transaction(database, lambda s: load_bundle(s, ashgrove().data))
    return database


def test_a_status_change_on_a_stale_page_is_refused(town: Database) -> None:
    with town.read() as session:
        shown = session.scalar(select(Circuit.version).where(Circuit.label == "AG-1"))
    assert shown == 1
    with acting_as("Dispatcher Wren"):
        run_in_transaction(town, lambda s: set_circuit_status(s, "AG-1", "reserved", version=1))
    before = changes(town)
    with pytest.raises(ConflictError) as refused:
        run_in_transaction(town, lambda s: set_circuit_status(s, "AG-1", "retired", version=shown))
    message = refused.value.message
    assert message.startswith("circuit AG-1 was changed by someone else since you opened it")
    assert "(changed by Dispatcher Wren at " in message and "nothing was changed" in message
    assert changes(town) == before
    with town.read() as session:
        circuit = session.scalars(select(Circuit).where(Circuit.label == "AG-1")).one()
        assert (circuit.status, circuit.version) == ("reserved", 2)
    # With the version it now shows, the change goes through.
    done = run_in_transaction(town, lambda s: set_circuit_status(s, "AG-1", "retired", version=2))
    assert done["changed"] and done["version"] == 3


def test_moving_or_removing_a_splice_changed_since_is_refused(yard: Database) -> None:
    seen = the_splice(yard, 2, 24)
    with acting_as("Clerk Fenwick"):
        run_in_transaction(yard, lambda s: move_splices(s, "LC-1", 2, [24], 2, 20))
    # The splice moved: its old slot is empty, so the page's edit of slot 24 is refused...
    before = changes(yard)
    for edit in (
        lambda s: remove_splices(s, "LC-1", 2, [24], seen={24: seen}),
        lambda s: move_splices(s, "LC-1", 2, [24], 1, 1, seen={24: seen}),
    ):
        with pytest.raises(ConflictError, match="changed by Clerk Fenwick at "):
            run_in_transaction(yard, edit)
    # ...and so is an edit of its new slot made with the version shown before the move.
    moved = the_splice(yard, 2, 20)
    assert (moved.id, moved.version) == (seen.id, 2)
    with pytest.raises(ConflictError, match="the splice in LC-1 tray 2 slot 20 was changed"):
        run_in_transaction(yard, lambda s: remove_splices(s, "LC-1", 2, [20], seen={20: seen}))
    assert changes(yard) == before and sheet(yard) == [(2, 20, "C-A:48")]
    report = run_in_transaction(
        yard, lambda s: remove_splices(s, "LC-1", 2, [20], seen={20: moved})
    )
    assert report.removed == 1 and sheet(yard) == []


def test_a_splice_replaced_in_its_slot_is_not_the_one_shown(yard: Database) -> None:
    """Removed and spliced again in the same slot: a new splice (a new id, never reused)."""
    seen = the_splice(yard, 2, 24)
    run_in_transaction(yard, lambda s: remove_splices(s, "LC-1", 2, [24]))
    request = SpliceRequest("LC-1", 2, 24, end_group("C-A:47"), end_group("C-B:47"))
    assert run_in_transaction(yard, lambda s: record_splices(s, [request])).added == 1
    replaced = the_splice(yard, 2, 24)
    assert replaced.id > seen.id and replaced.version == seen.version == 1
    with pytest.raises(ConflictError, match="was changed by someone else"):
        run_in_transaction(yard, lambda s: remove_splices(s, "LC-1", 2, [24], seen={24: seen}))
    assert sheet(yard) == [(2, 24, "C-A:47")]


def test_an_edit_must_say_which_splice_it_was_made_against(yard: Database) -> None:
    seen = the_splice(yard, 2, 24)
    with pytest.raises(ConflictError, match="does not say which splice"):
        run_in_transaction(yard, lambda s: remove_splices(s, "LC-1", 2, [23, 24], seen={24: seen}))


@pytest.mark.parametrize("edit", ["move", "remove"])
def test_a_change_committed_between_read_and_write_is_refused(
    yard: Database, monkeypatch: pytest.MonkeyPatch, edit: str
) -> None:
    """The write names the version it read: a row changed meanwhile is not matched (on
    PostgreSQL a read takes no lock), and the edit is refused whole."""
    real = splice_edits.recorded_splices

    def read_before_the_other_change(*args: Any) -> Any:
        return [dataclasses.replace(s, version=s.version - 1) for s in real(*args)]

    monkeypatch.setattr(splice_edits, "recorded_splices", read_before_the_other_change)
    before = changes(yard)
    if edit == "move":
        work: Any = lambda s: move_splices(s, "LC-1", 2, [24], 1, 1)  # noqa: E731
    else:
        work = lambda s: remove_splices(s, "LC-1", 2, [24])  # noqa: E731
    with pytest.raises(ConflictError, match="another change to the same splices came first"):
        run_in_transaction(yard, work)
    assert sheet(yard) == [(2, 24, "C-A:48")] and changes(yard) == before
