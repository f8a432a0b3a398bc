"""Correcting the record: removing splices, and moving them to another tray or slot.

Like `splicing.record_splices`, these take the caller's session and return a `SpliceReport`;
when it lists problems nothing was changed. A removed splice leaves its strands cut: the glass
was cut in the closure, and splicing it again is new work, not an undo.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, cast

from sqlalchemy import CursorResult, delete, tuple_, update
from sqlalchemy.orm import Session

from plantdb.audit import ChangeRow, record_changes
from plantdb.errors import ConflictError, NotFound
from plantdb.model import ChangeAction, FiberEnd, Splice
from plantdb.records.changes import bundle_item, splice_label
from plantdb.records.history import changed_since
from plantdb.records.lookup import PlaceInfo, RecordLookup
from plantdb.records.splice_requests import SpliceReport
from plantdb.records.splice_rows import RecordedEnd, RecordedSplice, recorded_splices
from plantdb.records.splicing import with_toward
from plantdb.trace.circuits import refresh_affected


@dataclass(frozen=True)
class SeenSplice:
    """A splice as the page an edit came from showed it: its id and version there."""

    id: int
    version: int


# What an edit was made against: tray slot -> the splice shown in it. None: the record as it
# is now (the command line, where nothing was shown first).
Seen = Mapping[int, SeenSplice] | None


def _closure(lookup: RecordLookup, label: str) -> PlaceInfo:
    closure = lookup.closure(label)
    if closure is None:
        raise NotFound(f"closure: no closure is labelled {label}")
    return closure


def _tray(lookup: RecordLookup, closure: PlaceInfo, tray: int) -> tuple[int, int] | str:
    """(tray id, capacity), or the problem when the closure has no such tray."""
    trays = lookup.trays(closure.id)
    if tray in trays:
        return trays[tray]
    have = f"trays 1-{max(trays)}" if trays else "no trays"
    return f"closure {closure.label} has {have}, no tray {tray}"


def _find(
    lookup: RecordLookup,
    closure: PlaceInfo,
    tray: int,
    slots: Sequence[int],
    report: SpliceReport,
    seen: Seen = None,
) -> list[RecordedSplice]:
    """The splices in these slots; a problem for each empty slot (or a missing tray), and a
    `ConflictError` when one differs from what the page showed."""
    found = _tray(lookup, closure, tray)
    if isinstance(found, str):
        report.problems.append(found)
        return []
    held = {s.slot: s for s in recorded_splices(lookup, closure.id) if s.tray == tray}
    _refuse_stale(lookup.session, closure, tray, slots, held, seen)
    slots = sorted(set(slots))
    for slot in slots:
        if slot not in held:
            report.problems.append(f"tray {tray} slot {slot} at {closure.label} holds no splice")
    return [held[slot] for slot in slots if slot in held]


def _refuse_stale(
    session: Session,
    closure: PlaceInfo,
    tray: int,
    slots: Sequence[int],
    held: dict[int, RecordedSplice],
    seen: Seen,
) -> None:
    """Refuse an edit made on a page showing splices that have changed since."""
    if seen is None:
        return
    for slot in sorted(set(slots)):
        shown = seen.get(slot)
        if shown is None:
            raise ConflictError(
                f"{splice_label(closure.label, tray, slot)}: the edit does not say which"
                " splice it was made against; look at the sheet again"
            )
        now = held.get(slot)
        if now is None or (now.id, now.version) != (shown.id, shown.version):
            what = f"the splice in {splice_label(closure.label, tray, slot)}"
            within = ("closure", closure.id)
            raise ConflictError(changed_since(session, "splice", shown.id, within, what))


def _change(
    action: ChangeAction,
    closure: PlaceInfo,
    splice: RecordedSplice,
    label: str,
    before: dict[str, Any] | None,
    after: dict[str, Any] | None,
) -> ChangeRow:
    return ChangeRow(
        action,
        "splice",
        splice.id,
        label,
        before,
        after,
        closure_id=closure.id,
        cable_id=splice.a.cable.id if splice.a.cable else None,
        other_cable_id=splice.b.cable.id if splice.b.cable else None,
    )


def _lost_race(closure: PlaceInfo, what: str) -> ConflictError:
    return ConflictError(
        f"{what} at {closure.label}: another change to the same splices came first; nothing"
        " was changed: look at the sheet again"
    )


def _describe(closure: PlaceInfo, splice: RecordedSplice, tray: int, slot: int) -> dict[str, Any]:
    """The splice as reported, with which way each mid-span piece runs (as `splicing`)."""
    item: dict[str, Any] = {
        "closure": closure.label,
        "a": splice.a.address,
        "b": splice.b.address,
        "tray": tray,
        "slot": slot,
        "method": splice.method,
        "loss_db": splice.loss_db,
    }
    return with_toward(item, splice.a.toward, splice.b.toward)


def remove_splices(
    session: Session, closure: str, tray: int, slots: Sequence[int], *, seen: Seen = None
) -> SpliceReport:
    """Remove the splices in these slots of a tray (all of them, or none when any is empty).

    With `seen`, refuse (`ConflictError`) when any of them changed since the page showed it.
    """
    lookup = RecordLookup(session)
    place = _closure(lookup, closure)
    report = SpliceReport()
    splices = _find(lookup, place, tray, slots, report, seen)
    if report.problems:
        return report
    _delete(session, place, splices)
    _refresh_circuits(lookup, [e for s in splices for e in (s.a, s.b)])
    report.removed = len(splices)
    report.splices = [_describe(place, s, s.tray, s.slot) for s in splices]
    left_cut = [e.address for s in splices for e in (s.a, s.b) if e.side is not None]
    if left_cut:
        report.notes.append(
            f"these pieces stay cut at {place.label}, now unconnected: {', '.join(left_cut)}"
        )
    return report


def _delete(session: Session, place: PlaceInfo, splices: list[RecordedSplice]) -> None:
    """Delete the splices as read, with their history rows; refused whole if one changed."""
    ids = [s.id for s in splices]
    session.execute(delete(FiberEnd).where(FiberEnd.splice_id.in_(ids)))
    # Only the versions read above: a change committed meanwhile (PostgreSQL reads without
    # locking) leaves a row this does not match, and the removal is refused whole.
    versions = [(s.id, s.version) for s in splices]
    gone = session.execute(delete(Splice).where(tuple_(Splice.id, Splice.version).in_(versions)))
    if cast(CursorResult[Any], gone).rowcount != len(ids):
        raise _lost_race(place, "the removal")
    history = [
        _change(
            ChangeAction.DELETE,
            place,
            s,
            splice_label(place.label, s.tray, s.slot),
            bundle_item(s.item(place.label)),
            None,
        )
        for s in splices
    ]
    record_changes(session, history)


def _refresh_circuits(lookup: RecordLookup, ends: list[RecordedEnd]) -> None:
    """Re-trace the circuits over these ends: a removed splice breaks whatever crossed it."""
    strands = {e.strand_id for e in ends if e.strand_id is not None}
    splitters = set()
    for end in ends:
        splitter = lookup.splitter(end.label) if end.cable is None else None
        if splitter is not None:
            splitters.add(splitter.id)
    refresh_affected(lookup.session, strand_ids=strands, splitter_ids=splitters)


def move_splices(
    session: Session,
    closure: str,
    tray: int,
    slots: Sequence[int],
    to_tray: int,
    to_slot: int,
    *,
    seen: Seen = None,
) -> SpliceReport:
    """Move the splices in these slots to `to_tray`, slots counting up from `to_slot`.

    With `seen`, refuse (`ConflictError`) when any of them changed since the page showed it.
    """
    lookup = RecordLookup(session)
    place = _closure(lookup, closure)
    report = SpliceReport()
    splices = _find(lookup, place, tray, slots, report, seen)
    target = _tray(lookup, place, to_tray)
    if isinstance(target, str):
        report.problems.append(target)
    if report.problems:
        return report
    assert not isinstance(target, str)
    target_id, capacity = target
    report.problems += _target_problems(lookup, place, splices, to_tray, to_slot, capacity)
    if report.problems:
        return report
    moves = _apply_moves(session, splices, target_id, capacity, to_slot, same_tray=to_tray == tray)
    if any(not moved for _splice, _slot, moved in moves):
        raise _lost_race(place, "the move")
    record_changes(session, [_move_change(place, s, to_tray, slot) for s, slot, _ok in moves])
    report.moved = len(splices)
    report.splices = [_describe(place, s, to_tray, to_slot + i) for i, s in enumerate(splices)]
    return report


def _target_problems(
    lookup: RecordLookup,
    place: PlaceInfo,
    splices: list[RecordedSplice],
    to_tray: int,
    to_slot: int,
    capacity: int,
) -> list[str]:
    """Why the splices cannot move to these slots: past the tray's end, or slots taken."""
    last = to_slot + len(splices) - 1
    if to_slot < 1 or last > capacity:
        return [
            f"tray {to_tray} of {place.label} has slots 1-{capacity}, so no slots {to_slot}-{last}"
        ]
    moving = {s.id for s in splices}
    holders = {s.slot: s for s in recorded_splices(lookup, place.id) if s.tray == to_tray}
    return [
        f"tray {to_tray} slot {slot} at {place.label} is taken: it holds {holder.description}"
        for slot in range(to_slot, last + 1)
        if (holder := holders.get(slot)) is not None and holder.id not in moving
    ]


