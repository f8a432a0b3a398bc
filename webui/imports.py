"""Importing a splice sheet from the browser: upload, read the dry-run report (every `line N:`
problem), then commit the same file when it is clean.

The file rides from the check to the commit inside the page (base64 in a hidden field), so the
server keeps nothing between the two requests; the commit checks every row again anyway.
"""

from __future__ import annotations

import base64
import binascii
import tempfile
from pathlib import Path
from typing import Any

from flask import Blueprint, render_template, request
from sqlalchemy.orm import Session
from werkzeug.exceptions import BadRequest
from werkzeug.utils import secure_filename

from plantdb.errors import PlantError
from plantdb.records.sheet_files import Sheet, read_csv_sheet, read_xlsx_sheet
from plantdb.records.sheet_import import import_sheet
from plantdb.records.splicing import SpliceRefused, SpliceReport
from webui.access import writes
from webui.errors import status_of
from webui.store import reading, write

blueprint = Blueprint("imports", __name__, url_prefix="/import")

# Splices listed on the report page; the counts always cover the whole sheet.
SHOWN_SPLICES = 500


def read_upload(name: str, data: bytes) -> Sheet:
    """A sheet from an uploaded file's bytes (.csv or .xlsx)."""
    suffix = Path(name).suffix.lower()
    if suffix == ".csv":
        return read_csv_sheet(data, name)
    if suffix == ".xlsx":
        with tempfile.TemporaryDirectory(prefix="plantdb-import-") as folder:
            path = Path(folder) / name
            path.write_bytes(data)
            return read_xlsx_sheet(path)
    raise PlantError(f"{name}: give a .csv or .xlsx splice sheet")


def _file() -> tuple[str, bytes]:
    """The sheet's name and bytes: a fresh upload, or the one carried from the check."""
    carried = request.form.get("data")
    if carried is not None:
        name = secure_filename(request.form.get("name", "")) or "sheet.csv"
        try:
            return name, base64.b64decode(carried, validate=True)
        except (binascii.Error, ValueError):
            raise BadRequest("the carried sheet is damaged; upload the file again") from None
    upload = request.files.get("sheet")
    if upload is None or not upload.filename:
        raise BadRequest("choose a splice sheet file (.csv or .xlsx) to check")
    return secure_filename(upload.filename) or "sheet.csv", upload.read()


@blueprint.route("/")
def form() -> str:
    """The upload form."""
    return render_template("import.html", report=None, problem=None)


def _check(sheet: Sheet, commit: bool) -> SpliceReport:
    """A dry run reads only (no write lock held while a big sheet is checked); a commit
    writes in one transaction, refused whole on any problem."""
    if not commit:
        with reading() as session:
            return import_sheet(session, sheet, dry_run=True)

    def work(session: Session) -> SpliceReport:
        report = import_sheet(session, sheet)
        report.refuse_if_problems(f"splice sheet {sheet.name}")
        return report

    return write(work)


@blueprint.route("/", methods=["POST"])
@writes("clerk")
def check_or_commit() -> Any:
    """Check the sheet (a dry run), or commit it when the clerk asks and it is clean."""
    commit = request.form.get("action") == "commit"
    name, data = _file()
    try:
        sheet = read_upload(name, data)
        report = _check(sheet, commit)
    except SpliceRefused as refused:
        report, commit = refused.report, False
    except PlantError as error:
        page = render_template("import.html", report=None, problem=error.message, name=name)
        return page, status_of(error)
    document = report.document()
    page = render_template(
        "import.html",
        report=document,
        committed=commit,
        name=name,
        rows=len(sheet.rows),
        shown=document["splices"][:SHOWN_SPLICES],
        carried=base64.b64encode(data).decode("ascii"),
        closures=sorted({s["closure"] for s in document["splices"]}),
        problem=None,
    )
    return page, 422 if document["problems"] else 200
