"""Closure pages: cables, what is live, the splice sheet tray by tray, and the splice forms."""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import Any

from flask import Blueprint, Response, flash, redirect, render_template, request, url_for
from sqlalchemy import select
from sqlalchemy.orm import Session

from plantdb.model import Closure, Splitter
from plantdb.records.print_sheet import render_sheet_html
from plantdb.records.sheet_export import write_csv, write_xlsx
from plantdb.records.splice_rows import ClosureSheet, closure_sheet, end_markings
from plantdb.records.splicing import SpliceRefused, SpliceReport
from plantdb.trace.dispatch import live_document
from webui import params
from webui.access import writes
from webui.history import latest_changes, past_sheet_page
from webui.splice_forms import SpliceForm, read_form, record_form
from webui.store import reading, write
from webui.views import strand_markings

blueprint = Blueprint("closures", __name__, url_prefix="/closures")

XLSX = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"


def _trays(sheet: ClosureSheet) -> list[dict[str, Any]]:
    """Each tray with its splices in slot order."""
    by_tray: dict[int, list[Any]] = {number: [] for number, _slots in sheet.trays}
    for splice in sheet.splices:
        by_tray.setdefault(splice.tray, []).append(splice)
    slots = dict(sheet.trays)
    return [
        {"number": n, "slots": slots.get(n, 0), "splices": found}
        for n, found in sorted(by_tray.items())
    ]


def _strand_rows(live: dict[str, Any], sheet: ClosureSheet) -> list[dict[str, Any]]:
    """The live document's strands, live ones first, each with its unit and fiber markings."""
    cables = {c.label: c for c in sheet.cables}
    rows = []
    for strand in live["strands"]:
        cable = cables.get(strand["cable"])
        marks = (
            strand_markings(
                strand["strand"], cable.construction, cable.fibers_per_unit, cable.fiber_count
            )
            if cable
            else (None, None)
        )
        rows.append({**strand, "unit_mark": marks[0], "fiber_mark": marks[1]})
    return sorted(rows, key=lambda r: (not r["live"], r["cable"], r["strand"]))


def _page(label: str, entry: SpliceForm | None = None, problems: list[str] | None = None) -> str:
    with reading() as session:
        live = live_document(session, label)
        sheet = closure_sheet(session, label)
        splitters = session.scalars(
            select(Splitter.label)
            .join(Closure, Closure.id == Splitter.closure_id)
            .where(Closure.label == label)
            .order_by(Splitter.label)
        ).all()
        history = latest_changes(session, "closure", label)
    strands = _strand_rows(live, sheet)
    return render_template(
        "closure.html",
        closure=label,
        live=live,
        sheet=sheet,
        trays=_trays(sheet),
        live_strands=[s for s in strands if s["live"]],
        strands=strands,
        end_markings=end_markings,
        splitters=splitters,
        entry=entry,
        problems=problems or [],
        history=history,
    )


@blueprint.route("/<path:label>")
def closure(label: str) -> str:
    """A closure's page; with ?as_of=YYYY-MM-DD its splice sheet as recorded on that day."""
    as_of = params.text(request.args, "as_of")
    if as_of is not None:
        return past_sheet_page(label, as_of)
    return _page(label)


@blueprint.route("/<path:label>/print")
def print_sheet(label: str) -> Response:
    """The print-ready splice sheet (the same page `plantdb export splices -o X.html` writes)."""
    with reading() as session:
        sheet = closure_sheet(session, label)
    page = render_sheet_html(sheet, stylesheet=url_for("assets.print_sheet_css"))
    return Response(page, mimetype="text/html")


@blueprint.route("/<path:label>/sheet.<any(csv, xlsx):suffix>")
def download_sheet(label: str, suffix: str) -> Response:
    """The splice sheet in the import's columns, to edit and import again."""
    with reading() as session:
        sheet = closure_sheet(session, label)
    with tempfile.TemporaryDirectory(prefix="plantdb-sheet-") as folder:
        path = Path(folder) / f"sheet.{suffix}"
        (write_csv if suffix == "csv" else write_xlsx)(sheet, path)
        data = path.read_bytes()
    mimetype = "text/csv" if suffix == "csv" else XLSX
    response = Response(data, mimetype=mimetype)
    safe = "".join(c if c.isalnum() or c in "-_." else "_" for c in label)
    response.headers["Content-Disposition"] = f'attachment; filename="{safe}-splices.{suffix}"'
    return response


def _added_message(report: SpliceReport) -> str:
    added = report.added
    if not added:
        return "Nothing added: every splice asked for is already in the record."
    trays = sorted({s["tray"] for s in report.splices})
    where = ", ".join(f"tray {t}" for t in trays)
    cuts = f"; {report.cuts} strands cut" if report.cuts else ""
    return f"Added {added} splice{'s' if added != 1 else ''} in {where}{cuts}."


@blueprint.route("/<path:label>/splices", methods=["POST"])
@writes("clerk")
def add_splices(label: str) -> Any:
    """Record the splices of one of the three forms; the page again with every problem."""
    entry = read_form(request.form)

    def work(session: Session) -> SpliceReport:
        return record_form(session, label, entry)

    try:
        report = write(work)
    except SpliceRefused as refused:
        return _page(label, entry, refused.details), 422
    flash(_added_message(report), "done")
    for warning in report.warnings:
        flash(warning, "warning")
    tray = report.splices[0]["tray"] if report.splices else None
    anchor = f"tray-{tray}" if tray else "sheet"
    return redirect(url_for("closures.closure", label=label, _anchor=anchor), code=303)
