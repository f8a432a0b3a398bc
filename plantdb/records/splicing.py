"""The splicing rules. Every path that records splices comes here: the command line, the
splice-sheet import, the web forms and the API, so a rule is written once.

`record_splices` checks every request against the record (and against the other requests)
before it writes anything, collects every problem rather than stopping at the first, and
writes in a few set-wise statements. The caller owns the transaction (`run_in_transaction`);
when the report lists problems nothing was written and the caller refuses the whole batch.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from functools import lru_cache
from typing import Any, TypeVar

from sqlalchemy import select
from sqlalchemy.orm import Session

from plantdb.audit import record_changes
from plantdb.bulk import BulkWriter, collector_paused
from plantdb.db import racing_for
from plantdb.errors import PlantError
from plantdb.model import ConstructionKind, FiberType, Splice, SpliceMethod
from plantdb.records.bundle_connections import ABSURD_SPLICE_LOSS_DB, new_cut_ends
from plantdb.records.bundle_load import LoadContext
from plantdb.records.changes import cuts_added, splice_added
from plantdb.records.ends import EndRef, resolve_splice_end, sibling_end
from plantdb.records.lookup import CableInfo, PlaceInfo, RecordLookup
from plantdb.records.splice_requests import (
    METHODS,
    EndGroup,
    Progress,
    SpliceRefused,
    SpliceReport,
    SpliceRequest,
    at,
    end_group,
)
from plantdb.records.splice_rows import RecordedSplice, recorded_splices
from plantdb.records.splice_warnings import RowWarnings
from plantdb.records.strand_notation import Construction, leg_names, strand_run
from plantdb.trace.circuits import refresh_affected

__all__ = [
    "METHODS",
    "EndGroup",
    "Progress",
    "SpliceRefused",
    "SpliceReport",
    "SpliceRequest",
    "end_group",
    "record_splices",
]

# What a clerk is told when every attempt met another clerk's splice or cut (see `racing_for`).
RACED = "another clerk recorded a splice or cut on these fiber ends or tray slots"
# The columns the bulk write gives, in the order of the rows' tuples (ids are the database's).
CUT_COLUMNS = ("strand_id", "station_id")
SPLICE_COLUMNS = (
    "closure_id",
    "tray_id",
    "tray_capacity",
    "slot",
    "method",
    "loss_db",
    "spliced_on",
    "spliced_by",
)
END_COLUMNS = ("strand_id", "station_id", "side", "leg_id", "splice_id", "splice_side")
# Progress is reported every this many requests (a sheet of 100,000 rows moves a bar 100 times).
PROGRESS_STEP = 1000
_T = TypeVar("_T")
# Plain strings, compared once per fiber: an enum's .value is a descriptor call each time.
_CENTRAL_CORE = ConstructionKind.CENTRAL_CORE.value
_RIBBON = ConstructionKind.RIBBON.value
# Keys of a reported splice that are not part of the splice as a bundle item (its history).
_REPORT_ONLY = ("a_toward", "b_toward")
# The numbers of a message that name a fiber: a strand or leg after an address's colon, and a
# tray slot. A row's messages alike but for these are one problem said once (`_grouped`).
_FIBER_NUMBER = re.compile(r"(?<=:)\d+|(?<=\bslot )\d+")


@dataclass
class _Group:
    """An end group resolved: its ends, and the cable behind them (None for splitter legs)."""

    ends: list[EndRef]
    cable: CableInfo | None
    whole_unit: bool = False

    @property
    def toward(self) -> str | None:
        """Where the glass of a mid-span piece runs: the label at that end of the cable."""
        first = self.ends[0]
        if self.cable is None or not first.mid_span or first.side is None:
            return None
        return self.cable.toward(first.side)


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
    toward: tuple[str | None, str | None] = (None, None)  # of the a and b ends (mid-span)

    def row(self) -> tuple[Any, ...]:
        """The splice row, in `SPLICE_COLUMNS` order."""
        request = self.request
        return (
            self.closure.id,
            self.tray_id,
            self.capacity,
            self.slot,
            self.method.value,
            request.loss_db,
            request.spliced_on,
            request.spliced_by,
        )

    def describe(self) -> dict[str, Any]:
        """The splice as reported: its bundle item, and at a mid-span access which way each
        cut piece runs (`a_toward`, `b_toward`: the label at that end of its cable)."""
        on = self.request.spliced_on
        item = {
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
        return with_toward(item, *self.toward)


def with_toward(item: dict[str, Any], a: str | None, b: str | None) -> dict[str, Any]:
    """A reported splice with, at a mid-span access, where each cut piece runs."""
    for key, toward in zip(_REPORT_ONLY, (a, b), strict=True):
        if toward is not None:
            item[key] = toward
    return item


def _bundle_item(item: dict[str, Any]) -> dict[str, Any]:
    """A reported splice as the bundle item its history keeps (no report-only keys)."""
    if not any(key in item for key in _REPORT_ONLY):
        return item
    return {key: value for key, value in item.items() if key not in _REPORT_ONLY}


def _method(text: str | None) -> SpliceMethod | None:
    if text is None or not text.strip():
        return None
    try:
        return SpliceMethod(text.strip().lower())
    except ValueError:
        raise PlantError(f"method {text!r} is not one of {', '.join(METHODS)}") from None


def _loss_problem(loss: float | None) -> str | None:
    if loss is not None and not 0 <= loss <= ABSURD_SPLICE_LOSS_DB:
        return (
            f"loss_db {loss:g} dB is not a splice loss (0 to {ABSURD_SPLICE_LOSS_DB:g} dB;"
            " above that it is a typo or a misread meter)"
        )
    return None


def _stated_values(request: SpliceRequest) -> tuple[SpliceMethod | None, list[str]]:
    """The method a request states (None when blank or unreadable), and the problems of its
    method and loss; neither stops the request being checked against the record."""
    problems = []
    try:
        method = _method(request.method)
    except PlantError as exc:
        method = None
        problems.append(exc.message)
    loss = _loss_problem(request.loss_db)
    if loss is not None:
        problems.append(loss)
    return method, problems


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
        self._first_ends: dict[tuple[int, int, str | None], EndRef] = {}
        self.splitter_ids: set[int] = set()

    def check(self, request: SpliceRequest) -> None:
        """Check one request; a bad method or loss is reported with whatever else is wrong.

        A request with problems of its own (or `check_only`) is still checked against the
        record and claims its ends and slots, so a later request reusing them is told; it is
        planned, counted and warned about no further.
        """
        stated, problems = _stated_values(request)
        try:
            closure, a, b, tray_id, capacity = self._prepare(request)
        except PlantError as exc:
            self._refuse(request, [*problems, exc.message])
            return
        method = stated if stated is not None else _default_method(a, b)
        check_only = request.check_only or bool(problems)
        warnings = RowWarnings(request, self._modes_of(a.cable, b.cable))
        toward = (a.toward, b.toward)
        planned = len(self.planned)
        fiber_problems: list[str] = []
        for i, (end_a, end_b) in enumerate(zip(a.ends, b.ends, strict=True)):
            slot = request.slot + i
            found = self._pair_problems(closure, request, stated, end_a, end_b, tray_id, slot)
            if found is None:
                if not check_only:  # a row with bad cells is not "recorded identically"
                    self.report.already_recorded += 1
                continue
            if found:
                fiber_problems.extend(found)
                continue
            self._claim(request, end_a.key, end_b.key, ("slot", tray_id, slot))
            if check_only:
                continue
            warnings.pair(end_a, a.cable, end_b, b.cable)
            self.planned.append(
                _Planned(
                    closure,
                    request.tray,
                    tray_id,
                    capacity,
                    slot,
                    end_a,
                    end_b,
                    method,
                    request,
                    toward,
                )
            )
        if problems or fiber_problems:
            self._refuse(request, problems + _grouped(fiber_problems))
        if len(self.planned) > planned:
            self.report.warnings.extend(warnings.messages())

    def _refuse(self, request: SpliceRequest, problems: list[str]) -> None:
        self.report.problems.extend(at(request.where, p) for p in problems)

    def _prepare(self, request: SpliceRequest) -> tuple[PlaceInfo, _Group, _Group, int, int]:
        closure = self.lookup.closure(request.closure)
        if closure is None:
            raise PlantError(f"closure: no closure is labelled {request.closure}")
        if closure.id not in self._closures:
            self._closures[closure.id] = closure
            self.lookup.load_closure_slots(closure.id)
        a = self._group(request.a, closure)
        b = self._group(request.b, closure)
        if len(a.ends) != len(b.ends):
            raise PlantError(
                f"{request.a} names {len(a.ends)} but {request.b} names {len(b.ends)};"
                " a range must be spliced to a range of the same size"
            )
        tray_id, capacity = self._tray(closure, request, len(a.ends))
        return closure, a, b, tray_id, capacity

    def _group(self, group: EndGroup, closure: PlaceInfo) -> _Group:
        side = group.side.upper() if group.side else None
        if side not in (None, "A", "B"):
            raise PlantError(f"{group}: a side is A or B, not {group.side!r}")
        cable = self.lookup.cable(group.label)  # a cable first: labels share one namespace
        if cable is None:
            return self._legs(group, side, closure)
        run = self._notation(group, strand_run, group.points, _construction(cable))
        numbers = run.numbers
        first = self._first_end(closure, cable, numbers[0], side)
        if len(numbers) == 1:
            return _Group([first], cable, run.whole_unit)
        ends = [first] + [sibling_end(self.lookup, first, cable, n) for n in numbers[1:]]
        return _Group(ends, cable, run.whole_unit)

    def _legs(self, group: EndGroup, side: str | None, closure: PlaceInfo) -> _Group:
        kind = self.lookup.place_kind(group.label)
        if kind != "splitter":
            raise PlantError(f"{group.label}: no cable or splitter is labelled {group.label}")
        if side:
            raise PlantError(f"{group}: a splitter leg has no side")
        splitter = self.lookup.splitter(group.label)
        assert splitter is not None
        self.splitter_ids.add(splitter.id)
        legs = self._notation(group, leg_names, group.points)
        ends = [resolve_splice_end(self.lookup, f"{group.label}:{leg}", closure) for leg in legs]
        return _Group(ends, None)

    @staticmethod
    def _notation(group: EndGroup, read: Callable[..., _T], *args: Any) -> _T:
        try:
            return read(*args)
        except ValueError as exc:
            raise PlantError(f"{group}: {exc}") from None

    def _first_end(
        self, closure: PlaceInfo, cable: CableInfo, number: int, side: str | None
    ) -> EndRef:
        """A strand's end by every rule of `resolve_splice_end`, asked once per cable and side.

        The rules (a station in this closure, a side at a mid-span access and none at an end)
        depend on the cable and side, not the strand, so later rows reuse the first answer.
        """
        key = (closure.id, cable.id, side)
        known = self._first_ends.get(key)
        if known is not None:
            return sibling_end(self.lookup, known, cable, number)
        suffix = f"/{side}" if side else ""
        end = resolve_splice_end(self.lookup, f"{cable.label}:{number}{suffix}", closure)
        self._first_ends[key] = end
        return end

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
        stated: SpliceMethod | None,
        a: EndRef,
        b: EndRef,
        tray_id: int,
        slot: int,
    ) -> list[str] | None:
        """Problems of one fiber splice; None when the record already holds it identically."""
        if a.key == b.key or (a.strand_id is not None and a.strand_id == b.strand_id):
            return [f"{a.address} would be spliced to {b.address}, the same strand"]
        slot_key = ("slot", tray_id, slot)
        claims = self.claims
        place = f"tray {request.tray} slot {{}} at {closure.label}"
        if a.key in claims or b.key in claims or slot_key in claims:
            return [
                f"{name} is already {verb} on {claims[key]}"
                for key, name, verb in (
                    (a.key, a.address, "spliced"),
                    (b.key, b.address, "spliced"),
                    (slot_key, place.format(slot), "used"),
                )
                if key in claims
            ]
        used_by = self.lookup.used_by
        held = [used_by(a.key), used_by(b.key), used_by(slot_key)]
        if not (held[0] or held[1] or held[2]):
            return []
        return self._against_record(
            closure, request, stated, a, b, slot_key, place.format(slot), held
        )

    def _against_record(
        self,
        closure: PlaceInfo,
        request: SpliceRequest,
        stated: SpliceMethod | None,
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
            mismatch = _mismatch(existing, request, stated)
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

    def _modes_of(self, a: CableInfo | None, b: CableInfo | None) -> tuple[str, str] | None:
        """The two cables' fiber modes when they differ (None for a leg or the same mode)."""
        if a is None or b is None:
            return None
        if self._modes is None:
            rows = self.session.execute(select(FiberType.id, FiberType.mode))
            self._modes = {row[0]: str(row[1]) for row in rows}
        modes = self._modes[a.fiber_type_id], self._modes[b.fiber_type_id]
        return modes if modes[0] != modes[1] else None

    def write(self, *, dry_run: bool) -> None:
        ctx = LoadContext(self.session, self.lookup)
        cuts = [(p.closure, end) for p in self.planned for end in new_cut_ends(ctx, [p.a, p.b])]
        self.report.cuts = len(cuts)
        self.report.splices = [p.describe() for p in self.planned]
        if dry_run or not self.planned:
            return
        with racing_for(RACED):
            # Straight to the driver (COPY on PostgreSQL): the rows are checked already, and
            # a compiled statement's per-row parameter handling would cost more than the
            # database spends writing them.
            writer = BulkWriter(self.session.connection(), page_cache=False)
            writer.write("cut", CUT_COLUMNS, [(e.strand_id, e.station_id) for _c, e in cuts])
            writer.write("splice", SPLICE_COLUMNS, [p.row() for p in self.planned])
            splice_ids = self._new_splice_ids()
            writer.write(
                "fiber_end",
                END_COLUMNS,
                [
                    (end.strand_id, end.station_id, end.side, end.leg_id, splice_id, side)
                    for splice_id, planned in zip(splice_ids, self.planned, strict=True)
                    for side, end in ((1, planned.a), (2, planned.b))
                ],
            )
            history = cuts_added(self.session, [(c.id, c.label, end) for c, end in cuts])
            described = zip(splice_ids, self.planned, self.report.splices, strict=True)
            history += [
                splice_added(i, p.closure.id, p.a, p.b, _bundle_item(item))
                for i, p, item in described
            ]
            record_changes(self.session, history)
        self.report.added = len(splice_ids)
        ends = [end for p in self.planned for end in (p.a, p.b)]
        # New splices (and the cuts they make) can complete, re-route or break a circuit.
        refresh_affected(
            self.session,
            strand_ids={e.strand_id for e in ends if e.strand_id is not None},
            splitter_ids=self.splitter_ids,
        )

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


