"""History pages: every change of a closure, cable, circuit, panel, structure or span (who,
when, what, before and after), the panel of the latest changes on each of their pages, and a
closure's splice sheet as it was recorded on a given day."""

from __future__ import annotations

import datetime as dt
from typing import Any

from flask import Blueprint, Flask, render_template, request
from sqlalchemy.orm import Session
from werkzeug.exceptions import BadRequest

from plantdb.errors import PlantError
from plantdb.records.history import KINDS, VERBS, change_summary, history_document
from plantdb.records.sheet_history import closure_sheet_as_of, parse_day
from webui import params
from webui.store import reading

blueprint = Blueprint("history", __name__, url_prefix="/history")

PANEL_SIZE = 8
PAGE_SIZE = 200


def latest_changes(session: Session, kind: str, label: str) -> dict[str, Any]:
    """The newest changes of a thing, for the panel on its page (newest first)."""
    return history_document(session, kind, label, latest=PANEL_SIZE)


def _day(args: Any, name: str) -> dt.date | None:
    value = params.text(args, name)
    if value is None:
        return None
    try:
        return parse_day(value)
    except PlantError as error:
        raise BadRequest(error.message.replace("as_of", name, 1)) from None


@blueprint.route(f"/<any({', '.join(KINDS)}):kind>/<path:label>")
def history(kind: str, label: str) -> str:
    """Every recorded change of a thing with a history (`KINDS`), newest first, a page at a
    time."""
    since = _day(request.args, "since")
    page = params.whole(request.args, "page") or 1
    start = dt.datetime.combine(since, dt.time.min) if since else None
    with reading() as session:
        document = history_document(
            session, kind, label, since=start, latest=PAGE_SIZE + 1, skip=(page - 1) * PAGE_SIZE
        )
    changes = document["changes"]
    return render_template(
        "history.html",
        kind=kind,
        label=label,
        changes=changes[:PAGE_SIZE],
        more=len(changes) > PAGE_SIZE,
        page=page,
        since=since,
    )


def past_sheet_page(label: str, day_text: str) -> str:
    """A closure's splice sheet as recorded at the end of a day, rebuilt from the history."""
    try:
        day = parse_day(day_text)
    except PlantError as error:
        raise BadRequest(error.message) from None
    with reading() as session:
        sheet = closure_sheet_as_of(session, label, day)
    return render_template("closure_as_of.html", sheet=sheet, trays=sheet.trays_with_splices())


def when(value: str) -> str:
    """A change's time as people read it: `2026-12-02 06:00 UTC`."""
    return f"{value[:16].replace('T', ' ')} UTC"


def install(app: Flask) -> None:
    """What the history panel and pages use in templates."""
    app.add_template_filter(when, "when")
    app.add_template_filter(change_summary, "change_summary")
    app.jinja_env.globals.update(change_verbs=VERBS)
