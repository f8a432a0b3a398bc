"""Writing the whole record as a bundle, in a stable order, so a load of it gives it back."""

from __future__ import annotations

from collections import defaultdict
from typing import Any

from sqlalchemy import and_, func, select
from sqlalchemy.orm import Session, aliased

from plantdb.model import (
    Cable,
    CableSpan,
    Circuit,
    Closure,
    Cut,
    Equipment,
    FiberEnd,
    FiberType,
    FiberTypeWavelength,
    Jumper,
    LossTest,
    Panel,
    Port,
    Route,
    RouteSpan,
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
from plantdb.records.bundle_schema import FORMAT, VERSION


def _clean(item: dict[str, Any]) -> dict[str, Any]:
    """Drop optional keys that have no value."""
    return {key: value for key, value in item.items() if value is not None}


def _value(enum_or_text: Any) -> Any:
    return getattr(enum_or_text, "value", enum_or_text)


def dump_bundle(session: Session) -> dict[str, Any]:
    """The whole record as a bundle dict (format plantdb-bundle, version 1)."""
    structures = dict(iter(session.execute(select(Structure.id, Structure.label))))
    bundle: dict[str, Any] = {"format": FORMAT, "version": VERSION}
    bundle["fiber_types"] = _fiber_types(session)
    bundle["structures"] = [
        _clean(
            {
                "label": s.label,
                "kind": _value(s.kind),
                "lon": s.lon,
                "lat": s.lat,
                "name": s.name,
                "notes": s.notes,
            }
        )
        for s in session.scalars(select(Structure).order_by(Structure.id))
    ]
    bundle["spans"] = [
        _clean(
            {
                "label": s.label,
                "from": structures[s.from_structure_id],
                "to": structures[s.to_structure_id],
                "kind": _value(s.kind),
                "length_m": s.surveyed_length_m,
                "geometry": s.geometry,
                "notes": s.notes,
            }
        )
        for s in session.scalars(select(Span).order_by(Span.id))
    ]
    routes = _routes(session)
    if routes:
        bundle["routes"] = routes
    bundle["closures"] = _closures(session, structures)
    bundle["panels"] = [
        _clean(
            {
                "label": p.label,
                "at": structures[p.structure_id],
                "ports": p.port_count,
                "connector": p.connector,
                "polish": p.polish,
                "rack": p.rack,
                "notes": p.notes,
            }
        )
        for p in session.scalars(select(Panel).order_by(Panel.id))
    ]
    bundle["equipment"] = _equipment(session, structures)
    bundle["splitters"] = _splitters(session)
    bundle["cables"] = _cables(session, structures)
    ends = _EndNames(session)
    bundle["cuts"] = _cuts(session, ends)
    bundle["splices"] = _splices(session, ends)
    bundle["terminations"] = _terminations(session, ends)
    bundle["jumpers"] = _jumpers(session, ends)
    bundle["circuits"] = [
        _clean(
            {
                "label": c.label,
                "kind": c.kind,
                "status": _value(c.status),
                "a": ends.port(c.a_port_id),
                "z": ends.port(c.z_port_id) if c.z_port_id else None,
                "customer": c.customer,
                "notes": c.notes,
            }
        )
        for c in session.scalars(select(Circuit).order_by(Circuit.id))
    ]
    tests = _loss_tests(session)
    if tests:
        bundle["loss_tests"] = tests
    return bundle


def _fiber_types(session: Session) -> list[dict[str, Any]]:
    values: dict[int, list[FiberTypeWavelength]] = defaultdict(list)
    for row in session.scalars(
        select(FiberTypeWavelength).order_by(FiberTypeWavelength.wavelength_nm)
    ):
        values[row.fiber_type_id].append(row)
    out = []
    for ft in session.scalars(select(FiberType).order_by(FiberType.id)):
        attenuation = {
            str(v.wavelength_nm): _clean(
                {"max": v.attenuation_max, "typical": v.attenuation_typical}
            )
            for v in values[ft.id]
            if v.attenuation_max is not None or v.attenuation_typical is not None
        }
        group = {
            str(v.wavelength_nm): v.group_index for v in values[ft.id] if v.group_index is not None
        }
        out.append(
            _clean(
                {
                    "name": ft.name,
                    "mode": _value(ft.mode),
                    "standard": ft.standard,
                    "attenuation_db_per_km": attenuation or None,
                    "group_index": group or None,
                    "core_index": ft.core_index,
                    "cladding_index": ft.cladding_index,
                    "core_um": ft.core_um,
                    "cladding_um": ft.cladding_um,
                    "notes": ft.notes,
                }
            )
        )
    return out


def _routes(session: Session) -> list[dict[str, Any]]:
    spans: dict[int, list[str]] = defaultdict(list)
    for route_id, label in session.execute(
        select(RouteSpan.route_id, Span.label)
        .join(Span, Span.id == RouteSpan.span_id)
        .order_by(RouteSpan.route_id, RouteSpan.seq)
    ):
        spans[route_id].append(label)
    return [
        _clean({"label": r.label, "name": r.name, "spans": spans[r.id]})
        for r in session.scalars(select(Route).order_by(Route.id))
    ]


def _closures(session: Session, structures: dict[int, str]) -> list[dict[str, Any]]:
    capacities: dict[int, list[int]] = defaultdict(list)
    for closure_id, capacity in session.execute(
        select(Tray.closure_id, Tray.capacity).order_by(Tray.closure_id, Tray.number)
    ):
        capacities[closure_id].append(capacity)
    out = []
    for c in session.scalars(select(Closure).order_by(Closure.id)):
        trays = capacities[c.id]
        item: dict[str, Any] = {
            "label": c.label,
            "at": structures[c.structure_id],
            "trays": len(trays),
        }
        if trays and len(set(trays)) == 1:
            item["slots_per_tray"] = trays[0]
        elif trays:
            item["tray_slots"] = trays
        item["notes"] = c.notes
        out.append(_clean(item))
    return out


def _equipment(session: Session, structures: dict[int, str]) -> list[dict[str, Any]]:
    ports: dict[int, list[str]] = defaultdict(list)
    for equipment_id, name in session.execute(
        select(Port.equipment_id, Port.name).where(Port.equipment_id.is_not(None)).order_by(Port.id)
    ):
        assert equipment_id is not None
        ports[equipment_id].append(name)
    return [
        _clean(
            {
                "label": e.label,
                "at": structures[e.structure_id],
                "ports": ports[e.id],
                "role": _value(e.role),
                "tx_dbm": e.tx_dbm,
                "rx_sensitivity_dbm": e.rx_sensitivity_dbm,
                "rack": e.rack,
                "notes": e.notes,
            }
        )
        for e in session.scalars(select(Equipment).order_by(Equipment.id))
    ]


def _splitters(session: Session) -> list[dict[str, Any]]:
    rows = session.execute(
        select(Splitter, func.coalesce(Closure.label, Panel.label))
        .outerjoin(Closure, Closure.id == Splitter.closure_id)
        .outerjoin(Panel, Panel.id == Splitter.panel_id)
        .order_by(Splitter.id)
    )
    return [
        _clean({"label": s.label, "at": at, "ratio": s.ratio, "loss_db": s.loss_db})
        for s, at in rows
    ]


def _cables(session: Session, structures: dict[int, str]) -> list[dict[str, Any]]:
    spans: dict[int, list[str]] = defaultdict(list)
    for cable_id, label in session.execute(
        select(CableSpan.cable_id, Span.label)
        .join(Span, Span.id == CableSpan.span_id)
        .order_by(CableSpan.cable_id, CableSpan.seq)
    ):
        spans[cable_id].append(label)
    stations: dict[int, list[dict[str, Any]]] = defaultdict(list)
    for cable_id, at, mark in session.execute(
        select(Station.cable_id, func.coalesce(Closure.label, Panel.label), Station.mark_m)
        .outerjoin(Closure, Closure.id == Station.closure_id)
        .outerjoin(Panel, Panel.id == Station.panel_id)
        .order_by(Station.cable_id, Station.seq)
    ):
        stations[cable_id].append(_clean({"at": at, "mark_m": mark}))
    slack: dict[int, list[dict[str, Any]]] = defaultdict(list)
    for coil in session.scalars(select(SlackCoil).order_by(SlackCoil.cable_id, SlackCoil.id)):
        slack[coil.cable_id].append(
            {"at": structures[coil.structure_id], "length_m": coil.length_m}
        )
    fiber_types = dict(iter(session.execute(select(FiberType.id, FiberType.name))))
    return [
        _clean(
            {
                "label": c.label,
                "fiber_type": fiber_types[c.fiber_type_id],
                "construction": {
                    "kind": _value(c.construction),
                    "units": c.units,
                    "fibers_per_unit": c.fibers_per_unit,
                },
                "spans": spans[c.id],
                "stations": stations[c.id],
                "slack": slack[c.id] or None,
                "notes": c.notes,
            }
        )
        for c in session.scalars(select(Cable).order_by(Cable.id))
    ]


class _EndNames:
    """Addresses of strand ends, legs and ports, read in a few set-wise queries."""

    def __init__(self, session: Session) -> None:
        self.session = session
        edge = (
            select(
                Station.cable_id,
                func.min(Station.seq).label("first"),
                func.max(Station.seq).label("last"),
            )
            .group_by(Station.cable_id)
            .subquery()
        )
        self.station_end = {
            sid: (seq in (first, last))
            for sid, seq, first, last in session.execute(
                select(Station.id, Station.seq, edge.c.first, edge.c.last).join(
                    edge, edge.c.cable_id == Station.cable_id
                )
            )
        }
        self.ports = {
            pid: f"{owner}:{name}"
            for pid, owner, name in session.execute(
                select(Port.id, func.coalesce(Panel.label, Equipment.label), Port.name)
                .outerjoin(Panel, Panel.id == Port.panel_id)
                .outerjoin(Equipment, Equipment.id == Port.equipment_id)
            )
        }
        self.legs = {
            lid: f"{label}:{name}"
            for lid, label, name in session.execute(
                select(SplitterLeg.id, Splitter.label, SplitterLeg.name).join(
                    Splitter, Splitter.id == SplitterLeg.splitter_id
                )
            )
        }

    def port(self, port_id: int) -> str:
        return self.ports[port_id]

    def end(self, row: Any) -> str:
        """Address of a fiber_end row joined with its cable label and strand number."""
        if row.leg_id is not None:
            return self.legs[row.leg_id]
        address = f"{row.cable}:{row.number}"
        if not self.station_end[row.station_id]:
            address += f"/{_value(row.side)}"
        return address

    def end_rows(self, *where: Any) -> Any:
        return self.session.execute(
            select(
                FiberEnd.id,
                FiberEnd.leg_id,
                FiberEnd.station_id,
                FiberEnd.side,
                FiberEnd.splice_id,
                FiberEnd.splice_side,
                FiberEnd.port_id,
                FiberEnd.termination_method,
                Cable.label.label("cable"),
                Strand.number.label("number"),
            )
            .outerjoin(Strand, Strand.id == FiberEnd.strand_id)
            .outerjoin(Cable, Cable.id == Strand.cable_id)
            .where(*where)
            .order_by(FiberEnd.id)
        ).all()


def _cuts(session: Session, ends: _EndNames) -> list[dict[str, Any]]:
    """Cuts with nothing connected on either side (the rest are implied by their splices)."""
    connected = aliased(FiberEnd)
    rows = session.execute(
        select(Closure.label, Cable.label, Strand.number)
        .select_from(Cut)
        .join(Station, Station.id == Cut.station_id)
        .join(Closure, Closure.id == Station.closure_id)
        .join(Strand, Strand.id == Cut.strand_id)
        .join(Cable, Cable.id == Strand.cable_id)
        .outerjoin(
            connected,
            and_(connected.strand_id == Cut.strand_id, connected.station_id == Cut.station_id),
        )
        .where(connected.id.is_(None))
        .order_by(Cut.id)
    )
    return [{"closure": closure, "fiber": f"{cable}:{number}"} for closure, cable, number in rows]


def _splices(session: Session, ends: _EndNames) -> list[dict[str, Any]]:
    sides: dict[int, dict[int, str]] = defaultdict(dict)
    for row in ends.end_rows(FiberEnd.splice_id.is_not(None)):
        sides[row.splice_id][row.splice_side] = ends.end(row)
    rows = session.execute(
        select(Splice, Closure.label, Tray.number)
        .join(Closure, Closure.id == Splice.closure_id)
        .join(Tray, Tray.id == Splice.tray_id)
        .order_by(Splice.id)
    )
    return [
        _clean(
            {
                "closure": closure,
                "a": sides[s.id][1],
                "b": sides[s.id][2],
                "tray": tray,
                "slot": s.slot,
                "method": _value(s.method),
                "loss_db": s.loss_db,
                "spliced_on": s.spliced_on.isoformat() if s.spliced_on else None,
                "spliced_by": s.spliced_by,
            }
        )
        for s, closure, tray in rows
    ]


def _terminations(session: Session, ends: _EndNames) -> list[dict[str, Any]]:
    return [
        {
            "fiber": ends.end(row),
            "port": ends.port(row.port_id),
            "method": _value(row.termination_method),
        }
        for row in ends.end_rows(FiberEnd.port_id.is_not(None))
    ]


def _jumpers(session: Session, ends: _EndNames) -> list[dict[str, Any]]:
    ports: dict[int, dict[int, str]] = defaultdict(dict)
    for port_id, jumper_id, side in session.execute(
        select(Port.id, Port.jumper_id, Port.jumper_side).where(Port.jumper_id.is_not(None))
    ):
        assert jumper_id is not None and side is not None
        ports[jumper_id][side] = ends.port(port_id)
    return [
        _clean({"a": ports[j.id][1], "b": ports[j.id][2], "length_m": j.length_m})
        for j in session.scalars(select(Jumper).order_by(Jumper.id))
    ]


def _loss_tests(session: Session) -> list[dict[str, Any]]:
    rows = session.execute(
        select(LossTest, Circuit.label)
        .join(Circuit, Circuit.id == LossTest.circuit_id)
        .order_by(LossTest.id)
    )
    return [
        _clean(
            {
                "circuit": label,
                "wavelength_nm": t.wavelength_nm,
                "measured_db": t.measured_db,
                "direction": t.direction,
                "tested_on": t.tested_on.isoformat() if t.tested_on else None,
                "tested_by": t.tested_by,
                "notes": t.notes,
            }
        )
        for t, label in rows
    ]
