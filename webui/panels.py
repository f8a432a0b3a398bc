"""Panel pages: each port with its connector and polish, what is terminated behind it, what
is patched to its front, the circuits through it, and the panel's latest changes."""

from __future__ import annotations

from collections import defaultdict
from typing import Any

from flask import Blueprint, render_template
from sqlalchemy import and_, func, select
from sqlalchemy.orm import Session, aliased

from plantdb.colours import Marking
from plantdb.errors import NotFound
from plantdb.model import (
    Cable,
    Circuit,
    CircuitPathItem,
    Equipment,
    FiberEnd,
    Panel,
    Port,
    Splitter,
    SplitterLeg,
    Strand,
    Structure,
)
from plantdb.safety import FIELD_VERIFY
from webui.history import latest_changes
from webui.store import reading
from webui.views import strand_markings

blueprint = Blueprint("panels", __name__, url_prefix="/panels")


def _panel(session: Session, label: str) -> Any:
    row = session.execute(
        select(Panel, Structure.label.label("structure"))
        .join(Structure, Structure.id == Panel.structure_id)
        .where(Panel.label == label)
    ).first()
    if row is None:
        raise NotFound(f"no panel is labelled {label}")
    return row


def _terminations(session: Session, panel_id: int) -> dict[int, dict[str, Any]]:
    rows = session.execute(
        select(
            FiberEnd.port_id,
            FiberEnd.termination_method,
            Cable.label,
            Cable.construction,
            Cable.fibers_per_unit,
            Cable.fiber_count,
            Strand.number,
            Splitter.label.label("splitter"),
            SplitterLeg.name.label("leg"),
        )
        .join(Port, Port.id == FiberEnd.port_id)
        .outerjoin(Strand, Strand.id == FiberEnd.strand_id)
        .outerjoin(Cable, Cable.id == Strand.cable_id)
        .outerjoin(SplitterLeg, SplitterLeg.id == FiberEnd.leg_id)
        .outerjoin(Splitter, Splitter.id == SplitterLeg.splitter_id)
        .where(Port.panel_id == panel_id)
    ).all()
    found = {}
    for r in rows:
        marks: tuple[Marking | None, Marking | None] = (None, None)
        if r.label is not None:
            address = f"{r.label}:{r.number}"
            marks = strand_markings(r.number, str(r.construction), r.fibers_per_unit, r.fiber_count)
        else:
            address = f"{r.splitter}:{r.leg}"
        found[r.port_id] = {
            "address": address,
            "cable": r.label,
            "method": str(r.termination_method),
            "unit_mark": marks[0],
            "fiber_mark": marks[1],
        }
    return found


def _patches(session: Session, panel_id: int) -> dict[int, dict[str, Any]]:
    other = aliased(Port)
    owner = func.coalesce(Panel.label, Equipment.label)
    rows = session.execute(
        select(Port.id, owner, other.name, other.panel_id)
        .join(other, and_(other.jumper_id == Port.jumper_id, other.id != Port.id))
        .outerjoin(Panel, Panel.id == other.panel_id)
        .outerjoin(Equipment, Equipment.id == other.equipment_id)
        .where(Port.panel_id == panel_id)
    ).all()
    return {
        port_id: {"address": f"{name}:{port}", "owner": name, "panel": peer_panel is not None}
        for port_id, name, port, peer_panel in rows
    }


def _circuits(session: Session, panel_id: int) -> dict[int, list[dict[str, str]]]:
    rows = session.execute(
        select(CircuitPathItem.port_id, Circuit.label, Circuit.status)
        .join(Circuit, Circuit.id == CircuitPathItem.circuit_id)
        .join(Port, Port.id == CircuitPathItem.port_id)
        .where(Port.panel_id == panel_id)
        .distinct()
        .order_by(Circuit.label)
    ).all()
    found: dict[int, list[dict[str, str]]] = defaultdict(list)
    for port_id, label, status in rows:
        if port_id is not None:
            found[port_id].append({"label": label, "status": str(status)})
    return found


@blueprint.route("/<path:label>")
def panel(label: str) -> str:
    """A panel's page; its port table carries the field caution (a port with nothing on it
    reads as dark, and the record can be wrong)."""
    with reading() as session:
        row = _panel(session, label)
        info: Panel = row[0]
        ports = session.execute(
            select(Port.id, Port.name, Port.connector, Port.polish)
            .where(Port.panel_id == info.id)
            .order_by(Port.number, Port.name)
        ).all()
        terminations = _terminations(session, info.id)
        patches = _patches(session, info.id)
        circuits = _circuits(session, info.id)
        lines = [
            {
                "name": p.name,
                "connector": p.connector or info.connector,
                "polish": p.polish or info.polish,
                "termination": terminations.get(p.id),
                "patch": patches.get(p.id),
                "circuits": circuits.get(p.id, []),
            }
            for p in ports
        ]
        history = latest_changes(session, "panel", label)
        return render_template(
            "panel.html",
            panel=info,
            structure=row.structure,
            ports=lines,
            caution=FIELD_VERIFY,
            history=history,
        )
