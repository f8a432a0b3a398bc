"""Correcting the record: removing splices, and moving them to another tray or slot.

Like `splicing.record_splices`, these take the caller's session and return a `SpliceReport`;
when it lists problems nothing was changed. A removed splice leaves its strands cut: the glass
was cut in the closure, and splicing it again is new work, not an undo.
"""

from __future__ import annotations

from collections.abc import Sequence

from sqlalchemy import delete, update
from sqlalchemy.orm import Session

from plantdb.errors import NotFound
from plantdb.model import FiberEnd, Splice
from plantdb.records.lookup import PlaceInfo, RecordLookup
from plantdb.records.splice_requests import SpliceReport
from plantdb.records.splice_rows import RecordedEnd, RecordedSplice, recorded_splices
from plantdb.trace.circuits import refresh_affected


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
    lookup: RecordLookup, closure: PlaceInfo, tray: int, slots: Sequence[int], report: SpliceReport
) -> list[RecordedSplice]:
    """The splices in these slots; a problem for each empty slot (or a missing tray)."""
    found = _tray(lookup, closure, tray)
    if isinstance(found, str):
        report.problems.append(found)
        return []
    held = {s.slot: s for s in recorded_splices(lookup, closure.id) if s.tray == tray}
    slots = sorted(set(slots))
    for slot in slots:
        if slot not in held:
            report.problems.append(f"tray {tray} slot {slot} at {closure.label} holds no splice")
    return [held[slot] for slot in slots if slot in held]


def _describe(
    closure: PlaceInfo, splice: RecordedSplice, tray: int, slot: int
) -> dict[str, object]:
    return {
        "closure": closure.label,
        "a": splice.a.address,
        "b": splice.b.address,
        "tray": tray,
        "slot": slot,
        "method": splice.method,
        "loss_db": splice.loss_db,
    }


def remove_splices(session: Session, closure: str, tray: int, slots: Sequence[int]) -> SpliceReport:
    """Remove the splices in these slots of a tray (all of them, or none when any is empty)."""
    lookup = RecordLookup(session)
    place = _closure(lookup, closure)
    report = SpliceReport()
    splices = _find(lookup, place, tray, slots, report)
    if report.problems:
        return report
    ids = [s.id for s in splices]
    session.execute(delete(FiberEnd).where(FiberEnd.splice_id.in_(ids)))
    session.execute(delete(Splice).where(Splice.id.in_(ids)))
    _refresh_circuits(lookup, [e for s in splices for e in (s.a, s.b)])
    report.removed = len(ids)
    report.splices = [_describe(place, s, s.tray, s.slot) for s in splices]
    left_cut = [e.address for s in splices for e in (s.a, s.b) if e.side is not None]
    if left_cut:
        report.notes.append(
            f"these pieces stay cut at {place.label}, now unconnected: {', '.join(left_cut)}"
        )
    return report


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
) -> SpliceReport:
    """Move the splices in these slots to `to_tray`, slots counting up from `to_slot`."""
    lookup = RecordLookup(session)
    place = _closure(lookup, closure)
    report = SpliceReport()
    splices = _find(lookup, place, tray, slots, report)
    target = _tray(lookup, place, to_tray)
    if isinstance(target, str):
        report.problems.append(target)
    if report.problems:
        return report
    assert not isinstance(target, str)
    target_id, capacity = target
    last = to_slot + len(splices) - 1
    if to_slot < 1 or last > capacity:
        report.problems.append(
            f"tray {to_tray} of {place.label} has slots 1-{capacity}, so no slots {to_slot}-{last}"
        )
        return report
    moving = {s.id for s in splices}
    holders = {s.slot: s for s in recorded_splices(lookup, place.id) if s.tray == to_tray}
    for slot in range(to_slot, last + 1):
        holder = holders.get(slot)
        if holder is not None and holder.id not in moving:
            report.problems.append(
                f"tray {to_tray} slot {slot} at {place.label} is taken: it holds"
                f" {holder.description}"
            )
    if report.problems:
        return report
    _apply_moves(session, splices, target_id, capacity, to_slot, same_tray=to_tray == tray)
    report.moved = len(splices)
    report.splices = [_describe(place, s, to_tray, to_slot + i) for i, s in enumerate(splices)]
    return report


def _apply_moves(
    session: Session,
    splices: list[RecordedSplice],
    tray_id: int,
    capacity: int,
    first_slot: int,
    *,
    same_tray: bool,
) -> None:
    """Update the splices one by one, in an order where no slot is ever held twice."""
    moves = [(s, first_slot + i) for i, s in enumerate(sorted(splices, key=lambda s: s.slot))]
    if same_tray:
        # Within one tray a slot may be vacated and taken by the same move. Sources sorted
        # and targets counting up, a splice moving up only ever lands on one moving up too
        # (and down on down), so move the upward ones from the top and the downward ones
        # from the bottom and no slot is ever held twice.
        moves = [m for m in moves if m[1] != m[0].slot]
        moves.sort(key=lambda m: (0, -m[0].slot) if m[1] > m[0].slot else (1, m[0].slot))
    for splice, slot in moves:
        session.execute(
            update(Splice)
            .where(Splice.id == splice.id)
            .values(tray_id=tray_id, tray_capacity=capacity, slot=slot)
        )
