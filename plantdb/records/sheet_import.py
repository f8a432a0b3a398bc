"""Importing a splice sheet: every row checked before anything is written, all or nothing.

The rows of a `Sheet` (from `sheet_files`) become `SpliceRequest`s for the splicing rules.
Every problem of every row is collected, each as `line N: ...`; with any problem nothing is
written and the caller refuses the sheet with the whole list. A row whose splices the record
already holds identically is counted as already recorded, so importing a sheet twice adds
nothing the second time.
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


class _RowProblems(Exception):
    def __init__(self, problems: list[str]) -> None:
        super().__init__(problems)
        self.problems = problems


class _Cells:
    """Reads a row's cells, collecting a problem for each bad one instead of stopping."""

    __slots__ = ("get", "problems")

    def __init__(self, row: SheetRow) -> None:
        self.get = row.cells.get
        self.problems: list[str] = []

    def text(self, column: str, *, required: bool = False) -> str:
        value = self.get(column, "")
        if required and not value:
            self.problems.append(f"{column} is empty")
        return value

    def whole(self, column: str) -> int:
        value = self.get(column, "")
        # isdecimal, not isdigit: "²" is a digit that int() refuses.
        if value.isdecimal():
            return int(value)
        self.problems.append(
            f"{column} {value!r} is not a whole number" if value else f"{column} is empty"
        )
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
        return value if value in ("A", "B") else None

    def method(self) -> str | None:
        value = self.get("method", "")
        if not value:
            return None
        value = value.lower()
        if value not in METHODS:
            self.problems.append(f"method {value!r} is not one of {', '.join(METHODS)}")
        return value or None

    def spliced_by(self) -> str | None:
        value = self.get("spliced_by", "")
        if len(value) > SPLICED_BY_CHARS:
            self.problems.append(f"spliced_by is longer than {SPLICED_BY_CHARS} characters")
        return value or None


def request_from_row(row: SheetRow) -> SpliceRequest:
    """The splice request a row asks for; `_RowProblems` naming every bad cell."""
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
    )
    if cells.problems:
        raise _RowProblems([f"{row.where}: {p}" for p in cells.problems])
    return request


def requests_from_sheet(sheet: Sheet) -> tuple[list[SpliceRequest], list[str]]:
    """The requests of every good row, and the problems of the sheet and its bad rows."""
    requests: list[SpliceRequest] = []
    problems = list(sheet.problems)
    for row in sheet.rows:
        try:
            requests.append(request_from_row(row))
        except _RowProblems as exc:
            problems.extend(exc.problems)
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

    With problems in the cells, the good rows are still checked against the record, so the
    report lists every problem of the sheet at once, in line order.
    """
    with collector_paused():
        requests, problems = requests_from_sheet(sheet)
    report = record_splices(session, requests, dry_run=dry_run or bool(problems), progress=progress)
    if problems:
        report.problems = sorted(problems + report.problems, key=_position)
    report.warnings.sort(key=_position)
    return report
