"""Cut impact: what a cut at a span or a structure takes down.

Only the piece of glass that lies in the cut place counts: a strand cut mid-span elsewhere
has two pieces, and only the one running through this span carries what it carries. The
circuits come from their kept paths, so a cut on a splitter's feeder reaches every leg's
circuit (their paths all run over the feeder) while a cut on one distribution cable reaches
only its own.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import func, or_, select
from sqlalchemy.orm import Session, aliased

from plantdb.errors import NotFound, UsageProblem
from plantdb.model import (
    Cable,
    CableSpan,
    CircuitStatus,
    Closure,
    Panel,
    Span,
    Station,
    Structure,
)
from plantdb.safety import IMPACT_CAUTION
from plantdb.trace.circuits import untraced_circuits
from plantdb.trace.rawsql import RawSql

ACTIVE = CircuitStatus.ACTIVE.value

# One row per circuit with both ends named: circuits are picked by their kept path items.
_CIRCUITS = (
    "SELECT c.label, c.status, c.kind, c.a_address, c.z_address, c.customer, c.path_state"
    " FROM circuit c WHERE c.id IN (SELECT circuit_id FROM circuit_path_item WHERE {where})"
    " ORDER BY CASE c.status WHEN 'active' THEN 0 WHEN 'out_of_service' THEN 1"
    " WHEN 'reserved' THEN 2 WHEN 'planned' THEN 3 ELSE 4 END, c.label"
)
# A piece of glass of a cable runs over path positions lo_index..hi_index.
_COVERS = "(cable_id = ? AND lo_index <= ? AND hi_index >= ?)"
_AT_PORTS = (
    "port_id IN (SELECT p.id FROM port p LEFT JOIN panel o ON o.id = p.panel_id"
    " LEFT JOIN equipment e ON e.id = p.equipment_id"
    " WHERE COALESCE(o.structure_id, e.structure_id) = ?)"
)
_AT_SPLITTERS = (
    "splitter_id IN (SELECT s.id FROM splitter s LEFT JOIN closure c ON c.id = s.closure_id"
    " LEFT JOIN panel o ON o.id = s.panel_id WHERE COALESCE(c.structure_id, o.structure_id) = ?)"
)


def _circuit_rows(sql: RawSql, conditions: list[str], params: list[Any]) -> list[dict[str, Any]]:
    """Circuits whose kept paths meet any of the conditions, active first."""
    if not conditions:
        return []
    # Assembled from the fixed fragments above only; every value is bound as a parameter.
    statement = _CIRCUITS.format(where=" OR ".join(conditions))
    circuits = [
        {
            "label": label,
            "status": status,
            "kind": kind,
            "a": a,
            "z": z,
            "customer": customer,
            # "incomplete": the record no longer carries it from A to Z (see `plantdb check`),
            # but what its A end still reaches runs through here.
            "path_state": state,
        }
        for label, status, kind, a, z, customer, state in sql.rows(statement, params)
    ]
    return circuits


_PLACED = (
    "SELECT cs.cable_id, cs.seq, c.label, c.fiber_count FROM span s"
    " JOIN cable_span cs ON cs.span_id = s.id JOIN cable c ON c.id = cs.cable_id"
    " WHERE s.label = ? ORDER BY c.label"
)


def _span_impact(session: Session, label: str) -> dict[str, Any]:
    sql = RawSql(session)
    placed = sql.rows(_PLACED, (label,))
    if not placed and not sql.rows("SELECT id FROM span WHERE label = ?", (label,)):
        raise NotFound(f"no span is labelled {label}")
    # The cable's span at position k lies between path positions k and k + 1: a piece of
    # glass runs through it when it spans both.
    params: list[Any] = []
    for cable_id, seq, _label, _count in placed:
        params += [cable_id, seq, seq + 1]
    circuits = _circuit_rows(sql, [_COVERS] * len(placed), params)
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
    conditions: list[str] = [_AT_PORTS, _AT_SPLITTERS]
    params: list[Any] = [structure_id, structure_id]
    for cable_id, found in positions.items():
        for p in found:
            conditions.append(_COVERS)
            params += [cable_id, p, p]
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
        "circuits": _circuit_rows(RawSql(session), conditions, params),
        "spans": spans,
    }


def impact_document(
    session: Session, span: str | None = None, structure: str | None = None
) -> dict[str, Any]:
    """The contract's impact document for a span or a structure (exactly one)."""
    if (span is None) == (structure is None):
        raise UsageProblem("give exactly one place: --span LABEL or --structure LABEL")
    document = _span_impact(session, span) if span else _structure_impact(session, structure or "")
    active = [c for c in document["circuits"] if c["status"] == ACTIVE]
    document["summary"] = {
        "circuits": len(document["circuits"]),
        "active": len(active),
        "customers": sorted({c["customer"] for c in active if c["customer"]}),
    }
    document["untraced_circuits"] = untraced_circuits(RawSql(session))
    document["caution"] = IMPACT_CAUTION
    return document
