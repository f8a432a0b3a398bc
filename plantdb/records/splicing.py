"""The splicing rules. Every path that records splices comes here: the command line, the
splice-sheet import, the web forms and the API, so a rule is written once.

`record_splices` checks every request against the record (and against the other requests)
before it writes anything, collects every problem rather than stopping at the first, and
writes in a few set-wise statements. The caller owns the transaction (`run_in_transaction`);
when the report lists problems nothing was written and the caller refuses the whole batch.
"""

from __future__ import annotations

import datetime as dt
import gc
import re
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from plantdb.addresses import parse_address
from plantdb.catalogue import SPLICE_MAX
from plantdb.colours import strand_colours
from plantdb.errors import PlantError
from plantdb.model import ConstructionKind, Cut, FiberEnd, FiberType, Splice, SpliceMethod
from plantdb.records.bundle_connections import ABSURD_SPLICE_LOSS_DB, cut_rows_for, end_row
from plantdb.records.bundle_load import LoadContext
from plantdb.records.ends import EndRef, resolve_splice_end
from plantdb.records.lookup import CableInfo, PlaceInfo, RecordLookup
from plantdb.records.splice_rows import RecordedSplice, recorded_splices
from plantdb.records.strand_notation import Construction, leg_names, strand_run

METHODS = tuple(m.value for m in SpliceMethod)
# Progress is reported every this many requests (a sheet of 100,000 rows moves a bar 100 times).
PROGRESS_STEP = 1000
# A trailing /A or /B after a strand number or a numeric range is the contract's side suffix.
_SIDE_SUFFIX = re.compile(r"^(\d+(?:\s*-\s*\d+)?)\s*/\s*([ABab])$")

Progress = Callable[[int], None]


@dataclass(frozen=True)
class EndGroup:
    """One side of a splice request: a cable's strands (with the piece's side at a mid-span
    access) or a splitter's legs, in the notation of `strand_notation`."""

    label: str
    points: str
    side: str | None = None

    def __str__(self) -> str:
        side = f" side {self.side}" if self.side else ""
        return f"{self.label}:{self.points}{side}"


def end_group(text: str, side: str | None = None) -> EndGroup:
    """`LABEL:POINTS` (e.g. "C-A:13-24", "C-A:tube 2", "C-A:BL/OR", "F-1:5/A", "SPL-1:in")."""
    address = parse_address(text, "fiber end")
    points = address.point
    suffix = _SIDE_SUFFIX.match(points)
    if suffix:
        if side is not None and side.upper() != suffix.group(2).upper():
            raise PlantError(f"{text}: the address says side {suffix.group(2)}, not {side}")
        points, side = suffix.group(1), suffix.group(2)
    return EndGroup(address.label, points, side.upper() if side else None)


@dataclass(frozen=True)
class SpliceRequest:
    """Splice a group of ends to another of the same size, slots counting up from `slot`."""

    closure: str
    tray: int
    slot: int
    a: EndGroup
    b: EndGroup
    method: str | None = None
    loss_db: float | None = None
    spliced_on: dt.date | None = None
    spliced_by: str | None = None
    where: str = ""  # "line 7" on a sheet: the prefix of every message about this request


@dataclass
class SpliceReport:
    """What a splicing call did (or, with problems or a dry run, would have done)."""

    added: int = 0
    already_recorded: int = 0
    removed: int = 0
    moved: int = 0
    cuts: int = 0
    splices: list[dict[str, Any]] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)

    def document(self) -> dict[str, Any]:
        """The report as a JSON document."""
        return {
            "added": self.added,
            "already_recorded": self.already_recorded,
            "removed": self.removed,
            "moved": self.moved,
            "cuts": self.cuts,
            "splices": self.splices,
            "warnings": self.warnings,
            "notes": self.notes,
            "problems": self.problems,
        }

    def refuse_if_problems(self, what: str) -> None:
        """Raise `SpliceRefused` listing every problem (and the warnings after them)."""
        if self.problems:
            raise SpliceRefused(what, self)


