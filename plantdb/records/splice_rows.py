"""A closure's recorded splices with both ends named, read in one query; its sheet.

Shared by the splicing rules (is this row already recorded? what holds that slot?), the sheet
export and the printed sheet, so a recorded splice reads the same everywhere.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from plantdb.addresses import strand_address
from plantdb.colours import Marking, marking, unit_and_position
from plantdb.errors import NotFound
from plantdb.model import (
    Cable,
    ConstructionKind,
    FiberEnd,
    Splice,
    Splitter,
    SplitterLeg,
    Station,
    Strand,
    Structure,
    Tray,
)
from plantdb.records.lookup import CableInfo, RecordLookup


@dataclass(frozen=True)
class RecordedEnd:
    """One end of a recorded splice: a strand's end (cable, strand, side) or a splitter leg."""

    address: str
    key: tuple[object, ...]
    label: str
    point: str  # strand number or leg name
    side: str | None = None  # "A"/"B" at a mid-span access, None at a cable's end or a leg
    cable: CableInfo | None = None
    strand: int | None = None
    strand_id: int | None = None

    @property
    def toward(self) -> str | None:
        """Where the glass of a mid-span piece runs: the label of that end of the cable."""
        if self.side is None or self.cable is None:
            return None
        return self.cable.toward(self.side)


@dataclass(frozen=True)
class RecordedSplice:
    """A splice row of the record with its two ends (splice sides 1 and 2)."""

    id: int
    tray: int
    tray_id: int
    tray_capacity: int
    slot: int
    method: str
    loss_db: float | None
    spliced_on: dt.date | None
    spliced_by: str | None
    a: RecordedEnd
    b: RecordedEnd
    version: int = 1  # bumped by every change (the optimistic check of an edit)

    def joins(self, first: tuple[object, ...], second: tuple[object, ...]) -> bool:
        """True when this splice joins exactly these two ends, in either order."""
        return {self.a.key, self.b.key} == {first, second}

    @property
    def description(self) -> str:
        return f"{self.a.address} to {self.b.address}"

    def item(
        self, closure: str, tray: int | None = None, slot: int | None = None
    ) -> dict[str, Any]:
        """The splice as a bundle item; at another tray and slot when given (after a move)."""
        on = self.spliced_on
        return {
            "closure": closure,
            "a": self.a.address,
            "b": self.b.address,
            "tray": self.tray if tray is None else tray,
            "slot": self.slot if slot is None else slot,
            "method": self.method,
            "loss_db": self.loss_db,
            "spliced_on": on.isoformat() if on else None,
            "spliced_by": self.spliced_by,
        }


def _strand_end(row: Any, cable: CableInfo, mid_span: bool) -> RecordedEnd:
    side = str(row.side)
    number: int = row.number
    return RecordedEnd(
        address=strand_address(cable.label, number, side if mid_span else None),
        key=("end", cable.id, row.strand_id, row.station_id, side),
        label=cable.label,
        point=str(number),
        side=side if mid_span else None,
        cable=cable,
        strand=number,
        strand_id=row.strand_id,
    )


def _station_kind(lookup: RecordLookup, label: str, station_id: int) -> tuple[CableInfo, bool]:
    """The cable, and whether it passes through this station mid-span."""
    cable = lookup.cable(label)
    assert cable is not None
    station = next(s for s in cable.stations if s.id == station_id)
    return cable, cable.end_side(station) is None


def recorded_splices(lookup: RecordLookup, closure_id: int) -> list[RecordedSplice]:
    """Every splice of a closure, by tray and slot, with both ends named."""
    rows = lookup.session.execute(
        select(
            Splice.id,
            Tray.number.label("tray"),
            Splice.tray_id,
            Splice.tray_capacity,
            Splice.slot,
            Splice.method,
            Splice.loss_db,
            Splice.spliced_on,
            Splice.spliced_by,
            Splice.version,
            FiberEnd.splice_side,
            FiberEnd.strand_id,
            FiberEnd.station_id,
            FiberEnd.side,
            FiberEnd.leg_id,
            Cable.label.label("cable"),
            Strand.number.label("number"),
            Splitter.label.label("splitter"),
            SplitterLeg.name.label("leg"),
        )
        .join(Tray, Tray.id == Splice.tray_id)
        .join(FiberEnd, FiberEnd.splice_id == Splice.id)
        .outerjoin(Strand, Strand.id == FiberEnd.strand_id)
        .outerjoin(Cable, Cable.id == Strand.cable_id)
        .outerjoin(SplitterLeg, SplitterLeg.id == FiberEnd.leg_id)
        .outerjoin(Splitter, Splitter.id == SplitterLeg.splitter_id)
        .where(Splice.closure_id == closure_id)
        .order_by(Tray.number, Splice.slot, FiberEnd.splice_side)
    ).all()
    ends: dict[int, dict[int, RecordedEnd]] = {}
    heads: dict[int, Any] = {}
    stations: dict[tuple[str, int], tuple[CableInfo, bool]] = {}
    for row in rows:
        if row.leg_id is not None:
            end = RecordedEnd(
                f"{row.splitter}:{row.leg}", ("leg", row.leg_id), row.splitter, row.leg
            )
        else:
            where = (row.cable, row.station_id)
            if where not in stations:
                stations[where] = _station_kind(lookup, *where)
            end = _strand_end(row, *stations[where])
        ends.setdefault(row.id, {})[row.splice_side] = end
        heads.setdefault(row.id, row)
    return [
        RecordedSplice(
            id=splice_id,
            tray=head.tray,
            tray_id=head.tray_id,
            tray_capacity=head.tray_capacity,
            slot=head.slot,
            method=str(head.method),
            loss_db=head.loss_db,
            spliced_on=head.spliced_on,
            spliced_by=head.spliced_by,
            a=ends[splice_id][1],
            b=ends[splice_id][2],
            version=head.version,
        )
        for splice_id, head in heads.items()
    ]


@dataclass
class ClosureSheet:
    """What a closure's splice sheet shows: where it is, its trays, its splices in order."""

    closure: str
    structure: str
    trays: list[tuple[int, int]]  # (tray number, slots)
    splices: list[RecordedSplice]
    cables: list[CableInfo]  # every cable worked here, by label


def closure_sheet(session: Session, label: str) -> ClosureSheet:
    """Read a closure's trays and splices (by tray, then slot)."""
    lookup = RecordLookup(session)
    closure = lookup.closure(label)
    if closure is None:
        raise NotFound(f"closure: no closure is labelled {label}")
    structure = session.scalar(select(Structure.label).where(Structure.id == closure.structure_id))
    trays = sorted((number, cap) for number, (_id, cap) in lookup.trays(closure.id).items())
    labels = session.scalars(
        select(Cable.label)
        .join(Station, Station.cable_id == Cable.id)
        .where(Station.closure_id == closure.id)
        .order_by(Cable.label)
    ).all()
    cables = [info for info in map(lookup.cable, labels) if info is not None]
    splices = recorded_splices(lookup, closure.id)
    return ClosureSheet(label, structure or "", trays, splices, cables)


def end_markings(end: RecordedEnd) -> tuple[Marking | None, Marking | None]:
    """(unit marking, fiber marking) of a strand end by TIA-598; (None, None) for a leg."""
    if end.cable is None or end.strand is None:
        return None, None
    if end.cable.construction == ConstructionKind.CENTRAL_CORE.value:
        return None, marking(end.strand)
    unit, position = unit_and_position(end.strand, end.cable.fibers_per_unit)
    return marking(unit), marking(position)
