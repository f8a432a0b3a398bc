"""Every query the walk makes, in one place: indexed point lookups, remembered per walk.

The walk never touches ORM relationships, so no element costs a lazy load. A cable's stations,
spans and coils come in one visit per cable; a hop across a splice, a termination or a jumper
is one indexed query that returns both sides.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from sqlalchemy import and_, func, select
from sqlalchemy.orm import Session, aliased

from plantdb.errors import NotFound
from plantdb.model import (
    Cable,
    CableSpan,
    Circuit,
    Closure,
    Cut,
    Equipment,
    FiberEnd,
    FiberType,
    Jumper,
    Panel,
    Port,
    SlackCoil,
    Span,
    Splice,
    Splitter,
    SplitterLeg,
    Station,
    Strand,
    Structure,
    Tray,
)


@dataclass(frozen=True)
class StationRow:
    id: int
    seq: int
    place: str  # closure or panel label
    closure: bool
    structure: str
    path_index: int
    mark_m: float | None


@dataclass(frozen=True)
class SpanRow:
    id: int
    label: str
    kind: str
    length_m: float
    reversed: bool
    start: str  # structure where the cable enters the span
    end: str
    geometry: list[list[float]]


@dataclass
class CableRow:
    id: int
    label: str
    units: int
    fibers_per_unit: int
    construction: str
    fiber_type_id: int
    stations: list[StationRow] = field(default_factory=list)
    spans: list[SpanRow] = field(default_factory=list)
    # (path index, structure label, length) of each slack coil
    coils: list[tuple[int, str, float]] = field(default_factory=list)

    def station(self, station_id: int) -> StationRow:
        return next(s for s in self.stations if s.id == station_id)

    def is_end(self, station: StationRow) -> bool:
        return station.seq in (self.stations[0].seq, self.stations[-1].seq)


@dataclass(frozen=True)
class PortRow:
    id: int
    name: str
    owner: str  # panel or equipment label
    panel: bool
    structure: str
    connector: str | None
    polish: str | None
    jumper_id: int | None
    role: str | None = None
    tx_dbm: float | None = None
    rx_sensitivity_dbm: float | None = None
    equipment_id: int | None = None

    @property
    def address(self) -> str:
        return f"{self.owner}:{self.name}"


@dataclass(frozen=True)
class EndRow:
    """A connected fiber end (strand end or splitter leg) and what holds it."""

    id: int
    strand_id: int | None
    station_id: int | None
    side: str | None
    leg_id: int | None
    splice_id: int | None
    splice_side: int | None
    port_id: int | None
    method: str | None


@dataclass(frozen=True)
class SpliceRow:
    id: int
    closure: str
    structure: str
    tray: int
    slot: int
    method: str
    loss_db: float | None


@dataclass(frozen=True)
class SplitterRow:
    id: int
    label: str
    structure: str
    place: str
    inputs: int
    outputs: int
    loss_db: float | None
    legs: dict[str, int]

    @property
    def ratio(self) -> str:
        return f"{self.inputs}x{self.outputs}"


_END_COLUMNS = (
    FiberEnd.id,
    FiberEnd.strand_id,
    FiberEnd.station_id,
    FiberEnd.side,
    FiberEnd.leg_id,
    FiberEnd.splice_id,
    FiberEnd.splice_side,
    FiberEnd.port_id,
    FiberEnd.termination_method,
)


def _end(row: Any) -> EndRow:
    side = row[3]
    method = row[8]
    return EndRow(
        row[0],
        row[1],
        row[2],
        str(side) if side is not None else None,
        row[4],
        row[5],
        row[6],
        row[7],
        str(method) if method is not None else None,
    )


class PlantReader:
    """Answers the walk's questions about one database, remembering answers for one request."""

    def __init__(self, session: Session) -> None:
        self.session = session
        self._cables: dict[int, CableRow] = {}
        self._strand_cable: dict[int, tuple[int, int]] = {}
        self._cuts: dict[int, list[int]] = {}
        self._ports: dict[int, PortRow] = {}
        self._splitters: dict[int, SplitterRow] = {}
        self._leg_splitter: dict[int, tuple[int, str]] = {}
        self._splices: dict[int, SpliceRow] = {}

    # -- labels to ids -------------------------------------------------------------------
    def port_id(self, owner: str, name: str) -> int:
        row = self.session.execute(
            select(Port.id)
            .outerjoin(Panel, Panel.id == Port.panel_id)
            .outerjoin(Equipment, Equipment.id == Port.equipment_id)
            .where(func.coalesce(Panel.label, Equipment.label) == owner, Port.name == name)
        ).first()
        if row is None:
            exists = self.session.scalar(select(Panel.id).where(Panel.label == owner)) or (
                self.session.scalar(select(Equipment.id).where(Equipment.label == owner))
            )
            if exists:
                raise NotFound(f"{owner}:{name}: {owner} has no port {name}")
            raise NotFound(f"{owner}:{name}: no panel or equipment is labelled {owner}")
        return int(row[0])

    def cable_id(self, label: str) -> int:
        cable_id = self.session.scalar(select(Cable.id).where(Cable.label == label))
        if cable_id is None:
            raise NotFound(f"no cable is labelled {label}")
        return cable_id

    def strand_id(self, cable_id: int, number: int) -> int:
        strand_id = self.session.scalar(
            select(Strand.id).where(Strand.cable_id == cable_id, Strand.number == number)
        )
        if strand_id is None:
            cable = self.cable(cable_id)
            raise NotFound(
                f"{cable.label}:{number}: cable {cable.label} has strands 1-"
                f"{cable.units * cable.fibers_per_unit}"
            )
        self._strand_cable[strand_id] = (cable_id, number)
        return strand_id

    def circuit(self, label: str) -> tuple[int, str, int, int | None, str | None]:
        """(id, status, a port id, z port id, customer) of a circuit."""
        row = self.session.execute(
            select(
                Circuit.id, Circuit.status, Circuit.a_port_id, Circuit.z_port_id, Circuit.customer
            ).where(Circuit.label == label)
        ).first()
        if row is None:
            raise NotFound(f"no circuit is labelled {label}")
        return row[0], str(row[1]), row[2], row[3], row[4]

    # -- cables and strands --------------------------------------------------------------
    def cable(self, cable_id: int) -> CableRow:
        if cable_id not in self._cables:
            self._cables[cable_id] = self._load_cable(cable_id)
        return self._cables[cable_id]

    def _load_cable(self, cable_id: int) -> CableRow:
        row = self.session.execute(
            select(
                Cable.label,
                Cable.units,
                Cable.fibers_per_unit,
                Cable.construction,
                Cable.fiber_type_id,
            ).where(Cable.id == cable_id)
        ).one()
        cable = CableRow(cable_id, row[0], row[1], row[2], str(row[3]), row[4])
        place = func.coalesce(Closure.label, Panel.label)
        cable.stations = [
            StationRow(r[0], r[1], r[2], r[3] is not None, r[4], r[5], r[6])
            for r in self.session.execute(
                select(
                    Station.id,
                    Station.seq,
                    place,
                    Station.closure_id,
                    Structure.label,
                    Station.path_index,
                    Station.mark_m,
                )
                .outerjoin(Closure, Closure.id == Station.closure_id)
                .outerjoin(Panel, Panel.id == Station.panel_id)
                .join(
                    Structure,
                    Structure.id == func.coalesce(Closure.structure_id, Panel.structure_id),
                )
                .where(Station.cable_id == cable_id)
                .order_by(Station.seq)
            )
        ]
        start, end = aliased(Structure), aliased(Structure)
        for r in self.session.execute(
            select(
                Span.id,
                Span.label,
                Span.kind,
                Span.surveyed_length_m,
                Span.geodesic_length_m,
                CableSpan.reversed,
                start.label,
                end.label,
                Span.geometry,
            )
            .join(CableSpan, CableSpan.span_id == Span.id)
            .join(start, start.id == Span.from_structure_id)
            .join(end, end.id == Span.to_structure_id)
            .where(CableSpan.cable_id == cable_id)
            .order_by(CableSpan.seq)
        ):
            length = r[3] if r[3] is not None else r[4]
            first, last = (r[7], r[6]) if r[5] else (r[6], r[7])
            cable.spans.append(SpanRow(r[0], r[1], str(r[2]), length, r[5], first, last, r[8]))
        cable.coils = [
            (r[0], r[1], r[2])
            for r in self.session.execute(
                select(SlackCoil.path_index, Structure.label, SlackCoil.length_m)
                .join(Structure, Structure.id == SlackCoil.structure_id)
                .where(SlackCoil.cable_id == cable_id)
            )
        ]
        return cable

    def strand(self, strand_id: int) -> tuple[CableRow, int]:
        """(cable, strand number) of a strand."""
        if strand_id not in self._strand_cable:
            row = self.session.execute(
                select(Strand.cable_id, Strand.number).where(Strand.id == strand_id)
            ).one()
            self._strand_cable[strand_id] = (row[0], row[1])
        cable_id, number = self._strand_cable[strand_id]
        return self.cable(cable_id), number

    def cut_stations(self, strand_id: int) -> list[int]:
        """Ids of the stations where this strand is cut."""
        if strand_id not in self._cuts:
            self._cuts[strand_id] = list(
                self.session.scalars(select(Cut.station_id).where(Cut.strand_id == strand_id))
            )
        return self._cuts[strand_id]

    def fiber_mode(self, fiber_type_id: int) -> tuple[str, str, str | None]:
        """(name, mode, standard) of a fiber type."""
        row = self.session.execute(
            select(FiberType.name, FiberType.mode, FiberType.standard).where(
                FiberType.id == fiber_type_id
            )
        ).one()
        return row[0], str(row[1]), row[2]

    # -- connections ---------------------------------------------------------------------
    def end_at(self, strand_id: int, station_id: int, side: str) -> EndRow | None:
        row = self.session.execute(
            select(*_END_COLUMNS).where(
                FiberEnd.strand_id == strand_id,
                FiberEnd.station_id == station_id,
                FiberEnd.side == side,
            )
        ).first()
        return _end(row) if row else None

    def leg_end(self, leg_id: int) -> EndRow | None:
        row = self.session.execute(select(*_END_COLUMNS).where(FiberEnd.leg_id == leg_id)).first()
        return _end(row) if row else None

    def other_side(self, end: EndRow) -> tuple[SpliceRow, EndRow]:
        """The splice holding `end`, and the end on its other side."""
        assert end.splice_id is not None
        row = self.session.execute(
            select(*_END_COLUMNS).where(
                and_(FiberEnd.splice_id == end.splice_id, FiberEnd.splice_side != end.splice_side)
            )
        ).one()
        return self.splice(end.splice_id), _end(row)

    def splice(self, splice_id: int) -> SpliceRow:
        if splice_id not in self._splices:
            r = self.session.execute(
                select(
                    Closure.label,
                    Structure.label,
                    Tray.number,
                    Splice.slot,
                    Splice.method,
                    Splice.loss_db,
                )
                .join(Closure, Closure.id == Splice.closure_id)
                .join(Structure, Structure.id == Closure.structure_id)
                .join(Tray, Tray.id == Splice.tray_id)
                .where(Splice.id == splice_id)
            ).one()
            self._splices[splice_id] = SpliceRow(splice_id, r[0], r[1], r[2], r[3], str(r[4]), r[5])
        return self._splices[splice_id]

    def termination(self, port_id: int) -> EndRow | None:
        row = self.session.execute(select(*_END_COLUMNS).where(FiberEnd.port_id == port_id)).first()
        return _end(row) if row else None

    def port(self, port_id: int) -> PortRow:
        if port_id not in self._ports:
            r = self.session.execute(
                select(
                    Port.name,
                    func.coalesce(Panel.label, Equipment.label),
                    Port.panel_id,
                    Structure.label,
                    Port.connector,
                    Port.polish,
                    Port.jumper_id,
                    Equipment.role,
                    Equipment.tx_dbm,
                    Equipment.rx_sensitivity_dbm,
                    Port.equipment_id,
                )
                .outerjoin(Panel, Panel.id == Port.panel_id)
                .outerjoin(Equipment, Equipment.id == Port.equipment_id)
                .join(
                    Structure,
                    Structure.id == func.coalesce(Panel.structure_id, Equipment.structure_id),
                )
                .where(Port.id == port_id)
            ).one()
            self._ports[port_id] = PortRow(
                port_id,
                r[0],
                r[1],
                r[2] is not None,
                r[3],
                r[4],
                r[5],
                r[6],
                str(r[7]) if r[7] is not None else None,
                r[8],
                r[9],
                r[10],
            )
        return self._ports[port_id]

    def jumper_peer(self, port: PortRow) -> tuple[PortRow, float | None] | None:
        """The port at the other end of this port's jumper, and the jumper's length."""
        if port.jumper_id is None:
            return None
        r = self.session.execute(
            select(Port.id, Jumper.length_m)
            .join(Jumper, Jumper.id == Port.jumper_id)
            .where(Port.jumper_id == port.jumper_id, Port.id != port.id)
        ).one()
        return self.port(r[0]), r[1]

    def inline_peer(self, port: PortRow) -> PortRow | None:
        """The other port of a regenerator or amplifier (light passes through it)."""
        if port.equipment_id is None:
            return None
        other = self.session.scalar(
            select(Port.id).where(Port.equipment_id == port.equipment_id, Port.id != port.id)
        )
        return self.port(other) if other is not None else None

    def splitter_of_leg(self, leg_id: int) -> tuple[SplitterRow, str]:
        if leg_id not in self._leg_splitter:
            r = self.session.execute(
                select(SplitterLeg.splitter_id, SplitterLeg.name).where(SplitterLeg.id == leg_id)
            ).one()
            self._leg_splitter[leg_id] = (r[0], r[1])
        splitter_id, name = self._leg_splitter[leg_id]
        return self.splitter(splitter_id), name

    def splitter(self, splitter_id: int) -> SplitterRow:
        if splitter_id not in self._splitters:
            r = self.session.execute(
                select(
                    Splitter.label,
                    Structure.label,
                    func.coalesce(Closure.label, Panel.label),
                    Splitter.inputs,
                    Splitter.outputs,
                    Splitter.loss_db,
                )
                .outerjoin(Closure, Closure.id == Splitter.closure_id)
                .outerjoin(Panel, Panel.id == Splitter.panel_id)
                .join(
                    Structure,
                    Structure.id == func.coalesce(Closure.structure_id, Panel.structure_id),
                )
                .where(Splitter.id == splitter_id)
            ).one()
            legs = {
                name: leg_id
                for leg_id, name in self.session.execute(
                    select(SplitterLeg.id, SplitterLeg.name).where(
                        SplitterLeg.splitter_id == splitter_id
                    )
                )
            }
            for name, leg_id in legs.items():
                self._leg_splitter[leg_id] = (splitter_id, name)
            self._splitters[splitter_id] = SplitterRow(
                splitter_id, r[0], r[1], r[2], r[3], r[4], r[5], legs
            )
        return self._splitters[splitter_id]
