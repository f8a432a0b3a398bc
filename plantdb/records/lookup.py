"""Cached lookups of the record by label, for services that validate many items at once.

A bundle load or a splice-sheet import asks the same questions thousands of times (which
cable is this, what stations does it have, is this fiber end free); this answers each from
one indexed query per label, remembered for the rest of the transaction. Services that insert
rows tell the lookup (`remember_*`, `occupy`) so later questions see them.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from plantdb.model import (
    Cable,
    Closure,
    Cut,
    Equipment,
    FiberEnd,
    FiberType,
    Panel,
    Port,
    Span,
    Splice,
    Splitter,
    SplitterLeg,
    Station,
    Strand,
    Structure,
    Tray,
)
from plantdb.records.placement import SpanEnds

# Kinds of label that share one namespace, because addresses (`X:1`) and stations (`at`)
# name them without saying which kind they are.
PLACE_KINDS = ("cable", "closure", "panel", "equipment", "splitter")


@dataclass(frozen=True)
class StructureRef:
    id: int
    lon: float
    lat: float


@dataclass
class StationInfo:
    id: int
    seq: int
    closure_id: int | None
    panel_id: int | None
    path_index: int
    mark_m: float | None
    place: str


@dataclass
class CableInfo:
    id: int
    label: str
    units: int
    fibers_per_unit: int
    construction: str
    fiber_type_id: int
    stations: list[StationInfo] = field(default_factory=list)

    @property
    def fiber_count(self) -> int:
        return self.units * self.fibers_per_unit

    def station_at_closure(self, closure_id: int) -> StationInfo | None:
        return next((s for s in self.stations if s.closure_id == closure_id), None)

    def station_at_panel(self, panel_id: int) -> StationInfo | None:
        return next((s for s in self.stations if s.panel_id == panel_id), None)

    def toward(self, side: str) -> str:
        """Where the glass of a cut strand's piece runs: the place at that end of the cable
        (side "A": its A end, "B": its B end)."""
        return self.stations[0 if side == "A" else -1].place

    def end_side(self, station: StationInfo) -> str | None:
        """At the cable's A end its glass runs toward B ('B'); at the B end toward A ('A')."""
        if station.seq == self.stations[0].seq:
            return "B"
        if station.seq == self.stations[-1].seq:
            return "A"
        return None


@dataclass
class SplitterInfo:
    id: int
    label: str
    closure_id: int | None
    panel_id: int | None
    inputs: int
    outputs: int
    legs: dict[str, int]
    structure_id: int


@dataclass
class PlaceInfo:
    """A closure or panel: where it stands."""

    id: int
    label: str
    structure_id: int
    port_count: int = 0


# The kind of a usage key -> the token under which its owner's usage is loaded once.
_USAGE_TOKENS: dict[object, str] = {
    "end": "cable",
    "back": "port",
    "front": "port",
    "leg": "leg",
    "slot": "tray",
}