class SpliceRefused(PlantError):
    """A batch of splices refused as a whole: every problem found, nothing written."""

    def __init__(self, what: str, report: SpliceReport) -> None:
        count = len(report.problems)
        noun = "problem" if count == 1 else "problems"
        details = report.problems + [f"warning: {w}" for w in report.warnings]
        super().__init__(f"{what} refused, nothing was written: {count} {noun}", details)
        self.report = report


def at(where: str, message: str) -> str:
    """A message about a request, prefixed with where it came from ("line 7: ...")."""
    return f"{where}: {message}" if where else message


@dataclass
class _Group:
    """An end group resolved: its ends, and the cable behind them (None for splitter legs)."""

    ends: list[EndRef]
    cable: CableInfo | None
    whole_unit: bool = False


@dataclass
class _Planned:
    """One fiber splice that passed every check, ready to write."""

    closure: PlaceInfo
    tray: int
    tray_id: int
    capacity: int
    slot: int
    a: EndRef
    b: EndRef
    method: SpliceMethod
    request: SpliceRequest

    def row(self) -> dict[str, Any]:
        return {
            "closure_id": self.closure.id,
            "tray_id": self.tray_id,
            "tray_capacity": self.capacity,
            "slot": self.slot,
            "method": self.method,
            "loss_db": self.request.loss_db,
            "spliced_on": self.request.spliced_on,
            "spliced_by": self.request.spliced_by,
        }

    def describe(self) -> dict[str, Any]:
        on = self.request.spliced_on
        return {
            "closure": self.closure.label,
            "a": self.a.address,
            "b": self.b.address,
            "tray": self.tray,
            "slot": self.slot,
            "method": self.method.value,
            "loss_db": self.request.loss_db,
            "spliced_on": on.isoformat() if on else None,
            "spliced_by": self.request.spliced_by,
        }


def _method(text: str | None) -> SpliceMethod | None:
    if text is None or not text.strip():
        return None
    try:
        return SpliceMethod(text.strip().lower())
    except ValueError:
        raise PlantError(f"method {text!r} is not one of {', '.join(METHODS)}") from None


def _check_loss(loss: float | None) -> None:
    if loss is not None and not 0 <= loss <= ABSURD_SPLICE_LOSS_DB:
        raise PlantError(
            f"loss_db {loss:g} dB is not a splice loss (0 to {ABSURD_SPLICE_LOSS_DB:g} dB;"
            " above that it is a typo or a misread meter)"
        )


