"""Structure and span pages: what stands or runs there, with links onward, and their latest
changes."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, render_template
from sqlalchemy import or_, select
from sqlalchemy.orm import Session, aliased

from plantdb.errors import NotFound
from plantdb.model import (
    Cable,
    CableSpan,
    Closure,
    Equipment,
    Panel,
    Route,
    RouteSpan,
    SlackCoil,
    Span,
    Structure,
)
from webui.history import latest_changes
from webui.store import reading

blueprint = Blueprint("places", __name__)


def _contents(session: Session, place_id: int) -> dict[str, Any]:
    """What is at a structure: closures, panels, equipment, spans from it, slack coils."""
    start, end = aliased(Structure), aliased(Structure)
    return {
        "closures": session.scalars(
            select(Closure.label).where(Closure.structure_id == place_id).order_by(Closure.label)
        ).all(),
        "panels": session.execute(
            select(Panel.label, Panel.port_count)
            .where(Panel.structure_id == place_id)
            .order_by(Panel.label)
        ).all(),
        "equipment": session.execute(
            select(Equipment.label, Equipment.role)
            .where(Equipment.structure_id == place_id)
            .order_by(Equipment.label)
        ).all(),
        "spans": session.execute(
            select(Span.label, Span.kind, start.label.label("start"), end.label.label("end"))
            .join(start, start.id == Span.from_structure_id)
            .join(end, end.id == Span.to_structure_id)
            .where(or_(Span.from_structure_id == place_id, Span.to_structure_id == place_id))
            .order_by(Span.label)
        ).all(),
        "coils": session.execute(
            select(Cable.label, SlackCoil.length_m)
            .join(Cable, Cable.id == SlackCoil.cable_id)
            .where(SlackCoil.structure_id == place_id)
            .order_by(Cable.label)
        ).all(),
    }


@blueprint.route("/structures/<path:label>")
def structure(label: str) -> str:
    """A structure's page: its closures, panels, equipment, spans and slack coils."""
    with reading() as session:
        place = session.scalar(select(Structure).where(Structure.label == label))
        if place is None:
            raise NotFound(f"no structure is labelled {label}")
        contents = _contents(session, place.id)
        history = latest_changes(session, "structure", label)
        return render_template("structure.html", place=place, history=history, **contents)


@blueprint.route("/spans/<path:label>")
def span(label: str) -> str:
    """A span's page: its ends, length, kind, routes and the cables in it."""
    with reading() as session:
        start, end = aliased(Structure), aliased(Structure)
        row = session.execute(
            select(Span, start.label.label("start"), end.label.label("end"))
            .join(start, start.id == Span.from_structure_id)
            .join(end, end.id == Span.to_structure_id)
            .where(Span.label == label)
        ).first()
        if row is None:
            raise NotFound(f"no span is labelled {label}")
        info: Span = row[0]
        cables = session.execute(
            select(Cable.label, Cable.fiber_count)
            .join(CableSpan, CableSpan.cable_id == Cable.id)
            .where(CableSpan.span_id == info.id)
            .order_by(Cable.label)
        ).all()
        routes = session.execute(
            select(Route.label, Route.name)
            .join(RouteSpan, RouteSpan.route_id == Route.id)
            .where(RouteSpan.span_id == info.id)
            .order_by(Route.label)
        ).all()
        history = latest_changes(session, "span", label)
        return render_template(
            "span.html",
            span=info,
            start=row.start,
            end=row.end,
            cables=cables,
            routes=routes,
            history=history,
        )