class RecordLookup:
    """Label -> row answers with caches, valid inside one session's transaction."""

    def __init__(self, session: Session) -> None:
        self.session = session
        self._structures: dict[str, StructureRef | None] = {}
        self._spans: dict[str, SpanEnds | None] = {}
        self._span_ids: dict[str, int] = {}
        self._fiber_types: dict[str, tuple[int, str] | None] = {}
        self._closures: dict[str, PlaceInfo | None] = {}
        self._panels: dict[str, PlaceInfo | None] = {}
        self._equipment: dict[str, PlaceInfo | None] = {}
        self._splitters: dict[str, SplitterInfo | None] = {}
        self._cables: dict[str, CableInfo | None] = {}
        self._strands: dict[int, dict[int, int]] = {}
        self._ports: dict[tuple[str, int], dict[str, int]] = {}
        self._trays: dict[int, dict[int, tuple[int, int]]] = {}
        self._used: dict[tuple[object, ...], str] = {}
        self._loaded_usage: set[tuple[str, int]] = set()
        self._cuts: set[tuple[int, int]] = set()

    # -- many at once ------------------------------------------------------------------
    def prefetch(self, closures: Iterable[str], cables: Iterable[str]) -> None:
        """Load what splicing asks of these closures and cables in a few queries.

        The same answers the lazy lookups give one label at a time, for a big sheet naming
        a thousand closures and cables: their ids, trays and taken slots, stations, strands,
        and which fiber ends are already connected or cut.
        """
        closure_labels = sorted({c for c in closures if c not in self._closures})
        cable_labels = sorted({c for c in cables if c not in self._cables})
        for chunk in _chunks(closure_labels):
            self._prefetch_closures(chunk)
        for chunk in _chunks(cable_labels):
            self._prefetch_cables(chunk)

    def _prefetch_closures(self, labels: list[str]) -> None:
        rows = self.session.execute(
            select(Closure.id, Closure.label, Closure.structure_id).where(Closure.label.in_(labels))
        ).all()
        for label in labels:
            self._closures[label] = None
        ids = []
        for closure_id, label, structure_id in rows:
            self._closures[label] = PlaceInfo(closure_id, label, structure_id)
            self._trays[closure_id] = {}
            ids.append(closure_id)
        if not ids:
            return
        trays = self.session.execute(
            select(Tray.closure_id, Tray.number, Tray.id, Tray.capacity).where(
                Tray.closure_id.in_(ids)
            )
        )
        for closure_id, number, tray_id, capacity in trays:
            self._trays[closure_id][number] = (tray_id, capacity)
            self._loaded_usage.add(("tray", tray_id))
        slots = self.session.execute(
            select(Splice.tray_id, Splice.slot).where(Splice.closure_id.in_(ids))
        )
        for tray_id, slot in slots:
            self._used[("slot", tray_id, slot)] = "taken"

    def _prefetch_cables(self, labels: list[str]) -> None:
        rows = self.session.execute(
            select(
                Cable.id,
                Cable.label,
                Cable.units,
                Cable.fibers_per_unit,
                Cable.construction,
                Cable.fiber_type_id,
            ).where(Cable.label.in_(labels))
        ).all()
        for label in labels:
            self._cables[label] = None
        if not rows:
            return
        ids = [row[0] for row in rows]
        stations = self._stations_of(ids)
        for cable_id, label, units, per_unit, construction, fiber_type_id in rows:
            info = CableInfo(
                cable_id, label, units, per_unit, str(construction.value), fiber_type_id
            )
            info.stations = stations.get(cable_id, [])
            self._cables[label] = info
            self._strands[cable_id] = {}
        strands = self.session.execute(
            select(Strand.cable_id, Strand.number, Strand.id).where(Strand.cable_id.in_(ids))
        )
        for cable_id, number, strand_id in strands:
            self._strands[cable_id][number] = strand_id
        self._cable_usage_of(ids)

    # -- simple labels -------------------------------------------------------------------
    def structure(self, label: str) -> StructureRef | None:
        if label not in self._structures:
            row = self.session.execute(
                select(Structure.id, Structure.lon, Structure.lat).where(Structure.label == label)
            ).first()
            self._structures[label] = StructureRef(row[0], row[1], row[2]) if row else None
        return self._structures[label]

    def remember_structure(self, label: str, ref: StructureRef) -> None:
        self._structures[label] = ref

    def structure_label(self, structure_id: int) -> str:
        """The label of a structure by id (for messages)."""
        for label, ref in self._structures.items():
            if ref is not None and ref.id == structure_id:
                return label
        found = self.session.scalar(select(Structure.label).where(Structure.id == structure_id))
        return found or f"structure #{structure_id}"

    def span(self, label: str) -> SpanEnds | None:
        if label not in self._spans:
            row = self.session.execute(
                select(Span.id, Span.from_structure_id, Span.to_structure_id).where(
                    Span.label == label
                )
            ).first()
            self._spans[label] = SpanEnds(label, row[1], row[2]) if row else None
            if row:
                self._span_ids[label] = row[0]
        return self._spans[label]

    def span_id(self, label: str) -> int:
        self.span(label)
        return self._span_ids[label]

    def remember_span(self, label: str, span_id: int, from_id: int, to_id: int) -> None:
        self._spans[label] = SpanEnds(label, from_id, to_id)
        self._span_ids[label] = span_id

    def fiber_type(self, name: str) -> tuple[int, str] | None:
        """(id, mode) of a fiber type."""
        if name not in self._fiber_types:
            row = self.session.execute(
                select(FiberType.id, FiberType.mode).where(FiberType.name == name)
            ).first()
            self._fiber_types[name] = (row[0], str(row[1].value)) if row else None
        return self._fiber_types[name]

    def remember_fiber_type(self, name: str, fiber_type_id: int, mode: str) -> None:
        self._fiber_types[name] = (fiber_type_id, mode)

    def closure(self, label: str) -> PlaceInfo | None:
        if label not in self._closures:
            row = self.session.execute(
                select(Closure.id, Closure.structure_id).where(Closure.label == label)
            ).first()
            self._closures[label] = PlaceInfo(row[0], label, row[1]) if row else None
        return self._closures[label]

    def remember_closure(self, info: PlaceInfo) -> None:
        self._closures[info.label] = info

    def panel(self, label: str) -> PlaceInfo | None:
        if label not in self._panels:
            row = self.session.execute(
                select(Panel.id, Panel.structure_id, Panel.port_count).where(Panel.label == label)
            ).first()
            self._panels[label] = PlaceInfo(row[0], label, row[1], row[2]) if row else None
        return self._panels[label]

    def remember_panel(self, info: PlaceInfo) -> None:
        self._panels[info.label] = info

    def equipment(self, label: str) -> PlaceInfo | None:
        if label not in self._equipment:
            row = self.session.execute(
                select(Equipment.id, Equipment.structure_id).where(Equipment.label == label)
            ).first()
            self._equipment[label] = PlaceInfo(row[0], label, row[1]) if row else None
        return self._equipment[label]

    def remember_equipment(self, info: PlaceInfo) -> None:
        self._equipment[info.label] = info

    def splitter(self, label: str) -> SplitterInfo | None:
        if label not in self._splitters:
            row = self.session.execute(
                select(
                    Splitter.id,
                    Splitter.closure_id,
                    Splitter.panel_id,
                    Splitter.inputs,
                    Splitter.outputs,
                    func.coalesce(Closure.structure_id, Panel.structure_id),
                )
                .outerjoin(Closure, Closure.id == Splitter.closure_id)
                .outerjoin(Panel, Panel.id == Splitter.panel_id)
                .where(Splitter.label == label)
            ).first()
            info = None
            if row:
                legs = dict(
                    iter(
                        self.session.execute(
                            select(SplitterLeg.name, SplitterLeg.id).where(
                                SplitterLeg.splitter_id == row[0]
                            )
                        )
                    )
                )
                info = SplitterInfo(row[0], label, row[1], row[2], row[3], row[4], legs, row[5])
            self._splitters[label] = info
        return self._splitters[label]

    def remember_splitter(self, info: SplitterInfo) -> None:
        self._splitters[info.label] = info

    def cable(self, label: str) -> CableInfo | None:
        if label not in self._cables:
            row = self.session.execute(
                select(
                    Cable.id,
                    Cable.units,
                    Cable.fibers_per_unit,
                    Cable.construction,
                    Cable.fiber_type_id,
                ).where(Cable.label == label)
            ).first()
            info = None
            if row:
                info = CableInfo(row[0], label, row[1], row[2], str(row[3].value), row[4])
                info.stations = self._stations(row[0])
            self._cables[label] = info
        return self._cables[label]

    def _stations(self, cable_id: int) -> list[StationInfo]:
        return self._stations_of([cable_id]).get(cable_id, [])

    def _stations_of(self, cable_ids: list[int]) -> dict[int, list[StationInfo]]:
        rows = self.session.execute(
            select(
                Station.id,
                Station.seq,
                Station.closure_id,
                Station.panel_id,
                Station.path_index,
                Station.mark_m,
                Closure.label,
                Panel.label,
                Station.cable_id,
            )
            .outerjoin(Closure, Closure.id == Station.closure_id)
            .outerjoin(Panel, Panel.id == Station.panel_id)
            .where(Station.cable_id.in_(cable_ids))
            .order_by(Station.cable_id, Station.seq)
        ).all()
        found: dict[int, list[StationInfo]] = {}
        for r in rows:
            info = StationInfo(r[0], r[1], r[2], r[3], r[4], r[5], r[6] or r[7])
            found.setdefault(r[8], []).append(info)
        return found

    def remember_cable(self, info: CableInfo) -> None:
        self._cables[info.label] = info

    def place_kind(self, label: str) -> str | None:
        """Which kind of place-like thing a label names (they share one namespace)."""
        if self.cable(label):
            return "cable"
        if self.closure(label):
            return "closure"
        if self.panel(label):
            return "panel"
        if self.equipment(label):
            return "equipment"
        if self.splitter(label):
            return "splitter"
        return None

    # -- strands, ports, trays ----------------------------------------------------------
    def strand_id(self, cable_id: int, number: int) -> int | None:
        if cable_id not in self._strands:
            self._strands[cable_id] = dict(
                iter(
                    self.session.execute(
                        select(Strand.number, Strand.id).where(Strand.cable_id == cable_id)
                    )
                )
            )
        return self._strands[cable_id].get(number)

    def forget_strands(self, cable_id: int) -> None:
        self._strands.pop(cable_id, None)

    def port_id(self, kind: str, owner_id: int, name: str) -> int | None:
        key = (kind, owner_id)
        if key not in self._ports:
            column = Port.panel_id if kind == "panel" else Port.equipment_id
            self._ports[key] = dict(
                iter(self.session.execute(select(Port.name, Port.id).where(column == owner_id)))
            )
        return self._ports[key].get(name)

    def forget_ports(self, kind: str, owner_id: int) -> None:
        self._ports.pop((kind, owner_id), None)

    def trays(self, closure_id: int) -> dict[int, tuple[int, int]]:
        """Tray number -> (tray id, capacity)."""
        if closure_id not in self._trays:
            rows = self.session.execute(
                select(Tray.number, Tray.id, Tray.capacity).where(Tray.closure_id == closure_id)
            ).all()
            self._trays[closure_id] = {r[0]: (r[1], r[2]) for r in rows}
        return self._trays[closure_id]

    def forget_trays(self, closure_id: int) -> None:
        self._trays.pop(closure_id, None)

    # -- what is already connected ------------------------------------------------------
    def used_by(self, key: tuple[object, ...]) -> str | None:
        """What already holds a fiber end, leg, port back/front or tray slot, or None.

        Keys: ("end", cable_id, strand_id, station_id, side), ("leg", leg_id),
        ("back", port_id), ("front", port_id), ("slot", tray_id, slot).
        """
        # Asked three times per splice of a big sheet: the loaded check is inlined.
        token = (_USAGE_TOKENS[key[0]], key[1])
        if token not in self._loaded_usage:
            self._load_usage(key)
        return self._used.get(key)

    def occupy(self, key: tuple[object, ...], what: str) -> None:
        self._load_usage(key)
        self._used[key] = what

    def release(self, key: tuple[object, ...]) -> None:
        self._used.pop(key, None)

    def _load_usage(self, key: tuple[object, ...]) -> None:
        kind, owner = str(key[0]), key[1]
        assert isinstance(owner, int)
        if kind == "end":
            self._load_once(("cable", owner), self._cable_usage)
        elif kind in ("back", "front"):
            self._load_once(("port", owner), self._port_usage)
        elif kind == "leg":
            self._load_once(("leg", owner), self._leg_usage)
        elif kind == "slot":
            self._load_once(("tray", owner), self._tray_usage)

    def _load_once(self, token: tuple[str, int], loader: Callable[[int], None]) -> None:
        if token in self._loaded_usage:
            return
        self._loaded_usage.add(token)
        loader(token[1])

    def _cable_usage(self, cable_id: int) -> None:
        self._cable_usage_of([cable_id])

    def _cable_usage_of(self, cable_ids: list[int]) -> None:
        """Which ends of these cables' strands are connected, and where they are cut."""
        rows = self.session.execute(
            select(
                Strand.cable_id,
                FiberEnd.strand_id,
                FiberEnd.station_id,
                FiberEnd.side,
                FiberEnd.splice_id,
            )
            .join(Strand, Strand.id == FiberEnd.strand_id)
            .where(Strand.cable_id.in_(cable_ids))
        ).all()
        for cable_id, strand_id, station_id, side, splice_id in rows:
            what = "spliced" if splice_id is not None else "terminated on a port"
            self._used[("end", cable_id, strand_id, station_id, str(side))] = what
        cuts = self.session.execute(
            select(Cut.strand_id, Cut.station_id)
            .join(Strand, Strand.id == Cut.strand_id)
            .where(Strand.cable_id.in_(cable_ids))
        ).all()
        self._cuts.update((r[0], r[1]) for r in cuts)
        self._loaded_usage.update(("cable", cable_id) for cable_id in cable_ids)

    def _port_usage(self, port_id: int) -> None:
        if self.session.scalar(select(FiberEnd.id).where(FiberEnd.port_id == port_id)):
            self._used[("back", port_id)] = "terminated"
        if self.session.scalar(select(Port.jumper_id).where(Port.id == port_id)):
            self._used[("front", port_id)] = "patched"

    def _leg_usage(self, leg_id: int) -> None:
        row = self.session.execute(
            select(FiberEnd.splice_id).where(FiberEnd.leg_id == leg_id)
        ).first()
        if row is not None:
            self._used[("leg", leg_id)] = "spliced" if row[0] is not None else "terminated"

    def _tray_usage(self, tray_id: int) -> None:
        slots = self.session.scalars(select(Splice.slot).where(Splice.tray_id == tray_id))
        for slot in slots:
            self._used[("slot", tray_id, slot)] = "taken"

    def load_closure_slots(self, closure_id: int) -> None:
        """Learn which slots are taken in every tray of a closure, in one query.

        A splice sheet touches hundreds of trays; asking tray by tray costs a query each.
        """
        tray_ids = [tray_id for tray_id, _capacity in self.trays(closure_id).values()]
        pending = [t for t in tray_ids if ("tray", t) not in self._loaded_usage]
        if not pending:
            return
        rows = self.session.execute(
            select(Splice.tray_id, Splice.slot).where(Splice.closure_id == closure_id)
        )
        for tray_id, slot in rows:
            if ("tray", tray_id) not in self._loaded_usage:
                self._used[("slot", tray_id, slot)] = "taken"
        self._loaded_usage.update(("tray", t) for t in pending)

    def is_cut(self, cable_id: int, strand_id: int, station_id: int) -> bool:
        self._load_once(("cable", cable_id), self._cable_usage)
        return (strand_id, station_id) in self._cuts

    def remember_cut(self, cable_id: int, strand_id: int, station_id: int) -> None:
        self._load_once(("cable", cable_id), self._cable_usage)
        self._cuts.add((strand_id, station_id))


# Labels or ids per IN list: well inside every database's limit on bound parameters.
CHUNK = 500


def _chunks(items: list[str]) -> Iterator[list[str]]:
    for first in range(0, len(items), CHUNK):
        yield items[first : first + CHUNK]
