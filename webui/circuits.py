"""Circuit pages: status (which a dispatcher may change), the trace, the loss budget, the path
on the map; and the list of circuits."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, flash, redirect, render_template, request, url_for
from sqlalchemy import func, select
from sqlalchemy.orm import Session, aliased

from plantdb.errors import NotFound, PlantError, RecordsError
from plantdb.model import Circuit, Equipment, Panel, Port
from plantdb.records.circuit_status import STATUSES, set_circuit_status
from plantdb.trace.loss import LossOptions
from plantdb.trace.service import loss_report, trace_document
from webui import params
from webui.access import writes
from webui.history import latest_changes
from webui.store import reading, write

blueprint = Blueprint("circuits", __name__, url_prefix="/circuits")

PAGE_SIZE = 200


def _circuit_rows(
    session: Session, where: list[Any], offset: int = 0, limit: int = PAGE_SIZE
) -> list[Any]:
    a, z = aliased(Port), aliased(Port)
    a_panel, a_gear, z_panel, z_gear = (
        aliased(Panel),
        aliased(Equipment),
        aliased(Panel),
        aliased(Equipment),
    )
    query = (
        select(
            Circuit.label,
            Circuit.kind,
            Circuit.status,
            Circuit.customer,
            Circuit.path_state,
            Circuit.path_note,
            Circuit.version,
            (func.coalesce(a_panel.label, a_gear.label) + ":" + a.name).label("a"),
            (func.coalesce(z_panel.label, z_gear.label) + ":" + z.name).label("z"),
        )
        .join(a, a.id == Circuit.a_port_id)
        .outerjoin(a_panel, a_panel.id == a.panel_id)
        .outerjoin(a_gear, a_gear.id == a.equipment_id)
        .outerjoin(z, z.id == Circuit.z_port_id)
        .outerjoin(z_panel, z_panel.id == z.panel_id)
        .outerjoin(z_gear, z_gear.id == z.equipment_id)
        .where(*where)
        .order_by(Circuit.label)
        .offset(offset)
        .limit(limit)
    )
    return list(session.execute(query).all())


@blueprint.route("/")
def circuits() -> str:
    """Every circuit (a page at a time), optionally of one status."""
    status = params.text(request.args, "status")
    page = params.whole(request.args, "page") or 1
    where = [Circuit.status == status] if status in STATUSES else []
    with reading() as session:
        rows = _circuit_rows(session, where, (page - 1) * PAGE_SIZE, PAGE_SIZE + 1)
    return render_template(
        "circuits.html",
        rows=rows[:PAGE_SIZE],
        more=len(rows) > PAGE_SIZE,
        page=page,
        status=status if status in STATUSES else None,
        statuses=STATUSES,
    )


def _answer(work: Any) -> tuple[dict[str, Any] | None, str | None]:
    """A document, or the records error that stopped it (shown in place of the table)."""
    try:
        return work(), None
    except RecordsError as error:
        return None, error.message


@blueprint.route("/<path:label>")
def circuit(label: str) -> str:
    """A circuit's page."""
    wavelengths = params.wavelengths(request.args)
    with reading() as session:
        rows = _circuit_rows(session, [Circuit.label == label])
        if not rows:
            raise NotFound(f"no circuit is labelled {label}")
        trace, trace_error = _answer(lambda: trace_document(session, "circuit", label))
        try:
            loss, loss_error = _answer(
                lambda: loss_report(session, "circuit", label, LossOptions(wavelengths))
            )
        except PlantError as error:
            loss, loss_error = None, error.message
        history = latest_changes(session, "circuit", label)
    return render_template(
        "circuit.html",
        circuit=rows[0],
        trace=trace,
        trace_error=trace_error,
        loss=loss,
        loss_error=loss_error,
        statuses=STATUSES,
        geometry_url=url_for("map.lines", circuit=label),
        history=history,
    )


@blueprint.route("/<path:label>/status", methods=["POST"])
@writes("dispatcher", "engineer")
def change_status(label: str) -> Any:
    """Set the circuit's status from the page's form, unless someone changed the circuit since
    the page showed it (the form carries the version it showed: 409 then)."""
    status = params.required_text(request.form, "status")
    shown = params.whole(request.form, "version")
    change = write(lambda session: set_circuit_status(session, label, status, version=shown))
    if change["changed"]:
        flash(f"{label}: status changed from {change['previous']} to {change['status']}.", "done")
    else:
        flash(f"{label}: status was already {change['status']}.", "done")
    return redirect(url_for("circuits.circuit", label=label), code=303)