class _Planner:
    """Checks requests one by one against the record and each other; writes them at the end."""

    def __init__(self, session: Session) -> None:
        self.session = session
        self.lookup = RecordLookup(session)
        self.report = SpliceReport()
        self.planned: list[_Planned] = []
        self.claims: dict[tuple[object, ...], str] = {}
        self._modes: dict[int, str] | None = None
        self._recorded: dict[int, tuple[dict[object, RecordedSplice], ...]] = {}
        self._closures: dict[int, PlaceInfo] = {}

    def check(self, request: SpliceRequest) -> None:
        try:
            closure, a, b, method, tray_id, capacity = self._prepare(request)
        except PlantError as exc:
            self.report.problems.append(at(request.where, exc.message))
            return
        warnings = _RowWarnings(request, self._mode)
        planned = len(self.planned)
        for i, (end_a, end_b) in enumerate(zip(a.ends, b.ends, strict=True)):
            slot = request.slot + i
            problems = self._pair_problems(closure, request, end_a, end_b, tray_id, slot)
            if problems is None:
                self.report.already_recorded += 1
                continue
            if problems:
                self.report.problems.extend(at(request.where, p) for p in problems)
                continue
            self._claim(request, end_a.key, end_b.key, ("slot", tray_id, slot))
            warnings.pair(end_a, a.cable, end_b, b.cable)
            self.planned.append(
                _Planned(
                    closure, request.tray, tray_id, capacity, slot, end_a, end_b, method, request
                )
            )
        if len(self.planned) > planned:
            self.report.warnings.extend(warnings.messages())

    def _prepare(
        self, request: SpliceRequest
    ) -> tuple[PlaceInfo, _Group, _Group, SpliceMethod, int, int]:
        closure = self.lookup.closure(request.closure)
        if closure is None:
            raise PlantError(f"closure: no closure is labelled {request.closure}")
        if closure.id not in self._closures:
            self._closures[closure.id] = closure
            self.lookup.load_closure_slots(closure.id)
        method = _method(request.method)
        _check_loss(request.loss_db)
        a = self._group(request.a, closure)
        b = self._group(request.b, closure)
        if len(a.ends) != len(b.ends):
            raise PlantError(
                f"{request.a} names {len(a.ends)} but {request.b} names {len(b.ends)};"
                " a range must be spliced to a range of the same size"
            )
        tray_id, capacity = self._tray(closure, request, len(a.ends))
        if method is None:
            ribbons = a.whole_unit and b.whole_unit and _ribbon(a.cable) and _ribbon(b.cable)
            method = SpliceMethod.MASS_FUSION if ribbons else SpliceMethod.FUSION
        return closure, a, b, method, tray_id, capacity

    def _group(self, group: EndGroup, closure: PlaceInfo) -> _Group:
        kind = self.lookup.place_kind(group.label)
        side = group.side.upper() if group.side else None
        if side not in (None, "A", "B"):
            raise PlantError(f"{group}: a side is A or B, not {group.side!r}")
        try:
            if kind == "splitter":
                if side:
                    raise PlantError(f"{group}: a splitter leg has no side")
                points: tuple[str, ...] = leg_names(group.points)
                cable, whole = None, False
            elif kind == "cable":
                cable = self.lookup.cable(group.label)
                assert cable is not None
                run = strand_run(group.points, _construction(cable))
                points, whole = tuple(map(str, run.numbers)), run.whole_unit
            else:
                raise PlantError(f"{group.label}: no cable or splitter is labelled {group.label}")
        except ValueError as exc:
            raise PlantError(f"{group}: {exc}") from None
        suffix = f"/{side}" if side else ""
        ends = [
            resolve_splice_end(self.lookup, f"{group.label}:{p}{suffix}", closure) for p in points
        ]
        return _Group(ends, cable, whole)

    def _tray(self, closure: PlaceInfo, request: SpliceRequest, count: int) -> tuple[int, int]:
        trays = self.lookup.trays(closure.id)
        found = trays.get(request.tray)
        if found is None:
            have = f"trays 1-{max(trays)}" if trays else "no trays"
            raise PlantError(f"closure {closure.label} has {have}, no tray {request.tray}")
        tray_id, capacity = found
        last = request.slot + count - 1
        if request.slot < 1 or last > capacity:
            slots = f"slot {request.slot}" if count == 1 else f"slots {request.slot}-{last}"
            raise PlantError(
                f"tray {request.tray} of {closure.label} has slots 1-{capacity}, so no {slots}"
            )
        return tray_id, capacity

    def _claim(self, request: SpliceRequest, *keys: tuple[object, ...]) -> None:
        where = request.where or "another splice of this request"
        for key in keys:
            self.claims[key] = where

    def _pair_problems(
        self,
        closure: PlaceInfo,
        request: SpliceRequest,
        a: EndRef,
        b: EndRef,
        tray_id: int,
        slot: int,
    ) -> list[str] | None:
        """Problems of one fiber splice; None when the record already holds it identically."""
        if a.key == b.key or (a.strand_id is not None and a.strand_id == b.strand_id):
            return [f"{a.address} would be spliced to {b.address}, the same strand"]
        place = f"tray {request.tray} slot {slot} at {closure.label}"
        slot_key = ("slot", tray_id, slot)
        problems = [
            f"{name} is already {verb} on {self.claims[key]}"
            for key, name, verb in (
                (a.key, a.address, "spliced"),
                (b.key, b.address, "spliced"),
                (slot_key, place, "used"),
            )
            if key in self.claims
        ]
        if problems:
            return problems
        held = [self.lookup.used_by(key) for key in (a.key, b.key, slot_key)]
        if not any(held):
            return []
        return self._against_record(closure, request, a, b, slot_key, place, held)

    def _against_record(
        self,
        closure: PlaceInfo,
        request: SpliceRequest,
        a: EndRef,
        b: EndRef,
        slot_key: tuple[object, ...],
        place: str,
        held: list[str | None],
    ) -> list[str] | None:
        by_end, by_slot = self._recorded_in(closure)
        existing = by_end.get(a.key)
        if existing is not None and existing.joins(a.key, b.key):
            if by_slot.get(slot_key) is not existing:
                return [
                    f"{existing.description} is recorded in tray {existing.tray} slot"
                    f" {existing.slot}, not in {place}"
                ]
            mismatch = _mismatch(existing, request)
            if mismatch:
                return [f"{existing.description} in {place} is recorded {mismatch}"]
            self._claim(request, a.key, b.key, slot_key)
            return None
        problems = []
        for end, what in ((a, held[0]), (b, held[1])):
            splice = by_end.get(end.key)
            if splice is not None:
                other = splice.b if splice.a.key == end.key else splice.a
                where = f"tray {splice.tray} slot {splice.slot}"
                problems.append(f"{end.address} is already spliced to {other.address} ({where})")
            elif what:
                problems.append(f"{end.address} at {closure.label} is already {what}")
        if held[2]:
            holder = by_slot.get(slot_key)
            holds = holder.description if holder else "another splice"
            problems.append(f"{place} is taken: it holds {holds}")
        return problems

    def _recorded_in(
        self, closure: PlaceInfo
    ) -> tuple[dict[object, RecordedSplice], dict[object, RecordedSplice]]:
        if closure.id not in self._recorded:
            by_end: dict[object, RecordedSplice] = {}
            by_slot: dict[object, RecordedSplice] = {}
            for splice in recorded_splices(self.lookup, closure.id):
                by_end[splice.a.key] = by_end[splice.b.key] = splice
                by_slot[("slot", splice.tray_id, splice.slot)] = splice
            self._recorded[closure.id] = (by_end, by_slot)
        by_end, by_slot = self._recorded[closure.id]
        return by_end, by_slot

    def _mode(self, fiber_type_id: int | None) -> str | None:
        if self._modes is None:
            rows = self.session.execute(select(FiberType.id, FiberType.mode))
            self._modes = {row[0]: str(row[1]) for row in rows}
        return None if fiber_type_id is None else self._modes.get(fiber_type_id)

    def write(self, *, dry_run: bool) -> None:
        ctx = LoadContext(self.session, self.lookup)
        cut_rows = cut_rows_for(ctx, [end for p in self.planned for end in (p.a, p.b)])
        self.report.cuts = len(cut_rows)
        self.report.splices = [p.describe() for p in self.planned]
        if dry_run:
            return
        ctx.insert(Cut, cut_rows)
        ctx.insert(Splice, [p.row() for p in self.planned])
        splice_ids = self._new_splice_ids()
        ctx.insert(
            FiberEnd,
            [
                {**end_row(end), "splice_id": splice_id, "splice_side": side}
                for splice_id, planned in zip(splice_ids, self.planned, strict=True)
                for side, end in ((1, planned.a), (2, planned.b))
            ],
        )
        self.report.added = len(splice_ids)

    def _new_splice_ids(self) -> list[int]:
        """Ids of the splices just written, read back by their unique (tray, slot).

        RETURNING in parameter order makes SQLite insert row by row; one query per closure
        is far cheaper than ten thousand single-row inserts.
        """
        closures = sorted({p.closure.id for p in self.planned})
        ids: dict[tuple[int, int], int] = {}
        for closure_id in closures:
            rows = self.session.execute(
                select(Splice.tray_id, Splice.slot, Splice.id).where(
                    Splice.closure_id == closure_id
                )
            )
            ids.update(((tray_id, slot), splice_id) for tray_id, slot, splice_id in rows)
        return [ids[(p.tray_id, p.slot)] for p in self.planned]


