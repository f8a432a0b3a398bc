"""Importing a splice sheet: every row checked before anything is written, all or nothing.

The rows of a `Sheet` (from `sheet_files`) become `SpliceRequest`s for the splicing rules.
Every problem of every row is collected, each as `line N: ...`; with any problem nothing is
written and the caller refuses the sheet with the whole list. A row with a bad method, loss,
date or splicer is still checked against the record whenever the cells that say where the
splice is (closure, tray, slot, cables, strands, sides) can be read, so the clerk sees every
mistake of the line at once. A row whose splices the record already holds identically is
counted as already recorded, so importing a sheet twice adds nothing the second time.
"""

from __future__ import annotations

import datetime as dt
import math
import re

from sqlalchemy.orm import Session

from plantdb.bulk import collector_paused
from plantdb.records.sheet_files import Sheet, SheetRow
from plantdb.records.splicing import (
    METHODS,
    EndGroup,
    Progress,
    SpliceReport,
    SpliceRequest,
    record_splices,
)

SPLICED_BY_CHARS = 100  # the record's column width
_WHERE = re.compile(r"^(?:line |\w+\[)(\d+)")


class _Cells:
    """Reads a row's cells, collecting a problem for each bad one instead of stopping.

    `unplaced` is set when a cell that says where the splice is (closure, tray, slot, cable,
    strand, side) cannot be read: without it the row cannot be checked against the record.
    """

    __slots__ = ("get", "problems", "unplaced")

    def __init__(self, row: SheetRow) -> None:
        self.get = row.cells.get
        self.problems: list[str] = []
        self.unplaced = False

    def text(self, column: str, *, required: bool = False) -> str:
        value = self.get(column, "")
        if required and not value:
            self.problems.append(f"{column} is empty")
            self.unplaced = True
        return value

    def whole(self, column: str) -> int:
        value = self.get(column, "")
        # isdecimal, not isdigit: "²" is a digit that int() refuses.
        if value.isdecimal():
            return int(value)
        self.problems.append(
            f"{column} {value!r} is not a whole number" if value else f"{column} is empty"
        )
        self.unplaced = True
        return 0

    def loss(self) -> float | None:
        value = self.text("loss_db")
        if not value:
            return None
        try:
            loss = float(value)
        except ValueError:
            hint = " (use a point for decimals)" if "," in value else ""
            self.problems.append(f"loss_db {value!r} is not a number of dB{hint}")
            return None
        if not math.isfinite(loss):
            self.problems.append(f"loss_db {value!r} is not a number of dB")
            return None
        return loss

    def date(self) -> dt.date | None:
        value = self.text("spliced_on")
        if not value:
            return None
        try:
            return dt.date.fromisoformat(value)
        except ValueError:
            self.problems.append(f"spliced_on {value!r} is not an ISO date (YYYY-MM-DD)")
            return None

    def side(self, column: str) -> str | None:
        value = self.get(column, "")
        if not value:
            return None
        value = value.upper()
        if value not in ("A", "B"):
            self.problems.append(f"{column} {value!r} is not A or B (or empty at a cable's end)")
            self.unplaced = True
            return None
        return value

    def method(self) -> str | None:
        value = self.get("method", "")
        if not value:
            return None
        value = value.lower()
        if value not in METHODS:
            self.problems.append(f"method {value!r} is not one of {', '.join(METHODS)}")
            return None  # the row is still checked against the record, never written
        return value

    def spliced_by(self) -> str | None:
        value = self.get("spliced_by", "")
        if len(value) > SPLICED_BY_CHARS:
            self.problems.append(f"spliced_by is longer than {SPLICED_BY_CHARS} characters")
            return None
        return value or None


def request_from_row(row: SheetRow) -> tuple[SpliceRequest | None, list[str]]:
    """The splice request a row asks for, and a `line N: ...` problem for every bad cell.

    The request is None only when a cell saying where the splice is cannot be read. A row
    whose other cells are bad still gives its request, marked `check_only`: the splicing
    rules check it against the record (strand outside its cable, slot taken, ...) and plan
    nothing for it, so every mistake of the line is reported together.
    """
    cells = _Cells(row)
    request = SpliceRequest(
        closure=cells.text("closure", required=True),
        tray=cells.whole("tray"),
        slot=cells.whole("slot"),
        a=EndGroup(
            cells.text("a_cable", required=True),
            cells.text("a_strand", required=True),
            cells.side("a_side"),
        ),
        b=EndGroup(
            cells.text("b_cable", required=True),
            cells.text("b_strand", required=True),
            cells.side("b_side"),
        ),
        method=cells.method(),
        loss_db=cells.loss(),
        spliced_on=cells.date(),
        spliced_by=cells.spliced_by(),
        where=row.where,
        check_only=bool(cells.problems),
    )
    problems = [f"{row.where}: {p}" for p in cells.problems]
    return (None if cells.unplaced else request), problems


def requests_from_sheet(sheet: Sheet) -> tuple[list[SpliceRequest], list[str]]:
    """The request of every row that says where its splice is, and the problems of the sheet
    and of its bad cells. A request from a row with bad cells is `check_only`."""
    requests: list[SpliceRequest] = []
    problems = list(sheet.problems)
    for row in sheet.rows:
        request, row_problems = request_from_row(row)
        if request is not None:
            requests.append(request)
        problems.extend(row_problems)
    return requests, problems


def _position(problem: str) -> int:
    match = _WHERE.match(problem)
    return int(match.group(1)) if match else 0


def import_sheet(
    session: Session,
    sheet: Sheet,
    *,
    dry_run: bool = False,
    progress: Progress | None = None,
) -> SpliceReport:
    """Check a whole sheet against the record; write it only when there is no problem at all.

    With problems in the cells, every row that says where its splice is is still checked
    against the record, so the report lists every problem of the sheet at once, in line order.
    """
    with collector_paused():
        requests, problems = requests_from_sheet(sheet)
    report = record_splices(session, requests, dry_run=dry_run or bool(problems), progress=progress)
    if problems:
        report.problems = sorted(problems + report.problems, key=_position)
    report.warnings.sort(key=_position)
    return report