@lru_cache(maxsize=4096)
def _built(units: int, fibers_per_unit: int, construction: str) -> Construction:
    return Construction(units, fibers_per_unit, construction != _CENTRAL_CORE)


def _construction(cable: CableInfo) -> Construction:
    return _built(cable.units, cable.fibers_per_unit, cable.construction)


def _ribbon(cable: CableInfo | None) -> bool:
    return cable is not None and cable.construction == _RIBBON


def _default_method(a: _Group, b: _Group) -> SpliceMethod:
    """Fusion, except a whole ribbon to a whole ribbon: mass fusion."""
    ribbons = a.whole_unit and b.whole_unit and _ribbon(a.cable) and _ribbon(b.cable)
    return SpliceMethod.MASS_FUSION if ribbons else SpliceMethod.FUSION


def _mismatch(existing: RecordedSplice, request: SpliceRequest, method: SpliceMethod | None) -> str:
    """How a re-entered splice differs from the record ("" when it states nothing different).

    A value the request leaves blank states nothing and matches whatever is recorded; every
    stated value that differs (method, loss, date, splicer) is named, recorded value first.
    """
    differences = []
    if method is not None and method.value != existing.method:
        differences.append(f"as {existing.method}, not {method.value}")
    loss = request.loss_db
    if loss is not None and (existing.loss_db is None or abs(existing.loss_db - loss) > 1e-9):
        recorded = "no loss" if existing.loss_db is None else f"loss {existing.loss_db:g} dB"
        differences.append(f"with {recorded}, not {loss:g} dB")
    on = request.spliced_on
    if on is not None and on != existing.spliced_on:
        was = existing.spliced_on
        when = f"spliced on {was.isoformat()}" if was else "with no splicing date"
        differences.append(f"{when}, not {on.isoformat()}")
    by = request.spliced_by
    if by and by != existing.spliced_by:
        who = f"spliced by {existing.spliced_by!r}" if existing.spliced_by else "with no splicer"
        differences.append(f"{who}, not {by!r}")
    return "; ".join(differences)