def _construction(cable: CableInfo) -> Construction:
    has_units = cable.construction != ConstructionKind.CENTRAL_CORE.value
    return Construction(cable.units, cable.fibers_per_unit, has_units)


def _ribbon(cable: CableInfo | None) -> bool:
    return cable is not None and cable.construction == ConstructionKind.RIBBON.value


def _mismatch(existing: RecordedSplice, request: SpliceRequest) -> str:
    """How a re-entered splice differs from the record ("" when compatible)."""
    method = _method(request.method)
    if method is not None and method.value != existing.method:
        return f"as {existing.method}, not {method.value}"
    loss = request.loss_db
    if loss is not None and (existing.loss_db is None or abs(existing.loss_db - loss) > 1e-9):
        recorded = "no loss" if existing.loss_db is None else f"loss {existing.loss_db:g} dB"
        return f"with {recorded}, not {loss:g} dB"
    return ""


class _RowWarnings:
    """Warnings of one request, one line per kind however many fibers the row splices."""

    def __init__(self, request: SpliceRequest, mode: Callable[[int | None], str | None]) -> None:
        self.request = request
        self.mode = mode
        self.first: dict[str, str] = {}
        self.count: dict[str, int] = {}

    def _note(self, kind: str, message: str) -> None:
        self.first.setdefault(kind, message)
        self.count[kind] = self.count.get(kind, 0) + 1

    def pair(
        self, a: EndRef, a_cable: CableInfo | None, b: EndRef, b_cable: CableInfo | None
    ) -> None:
        if a_cable is None or b_cable is None or a.strand is None or b.strand is None:
            return  # a splitter leg has neither a colour nor a fiber type of the record
        mode_a, mode_b = self.mode(a.fiber_type_id), self.mode(b.fiber_type_id)
        if mode_a and mode_b and mode_a != mode_b:
            self._note(
                "mode",
                f"mode mix: {a.address} is {mode_a} but {b.address} is {mode_b}; light will not"
                " cross this splice as the record expects",
            )
        if _colour_key(a_cable, a.strand) != _colour_key(b_cable, b.strand):
            self._note(
                "colour",
                f"colour change: {a.address} ({_colours(a_cable, a.strand)}) to {b.address}"
                f" ({_colours(b_cable, b.strand)}) by the TIA-598 colour code",
            )

    def messages(self) -> list[str]:
        out = [
            at(self.request.where, message + _more(self.count[kind]))
            for kind, message in self.first.items()
        ]
        loss = self.request.loss_db
        if loss is not None and loss > SPLICE_MAX.value:
            out.append(
                at(
                    self.request.where,
                    f"loss {loss:g} dB is above the {SPLICE_MAX.value:g} dB splice allowance,"
                    f" the {SPLICE_MAX.source}; check the splice or the reading",
                )
            )
        return out


