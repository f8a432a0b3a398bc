"""Correcting a closure's splice sheet from its page: move a splice to another tray or slot, or
remove it. Each form carries the splice's id and version as the page showed them; when someone
changed the splice since, the edit is refused (409) instead of applied over their change."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, flash, redirect, request, url_for
from sqlalchemy.orm import Session
from werkzeug.exceptions import BadRequest

from plantdb.records.splice_edits import SeenSplice, move_splices, remove_splices
from plantdb.records.splicing import SpliceReport
from webui import params
from webui.access import writes
from webui.store import write

blueprint = Blueprint("splice_edits", __name__, url_prefix="/closures")


def _whole(name: str) -> int:
    value = params.whole(request.form, name)
    if value is None:
        raise BadRequest(f"parameter {name} is required")
    return value


def _shown() -> tuple[int, int, dict[int, SeenSplice]]:
    """(tray, slot, what the page showed in that slot) from the form."""
    tray, slot = _whole("tray"), _whole("slot")
    return tray, slot, {slot: SeenSplice(_whole("splice"), _whole("version"))}


def _checked(report: SpliceReport, what: str) -> SpliceReport:
    report.refuse_if_problems(what)  # raising rolls the transaction back
    return report


def _back(label: str, tray: int) -> Any:
    return redirect(url_for("closures.closure", label=label, _anchor=f"tray-{tray}"), code=303)


@blueprint.route("/<path:label>/splices/remove", methods=["POST"])
@writes("clerk")
def remove(label: str) -> Any:
    """Remove one splice (its strands stay cut), if it is still as the page showed it."""
    tray, slot, seen = _shown()

    def work(session: Session) -> SpliceReport:
        return _checked(remove_splices(session, label, tray, [slot], seen=seen), "the removal")

    report = write(work)
    for splice in report.splices:
        flash(f"Removed {splice['a']} to {splice['b']} from tray {tray} slot {slot}.", "done")
    for note in report.notes:
        flash(note, "warning")
    return _back(label, tray)


@blueprint.route("/<path:label>/splices/move", methods=["POST"])
@writes("clerk")
def move(label: str) -> Any:
    """Move one splice to another tray or slot, if it is still as the page showed it."""
    tray, slot, seen = _shown()
    to_tray, to_slot = _whole("to_tray"), _whole("to_slot")

    def work(session: Session) -> SpliceReport:
        report = move_splices(session, label, tray, [slot], to_tray, to_slot, seen=seen)
        return _checked(report, "the move")

    report = write(work)
    for splice in report.splices:
        flash(
            f"Moved {splice['a']} to {splice['b']} from tray {tray} slot {slot} to tray"
            f" {splice['tray']} slot {splice['slot']}.",
            "done",
        )
    return _back(label, to_tray)