def _grouped(problems: list[str]) -> list[str]:
    """A row's problems, one line per kind however many fibers share it.

    Messages alike but for the numbers naming fibers (strands after an address's colon, tray
    slots) become one naming the runs: twelve "C-A:13 to C-B:1 in tray 1 slot 1 ..." lines
    read "C-A:13-24 to C-B:1-12 in tray 1 slots 1-12 ...". Fully equal messages become one.
    """
    if len(problems) < 2:
        return problems
    groups: dict[tuple[str, ...], list[list[int]]] = {}
    for problem in problems:
        shape = tuple(_FIBER_NUMBER.split(problem))
        numbers = [int(n) for n in _FIBER_NUMBER.findall(problem)]
        groups.setdefault(shape, []).append(numbers)
    return [_merged(shape, rows) for shape, rows in groups.items()]


def _merged(shape: tuple[str, ...], rows: list[list[int]]) -> str:
    """One message of a shape (its text between fiber numbers) for every row of numbers."""
    out = [shape[0]]
    for part, values in zip(shape[1:], zip(*rows, strict=True), strict=True):
        text = _runs(values)
        if out[-1].endswith("slot ") and not text.isdigit():
            out[-1] = out[-1][:-1] + "s "  # "slots 1-12"
        out.extend((text, part))
    return "".join(out)