def _more(count: int) -> str:
    return "" if count == 1 else f" (and {count - 1} more on this row)"


def _colour_key(cable: CableInfo, strand: int) -> tuple[int | None, int]:
    """(unit position or None, fiber position): equal keys mean equal TIA-598 colours."""
    if cable.construction == ConstructionKind.CENTRAL_CORE.value:
        return None, strand
    unit, position = divmod(strand - 1, cable.fibers_per_unit)
    return unit + 1, position + 1


def _colours(cable: CableInfo, strand: int) -> str:
    if cable.construction == ConstructionKind.CENTRAL_CORE.value:
        return strand_colours(strand, cable.fiber_count, has_units=False)
    return strand_colours(strand, cable.fibers_per_unit)


def record_splices(
    session: Session,
    requests: list[SpliceRequest],
    *,
    dry_run: bool = False,
    progress: Progress | None = None,
) -> SpliceReport:
    """Check every request, then write them all (unless a dry run or any problem)."""
    planner = _Planner(session)
    with _collector_paused():
        for n, request in enumerate(requests, start=1):
            planner.check(request)
            if progress is not None and n % PROGRESS_STEP == 0:
                progress(PROGRESS_STEP)
        if progress is not None and len(requests) % PROGRESS_STEP:
            progress(len(requests) % PROGRESS_STEP)
        if not planner.report.problems:
            planner.write(dry_run=dry_run)
    return planner.report


@contextmanager
def _collector_paused() -> Iterator[None]:
    """Pause CPython's cyclic garbage collector for a bulk check.

    Checking a large sheet builds hundreds of thousands of long-lived objects and no cycles;
    the generational collector would rescan them over and over (about a third of the time).
    Reference counting still frees everything; the previous setting is restored after.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()
