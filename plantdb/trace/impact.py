"""Cut impact: what a cut at a span or a structure takes down.

Only the piece of glass that lies in the cut place counts: a strand cut mid-span elsewhere
has two pieces, and only the one running through this span carries what it carries. The
circuits come from their kept paths, so a cut on a splitter's feeder reaches every leg's
circuit (their paths all run over the feeder) while a cut on one distribution cable reaches
only its own.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import and_, func, or_, select
from sqlalchemy.orm import Session, aliased

from plantdb.errors import NotFound, PlantError
from plantdb.model import (
    Cable,
    CableSpan,
    Circuit,
    CircuitPathItem,
    CircuitStatus,
    Closure,
    Equipment,
    Panel,
    Port,
    Span,
    Splitter,
    Station,
    Structure,
)
from plantdb.safety import IMPACT_CAUTION

_STATUS_ORDER = [
    s.value
    for s in (
        CircuitStatus.ACTIVE,
        CircuitStatus.OUT_OF_SERVICE,
        CircuitStatus.RESERVED,
        CircuitStatus.PLANNED,
        CircuitStatus.RETIRED,
    )
]


def _port_names(session: Session, ids: set[int]) -> dict[int, str]:
    if not ids:
        return {}
    return {
        pid: f"{owner}:{name}"
        for pid, owner, name in session.execute(
            select(Port.id, func.coalesce(Panel.label, Equipment.label), Port.name)
            .outerjoin(Panel, Panel.id == Port.panel_id)
            .outerjoin(Equipment, Equipment.id == Port.equipment_id)
            .where(Port.id.in_(sorted(ids)))
        )
    }


def _circuit_rows(session: Session, condition: Any) -> list[dict[str, Any]]:
    rows = session.execute(
        select(
            Circuit.label,
            Circuit.status,
            Circuit.kind,
            Circuit.a_port_id,
            Circuit.z_port_id,
            Circuit.customer,
            Circuit.path_state,
        ).where(Circuit.id.in_(select(CircuitPathItem.circuit_id).where(condition)))
    ).all()
    names = _port_names(session, {r[3] for r in rows} | {r[4] for r in rows if r[4]})
    circuits = [
        {
            "label": label,
            "status": str(status),
            "kind": kind,
            "a": names[a],
            "z": names.get(z) if z else None,
            "customer": customer,
            # "incomplete": the record no longer carries it from A to Z (see `plantdb check`),
            # but what its A end still reaches runs through here.
            "path_state": state,
        }
        for label, status, kind, a, z, customer, state in rows
    ]
    circuits.sort(key=lambda c: (_STATUS_ORDER.index(str(c["status"])), str(c["label"])))
    return circuits


def _span_impact(session: Session, label: str) -> dict[str, Any]:
    span_id = session.scalar(select(Span.id).where(Span.label == label))
    if span_id is None:
        raise NotFound(f"no span is labelled {label}")
    placed = session.execute(
        select(CableSpan.cable_id, CableSpan.seq, Cable.label, Cable.fiber_count)
        .join(Cable, Cable.id == CableSpan.cable_id)
        .where(CableSpan.span_id == span_id)
        .order_by(Cable.label)
    ).all()
    # The cable's span at position k lies between path positions k and k + 1: a piece of
    # glass runs through it when it spans both.
    covers = [
        and_(
            CircuitPathItem.cable_id == cable_id,
            CircuitPathItem.lo_index <= seq,
            CircuitPathItem.hi_index >= seq + 1,
        )
        for cable_id, seq, _label, _count in placed
    ]
    circuits = _circuit_rows(session, or_(*covers)) if covers else []
    return {
        "target": label,
        "kind": "span",
        "cables": [p[2] for p in placed],
        "strands": sum(p[3] for p in placed),
        "circuits": circuits,
        "spans": [label],
    }


def _positions_at(session: Session, structure_id: int) -> dict[int, set[int]]:
    """Cable id -> the path positions at which the cable is at this structure."""
    positions: dict[int, set[int]] = {}
    rows = session.execute(
        select(
            CableSpan.cable_id,
            CableSpan.seq,
            CableSpan.reversed,
            Span.from_structure_id,
            Span.to_structure_id,
        )
        .join(Span, Span.id == CableSpan.span_id)
        .where(or_(Span.from_structure_id == structure_id, Span.to_structure_id == structure_id))
    ).all()
    for cable_id, seq, flipped, start, end in rows:
        entering = end if flipped else start  # where the cable enters the span
        positions.setdefault(cable_id, set()).add(seq if entering == structure_id else seq + 1)
    # Cables that never leave the building (no spans) but have stations here.
    closure, panel = aliased(Closure), aliased(Panel)
    for cable_id, index in session.execute(
        select(Station.cable_id, Station.path_index)
        .outerjoin(closure, closure.id == Station.closure_id)
        .outerjoin(panel, panel.id == Station.panel_id)
        .where(func.coalesce(closure.structure_id, panel.structure_id) == structure_id)
    ):
        positions.setdefault(cable_id, set()).add(index)
    return positions


def _structure_impact(session: Session, label: str) -> dict[str, Any]:
    structure_id = session.scalar(select(Structure.id).where(Structure.label == label))
    if structure_id is None:
        raise NotFound(f"no structure is labelled {label}")
    positions = _positions_at(session, structure_id)
    cables = (
        session.execute(
            select(Cable.id, Cable.label, Cable.fiber_count)
            .where(Cable.id.in_(sorted(positions)))
            .order_by(Cable.label)
        ).all()
        if positions
        else []
    )
    covers = [
        and_(
            CircuitPathItem.cable_id == cable_id,
            CircuitPathItem.lo_index <= p,
            CircuitPathItem.hi_index >= p,
        )
        for cable_id, found in positions.items()
        for p in found
    ]
    ports = (
        select(Port.id)
        .outerjoin(Panel, Panel.id == Port.panel_id)
        .outerjoin(Equipment, Equipment.id == Port.equipment_id)
        .where(func.coalesce(Panel.structure_id, Equipment.structure_id) == structure_id)
    )
    splitters = (
        select(Splitter.id)
        .outerjoin(Closure, Closure.id == Splitter.closure_id)
        .outerjoin(Panel, Panel.id == Splitter.panel_id)
        .where(func.coalesce(Closure.structure_id, Panel.structure_id) == structure_id)
    )
    condition = or_(
        *covers, CircuitPathItem.port_id.in_(ports), CircuitPathItem.splitter_id.in_(splitters)
    )
    spans = list(
        session.scalars(
            select(Span.label)
            .where(
                or_(Span.from_structure_id == structure_id, Span.to_structure_id == structure_id)
            )
            .order_by(Span.label)
        )
    )
    return {
        "target": label,
        "kind": "structure",
        "cables": [c[1] for c in cables],
        "strands": sum(c[2] for c in cables),
        "circuits": _circuit_rows(session, condition),
        "spans": spans,
    }


def impact_document(
    session: Session, span: str | None = None, structure: str | None = None
) -> dict[str, Any]:
    """The contract's impact document for a span or a structure (exactly one)."""
    if (span is None) == (structure is None):
        raise PlantError("give exactly one place: --span LABEL or --structure LABEL")
    document = _span_impact(session, span) if span else _structure_impact(session, structure or "")
    active = [c for c in document["circuits"] if c["status"] == CircuitStatus.ACTIVE.value]
    document["summary"] = {
        "circuits": len(document["circuits"]),
        "active": len(active),
        "customers": sorted({c["customer"] for c in active if c["customer"]}),
    }
    document["caution"] = IMPACT_CAUTION
    return document