def _move_change(place: PlaceInfo, splice: RecordedSplice, to_tray: int, slot: int) -> ChangeRow:
    label = splice_label(place.label, splice.tray, splice.slot)
    return _change(
        ChangeAction.UPDATE,
        place,
        splice,
        f"{label}, moved to tray {to_tray} slot {slot}",
        bundle_item(splice.item(place.label)),
        bundle_item(splice.item(place.label, to_tray, slot)),
    )


def _apply_moves(
    session: Session,
    splices: list[RecordedSplice],
    tray_id: int,
    capacity: int,
    first_slot: int,
    *,
    same_tray: bool,
) -> list[tuple[RecordedSplice, int, bool]]:
    """Update the splices one by one, in an order where no slot is ever held twice; each
    (splice, new slot, whether its version still matched) that changed place."""
    moves = [(s, first_slot + i) for i, s in enumerate(sorted(splices, key=lambda s: s.slot))]
    if same_tray:
        # Within one tray a slot may be vacated and taken by the same move. Sources sorted
        # and targets counting up, a splice moving up only ever lands on one moving up too
        # (and down on down), so move the upward ones from the top and the downward ones
        # from the bottom and no slot is ever held twice.
        moves = [m for m in moves if m[1] != m[0].slot]
        moves.sort(key=lambda m: (0, -m[0].slot) if m[1] > m[0].slot else (1, m[0].slot))
    done = []
    for splice, slot in moves:
        result = session.execute(
            update(Splice)
            .where(Splice.id == splice.id, Splice.version == splice.version)
            .values(tray_id=tray_id, tray_capacity=capacity, slot=slot, version=Splice.version + 1)
        )
        done.append((splice, slot, cast(CursorResult[Any], result).rowcount == 1))
    return done
