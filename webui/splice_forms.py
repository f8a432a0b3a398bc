"""The closure page's three splice forms (one splice, a range, a unit to a unit) read as one
row of a splice sheet, so every rule of the sheet import applies to them unchanged."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from sqlalchemy.orm import Session

from plantdb.records.sheet_files import Sheet, SheetRow
from plantdb.records.sheet_import import import_sheet
from plantdb.records.splicing import SpliceReport

FORMS = ("one", "range", "unit")
WHERE = "the form"
# Cells copied from the form as they are, whichever of the three it is.
_SHARED = (
    "tray",
    "slot",
    "a_cable",
    "a_side",
    "b_cable",
    "b_side",
    "method",
    "loss_db",
    "spliced_on",
    "spliced_by",
)


@dataclass(frozen=True)
class SpliceForm:
    """What a clerk typed into one of the three forms."""

    kind: str
    values: dict[str, str]

    def strand_cell(self, side: str) -> str:
        """The strand cell of one side in the sheet's notation: 37, 13-24, BL/OR, unit 2."""
        get = self.values.get
        if self.kind == "range":
            first, last = get(f"{side}_first", ""), get(f"{side}_last", "")
            return f"{first}-{last}" if first and last else first or last
        if self.kind == "unit":
            unit = get(f"{side}_unit", "")
            return f"unit {unit}" if unit else ""
        return get(f"{side}_strand", "")

    def row(self, closure: str) -> SheetRow:
        """The sheet row this form stands for."""
        cells = {name: self.values.get(name, "") for name in _SHARED}
        cells.update(
            closure=closure, a_strand=self.strand_cell("a"), b_strand=self.strand_cell("b")
        )
        return SheetRow(1, {k: v for k, v in cells.items() if v}, WHERE)


def read_form(form: Mapping[str, str]) -> SpliceForm:
    """The form's kind and its stripped values (an unknown kind reads as a single splice)."""
    kind = form.get("form", "one")
    values = {k: str(v).strip() for k, v in form.items() if k != "form"}
    return SpliceForm(kind if kind in FORMS else "one", values)


def record_form(session: Session, closure: str, entry: SpliceForm) -> SpliceReport:
    """Check and record the form's splices in the caller's transaction; refuse on any problem."""
    sheet = Sheet(WHERE, rows=[entry.row(closure)])
    report = import_sheet(session, sheet)
    report.refuse_if_problems("the splices")
    return report
