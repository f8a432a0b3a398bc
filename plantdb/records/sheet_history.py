"""A closure's splice sheet as it was recorded on a given date, rebuilt from the history.

The sheet is rebuilt backwards: from the splices recorded now, each change of a splice of the
closure made after the end of that day (UTC) is undone, newest first (an insert removed, a
delete put back, a move put back where it was). With a complete history this is the same as
replaying every change up to that day; unlike a forward replay it also keeps the splices a
record held before it kept history (a database upgraded from an older plantdb, a synthetic
plant written in bulk), which a forward replay would never see.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from plantdb.errors import NotFound, PlantError
from plantdb.model import Change, ChangeAction
from plantdb.records.lookup import RecordLookup
from plantdb.records.splice_rows import recorded_splices

# The keys of a splice item as the sheet shows them (a bundle's item may leave some out).
SPLICE_KEYS = ("closure", "a", "b", "tray", "slot", "method", "loss_db", "spliced_on", "spliced_by")


def _complete(item: dict[str, Any]) -> dict[str, Any]:
    whole = {key: item.get(key) for key in SPLICE_KEYS}
    whole["method"] = whole["method"] or "fusion"  # the bundle's default
    return whole


@dataclass
class PastSheet:
    """A closure's sheet as recorded at the end of `day` (UTC)."""

    closure: str
    day: dt.date
    until: dt.datetime  # the first moment after that day, UTC
    trays: list[tuple[int, int]]  # (tray number, slots)
    splices: list[dict[str, Any]]  # bundle items, by tray then slot
    undone: int  # changes made after that day, undone to rebuild it
    history_begins: dt.datetime | None  # the first change the record keeps

    @property
    def before_history(self) -> bool:
        """True when the day is before the history begins (the sheet may miss earlier work)."""
        return self.history_begins is None or self.until <= self.history_begins

    def trays_with_splices(self) -> list[dict[str, Any]]:
        """Each tray with its splices in slot order."""
        by_tray: dict[int, list[dict[str, Any]]] = {number: [] for number, _slots in self.trays}
        for splice in self.splices:
            by_tray.setdefault(splice["tray"], []).append(splice)
        slots = dict(self.trays)
        return [
            {"number": n, "slots": slots.get(n, 0), "splices": found}
            for n, found in sorted(by_tray.items())
        ]


def parse_day(text: str) -> dt.date:
    """An ISO date (YYYY-MM-DD); a clear refusal otherwise."""
    try:
        return dt.date.fromisoformat(text.strip())
    except ValueError:
        raise PlantError(f"as_of {text!r} is not a date (YYYY-MM-DD)") from None


def closure_sheet_as_of(session: Session, label: str, day: dt.date) -> PastSheet:
    """The splices of a closure as recorded at the end of `day` (UTC)."""
    lookup = RecordLookup(session)
    closure = lookup.closure(label)
    if closure is None:
        raise NotFound(f"closure: no closure is labelled {label}")
    until = dt.datetime.combine(day + dt.timedelta(days=1), dt.time.min)
    state = {s.id: s.item(label) for s in recorded_splices(lookup, closure.id)}
    later = session.execute(
        select(Change.entity_id, Change.action, Change.before)
        .where(
            Change.closure_id == closure.id,
            Change.entity == "splice",
            Change.at >= until,
        )
        .order_by(Change.at.desc(), Change.id.desc())
    ).all()
    for splice_id, action, before in later:
        if ChangeAction(action) is ChangeAction.INSERT:
            state.pop(splice_id, None)
        elif before is not None:
            state[splice_id] = before
    trays = sorted((number, cap) for number, (_id, cap) in lookup.trays(closure.id).items())
    splices = sorted(map(_complete, state.values()), key=lambda s: (s["tray"], s["slot"]))
    # The oldest row kept (the first by id: on the primary key, not a scan of the history).
    begins = session.scalar(select(Change.at).order_by(Change.id).limit(1))
    return PastSheet(label, day, until, trays, splices, len(later), begins)
