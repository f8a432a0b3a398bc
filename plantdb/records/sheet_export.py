"""A closure's splices as a sheet in the import's own columns: CSV, or XLSX with colours.

One row per fiber splice, strand numbers as numbers, so importing an exported sheet into an
empty copy of the plant gives the same record (and into the same record adds nothing). Cells
a spreadsheet would run as a formula are neutralised (`sheet_files.neutralise`).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

from sqlalchemy.orm import Session

from plantdb.colours import TIA_598, Marking
from plantdb.errors import PlantError
from plantdb.files import written_whole
from plantdb.records.print_sheet import write_html
from plantdb.records.sheet_files import COLUMNS, neutralise
from plantdb.records.splice_rows import ClosureSheet, RecordedSplice, closure_sheet, end_markings


def _number(value: float | None) -> str:
    # repr keeps every digit of a float, so the sheet reads back to exactly the same loss.
    return "" if value is None else repr(value)


def splice_cells(closure: str, splice: RecordedSplice) -> list[str]:
    """One splice in the sheet's columns (see `sheet_files.COLUMNS`), formula-safe."""
    cells = [
        closure,
        str(splice.tray),
        str(splice.slot),
        splice.a.label,
        splice.a.point,
        splice.a.side or "",
        splice.b.label,
        splice.b.point,
        splice.b.side or "",
        splice.method,
        _number(splice.loss_db),
        splice.spliced_on.isoformat() if splice.spliced_on else "",
        splice.spliced_by or "",
    ]
    return [neutralise(c) for c in cells]


def write_csv(sheet: ClosureSheet, path: Path) -> None:
    """The sheet as CSV (UTF-8, a header row, one splice a row)."""
    import csv

    with path.open("w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(COLUMNS)
        for splice in sheet.splices:
            writer.writerow(splice_cells(sheet.closure, splice))


def _font_on(hex_colour: str) -> str:
    """Black or white text, whichever reads on this fill (relative luminance, sRGB weights)."""
    red, green, blue = (int(hex_colour[i : i + 2], 16) for i in (1, 3, 5))
    return "000000" if 0.2126 * red + 0.7152 * green + 0.0722 * blue > 140 else "FFFFFF"


def _fill_cell(cell: Any, unit: Marking | None, fiber: Marking) -> None:
    from openpyxl.styles import Border, Font, PatternFill, Side

    base = fiber.hex.lstrip("#").upper()
    if fiber.stripe_hex:
        # A striped fiber: the base colour with thin diagonal stripes of the stripe colour.
        stripe = fiber.stripe_hex.lstrip("#").upper()
        cell.fill = PatternFill("lightUp", fgColor=stripe, bgColor=base)
    else:
        cell.fill = PatternFill("solid", fgColor=base)
    cell.font = Font(color=_font_on(fiber.hex), bold=True)
    if unit is not None:
        tube = Side(style="thick", color=unit.hex.lstrip("#").upper())
        cell.border = Border(left=tube, right=tube)


def _legend(workbook: Any) -> None:
    from openpyxl.styles import Font, PatternFill

    legend = workbook.create_sheet("Colours")
    legend.append(["ANSI/TIA-598 colour code"])
    legend["A1"].font = Font(bold=True)
    notes = (
        "Strand cells are filled with the fiber's colour; their side borders show the colour"
        " of its tube or ribbon.",
        "Positions 13-24 repeat the sequence with one black stripe (black takes a yellow"
        " stripe); every further twelve adds a stripe. Striped fibers show diagonal stripes.",
        "Only the first sheet is read back by `plantdb import splices`.",
    )
    for note in notes:
        legend.append([note])
    legend.append([])
    legend.append(["position", "colour", "abbreviation"])
    for position, colour in enumerate(TIA_598, start=1):
        legend.append([position, colour.name, colour.abbrev])
        swatch = legend.cell(row=legend.max_row, column=2)
        swatch.fill = PatternFill("solid", fgColor=colour.hex.lstrip("#").upper())
        swatch.font = Font(color=_font_on(colour.hex))
    legend.column_dimensions["A"].width = 10
    legend.column_dimensions["B"].width = 14


def write_xlsx(sheet: ClosureSheet, path: Path) -> None:
    """The sheet as an XLSX workbook: the splices first, colour-filled, then a legend."""
    from openpyxl import Workbook
    from openpyxl.styles import Font

    workbook = Workbook()
    splices = workbook.active
    assert splices is not None
    splices.title = "Splices"
    splices.append(list(COLUMNS))
    for cell in splices[1]:
        cell.font = Font(bold=True)
    strand_columns = (COLUMNS.index("a_strand"), COLUMNS.index("b_strand"))
    for splice in sheet.splices:
        splices.append(splice_cells(sheet.closure, splice))
        row = splices[splices.max_row]
        for index, end in zip(strand_columns, (splice.a, splice.b), strict=True):
            row[index].number_format = "@"  # text: a spreadsheet must not turn 1-12 into a date
            unit, fiber = end_markings(end)
            if fiber is not None:
                _fill_cell(row[index], unit, fiber)
    splices.freeze_panes = "A2"
    _legend(workbook)
    workbook.save(path)


def export_splice_sheet(session: Session, label: str, path: str | Path) -> dict[str, Any]:
    """Write a closure's splice sheet to a .csv, .xlsx or .html file (whole, or not at all)."""
    file = Path(path)
    writers: dict[str, Callable[[ClosureSheet, Path], None]] = {
        ".csv": write_csv,
        ".xlsx": write_xlsx,
        ".html": write_html,
    }
    write = writers.get(file.suffix.lower())
    if write is None:
        raise PlantError(f"{file.name}: write the splice sheet to a .csv, .xlsx or .html file")
    sheet = closure_sheet(session, label)
    with written_whole(file) as temporary:
        write(sheet, temporary)
    return {"closure": label, "written": str(file), "splices": len(sheet.splices)}