def _runs(values: tuple[int, ...]) -> str:
    """Numbers as runs, in their order: (5, 5) "5"; (13, ..., 24) "13-24"; (1, 2, 3, 7) "1-3, 7"."""
    if all(v == values[0] for v in values):
        return str(values[0])
    runs: list[list[int]] = []
    for value in values:
        if runs and value == runs[-1][-1] + 1:
            runs[-1].append(value)
        else:
            runs.append([value])
    return ", ".join(str(r[0]) if len(r) == 1 else f"{r[0]}-{r[-1]}" for r in runs)


def record_splices(
    session: Session,
    requests: list[SpliceRequest],
    *,
    dry_run: bool = False,
    progress: Progress | None = None,
) -> SpliceReport:
    """Check every request, then write them all (unless a dry run or any problem)."""
    planner = _Planner(session)
    with collector_paused(), _sqlite_cache(session, len(requests)):
        if len(requests) >= PREFETCH_REQUESTS:
            planner.lookup.prefetch(
                (r.closure for r in requests), (g.label for r in requests for g in (r.a, r.b))
            )
        for n, request in enumerate(requests, start=1):
            planner.check(request)
            if progress is not None and n % PROGRESS_STEP == 0:
                progress(PROGRESS_STEP)
        if progress is not None and len(requests) % PROGRESS_STEP:
            progress(len(requests) % PROGRESS_STEP)
        if not planner.report.problems:
            planner.write(dry_run=dry_run)
    return planner.report


# From this many requests the closures and cables they name are looked up together up front,
# a few queries in all, instead of several queries for each as it first comes up.
PREFETCH_REQUESTS = 50
# From this many requests a splicing call is bulk work, worth a bigger SQLite page cache.
BULK_REQUESTS = 5_000


@contextmanager
def _sqlite_cache(session: Session, requests: int) -> Iterator[None]:
    """On SQLite, a large page cache for a bulk check and write, put back afterwards.

    The default cache (2 MB) no longer holds the indexes of a big record, and each row read
    or inserted then costs page reads; the same remedy as the synthetic-city loader's.
    """
    connection = session.connection()
    if connection.dialect.name != "sqlite" or requests < BULK_REQUESTS:
        yield
        return
    before = connection.exec_driver_sql("PRAGMA cache_size").scalar()
    connection.exec_driver_sql("PRAGMA cache_size = -1000000")  # up to 1 GB, as needed
    try:
        yield
    finally:
        connection.exec_driver_sql(f"PRAGMA cache_size = {int(before or -2000)}")
