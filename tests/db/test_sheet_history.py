"""A closure's splice sheet as recorded on a given day, rebuilt from the history, on SQLite and
PostgreSQL: splices added, moved and removed on different days (each change's time set by the
test), checked against the sheet expected by hand and against a forward replay of the rows.

Network: `larkspur()` (tests/networks.py), closure LC-1 with C-A:48 to C-B:48 in tray 2 slot 24.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

import pytest
from sqlalchemy import delete, func, select, update

from plantdb.db import Database, run_in_transaction
from plantdb.errors import NotFound, PlantError
from plantdb.model import Change, ChangeAction, Closure
from plantdb.records.bundle import load_bundle
from plantdb.records.sheet_history import PastSheet, closure_sheet_as_of, parse_day
from plantdb.records.splice_edits import move_splices, remove_splices
from plantdb.records.splice_rows import closure_sheet
from plantdb.records.splicing import SpliceRequest, end_group, record_splices
from tests.networks import larkspur

Slots = set[tuple[int, int, str, str]]


def _last_id(database: Database) -> int:
    with database.read() as session:
        return session.scalar(select(func.max(Change.id))) or 0


def _on(database: Database, day: str, work: Any) -> None:
    """Do `work` in one transaction, and date its change rows at noon of `day` (UTC)."""
    first = _last_id(database) + 1
    run_in_transaction(database, work)
    at = dt.datetime.combine(dt.date.fromisoformat(day), dt.time(12))
    with database.writing() as session, session.begin():
        session.execute(update(Change).where(Change.id >= first).values(at=at))


def _splice(a: str, b: str, tray: int, slot: int) -> Any:
    request = SpliceRequest("LC-1", tray, slot, end_group(a), end_group(b))
    return lambda session: record_splices(session, [request])


def _as_of(database: Database, day: str) -> PastSheet:
    with database.read() as session:
        return closure_sheet_as_of(session, "LC-1", dt.date.fromisoformat(day))


def _slots(sheet: PastSheet) -> Slots:
    return {(s["tray"], s["slot"], s["a"], s["b"]) for s in sheet.splices}


def _replayed(database: Database, day: str) -> Slots:
    """The sheet by replaying the closure's splice rows forward up to the end of `day`."""
    until = dt.datetime.combine(dt.date.fromisoformat(day) + dt.timedelta(days=1), dt.time())
    with database.read() as session:
        closure_id = session.scalar(select(Closure.id).where(Closure.label == "LC-1"))
        rows = session.execute(
            select(Change.entity_id, Change.action, Change.after)
            .where(Change.closure_id == closure_id, Change.entity == "splice", Change.at < until)
            .order_by(Change.at, Change.id)
        ).all()
    state: dict[int, dict[str, Any]] = {}
    for splice_id, action, after in rows:
        if action == ChangeAction.DELETE:
            state.pop(splice_id)
        else:
            state[splice_id] = after
    return {(s["tray"], s["slot"], s["a"], s["b"]) for s in state.values()}


@pytest.fixture
def worked(database: Database) -> Database:
    """LC-1 worked over two weeks: loaded on the 10th, spliced, moved, removed."""
    _on(database, "2026-01-10", lambda s: load_bundle(s, larkspur().data))
    _on(database, "2026-01-12", _splice("C-A:1", "C-B:1", 1, 1))
    _on(database, "2026-01-15", lambda s: move_splices(s, "LC-1", 1, [1], 1, 5))
    _on(database, "2026-01-15", _splice("C-A:2", "C-B:2", 1, 2))
    _on(database, "2026-01-20", lambda s: remove_splices(s, "LC-1", 2, [24]))
    _on(database, "2026-01-22", lambda s: remove_splices(s, "LC-1", 1, [5]))
    return database


FIRST = (2, 24, "C-A:48", "C-B:48")
# The sheet expected at the end of each day, worked out by hand from the fixture's steps.
EXPECTED: dict[str, Slots] = {
    "2026-01-09": set(),
    "2026-01-10": {FIRST},
    "2026-01-11": {FIRST},
    "2026-01-12": {FIRST, (1, 1, "C-A:1", "C-B:1")},
    "2026-01-15": {FIRST, (1, 5, "C-A:1", "C-B:1"), (1, 2, "C-A:2", "C-B:2")},
    "2026-01-20": {(1, 5, "C-A:1", "C-B:1"), (1, 2, "C-A:2", "C-B:2")},
    "2026-01-22": {(1, 2, "C-A:2", "C-B:2")},
    "2030-06-01": {(1, 2, "C-A:2", "C-B:2")},
}


@pytest.mark.parametrize("day", sorted(EXPECTED))
def test_the_sheet_as_recorded_on_a_day(worked: Database, day: str) -> None:
    sheet = _as_of(worked, day)
    assert _slots(sheet) == EXPECTED[day]
    assert _slots(sheet) == _replayed(worked, day)
    assert sheet.trays == [(1, 24), (2, 24)]
    assert sheet.before_history == (day == "2026-01-09")


def test_the_sheet_of_today_is_the_record_now(worked: Database) -> None:
    today = dt.datetime.now(dt.UTC).date().isoformat()
    with worked.read() as session:
        now = closure_sheet(session, "LC-1")
    assert _slots(_as_of(worked, today)) == {
        (s.tray, s.slot, s.a.address, s.b.address) for s in now.splices
    }
    assert _as_of(worked, today).undone == 0


def test_a_day_keeps_the_full_items_and_counts_what_was_undone(worked: Database) -> None:
    sheet = _as_of(worked, "2026-01-12")
    assert sheet.undone == 4  # the move, the second splice and the two removals
    by_slot = {(s["tray"], s["slot"]): s for s in sheet.splices}
    assert by_slot[(2, 24)]["loss_db"] == 0.04 and by_slot[(2, 24)]["method"] == "fusion"
    trays = sheet.trays_with_splices()
    assert [(t["number"], len(t["splices"])) for t in trays] == [(1, 1), (2, 1)]


def test_splices_older_than_the_history_stay_on_earlier_sheets(worked: Database) -> None:
    """A record kept before it kept history: the splices it held are shown as they are."""
    with worked.writing() as session, session.begin():
        session.execute(delete(Change).where(Change.at < dt.datetime(2026, 1, 11)))
    sheet = _as_of(worked, "2026-01-05")
    assert _slots(sheet) == {FIRST}
    assert sheet.before_history
    assert sheet.history_begins == dt.datetime(2026, 1, 12, 12)


def test_refusals(worked: Database) -> None:
    with worked.read() as session, pytest.raises(NotFound, match="no closure is labelled LC-9"):
        closure_sheet_as_of(session, "LC-9", dt.date(2026, 1, 1))
    with pytest.raises(PlantError, match="as_of '2026-13-01' is not a date"):
        parse_day("2026-13-01")
