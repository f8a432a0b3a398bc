"""Sheets out, on SQLite and PostgreSQL: export in the import's columns, XLSX with colours,
formula-safe cells, and the print-ready HTML page. Colours are ANSI/TIA-598 (seen)."""

from __future__ import annotations

import csv
from pathlib import Path
from typing import Any

import pytest
from openpyxl import load_workbook

from plantdb.colours import TIA_598
from plantdb.db import Database, run_in_transaction
from plantdb.records import sheet_export
from plantdb.records.bundle import dump_bundle, load_bundle
from plantdb.records.print_sheet import splice_sheet_html
from plantdb.records.sheet_export import export_splice_sheet
from plantdb.records.sheet_files import COLUMNS, read_sheet
from plantdb.records.sheet_import import import_sheet
from plantdb.records.splice_edits import remove_splices
from plantdb.records.splicing import SpliceRequest, end_group, record_splices
from tests.conftest import PlantCli
from tests.networks import larkspur

FORMULA = '=HYPERLINK("http://example.invalid")'


@pytest.fixture
def yard(database: Database) -> Database:
    """larkspur() with a mix of splices: a range, a mid-span piece, a leg, odd text."""
    run_in_transaction(database, lambda s: load_bundle(s, larkspur().data))
    requests = [
        SpliceRequest("LC-1", 1, 1, end_group("C-A:13-16"), end_group("C-B:13-16"),
                      loss_db=0.03, spliced_by="<b>Larkspur</b> & crew"),
        SpliceRequest("LC-1", 1, 5, end_group("C-T:5/A"), end_group("C-B:5"), loss_db=0.1 + 0.2,
                      spliced_by=FORMULA),
        SpliceRequest("LC-1", 1, 6, end_group("C-A:2"), end_group("LS-1:in"),
                      method="mechanical"),
        SpliceRequest("LC-1", 2, 1, end_group("C-A:tube 3"), end_group("C-B:tube 3")),
    ]  # fmt: skip
    report = run_in_transaction(database, lambda s: record_splices(s, requests))
    assert report.problems == []
    return database


def splices(database: Database) -> list[dict[str, Any]]:
    with database.read() as session:
        found = dump_bundle(session).get("splices", [])
    return sorted(found, key=lambda s: (s["tray"], s["slot"]))


def export(database: Database, path: Path) -> dict[str, Any]:
    with database.read() as session:
        return export_splice_sheet(session, "LC-1", path)


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_export_then_import_gives_the_same_record(
    yard: Database, tmp_path: Path, suffix: str
) -> None:
    before = splices(yard)
    summary = export(yard, tmp_path / f"lc1{suffix}")
    assert summary["splices"] == len(before) == 4 + 1 + 1 + 12 + 1
    # Importing into the same record adds nothing ...
    sheet = read_sheet(tmp_path / f"lc1{suffix}")
    again = run_in_transaction(yard, lambda s: import_sheet(s, sheet))
    assert again.problems == [] and again.added == 0 and again.already_recorded == len(before)
    # ... and into a record without them puts back exactly what was there.
    for tray in (1, 2):
        slots = [s["slot"] for s in before if s["tray"] == tray]
        run_in_transaction(yard, lambda s, t=tray, n=slots: remove_splices(s, "LC-1", t, n))
    assert splices(yard) == []
    restored = run_in_transaction(yard, lambda s: import_sheet(s, sheet))
    assert restored.problems == [] and restored.added == len(before)
    assert splices(yard) == before


def test_csv_export_uses_the_import_columns_and_neutralises_formulas(
    yard: Database, tmp_path: Path
) -> None:
    export(yard, tmp_path / "lc1.csv")
    with (tmp_path / "lc1.csv").open(newline="") as handle:
        rows = list(csv.reader(handle))
    assert tuple(rows[0]) == COLUMNS
    mid_span = next(r for r in rows if r[3] == "C-T")
    assert mid_span[:9] == ["LC-1", "1", "5", "C-T", "5", "A", "C-B", "5", ""]
    assert mid_span[10] == repr(0.1 + 0.2)  # every digit, so the loss reads back exactly
    assert mid_span[12] == "'" + FORMULA


def test_xlsx_export_fills_strand_cells_with_their_colours(yard: Database, tmp_path: Path) -> None:
    export(yard, tmp_path / "lc1.xlsx")
    workbook = load_workbook(tmp_path / "lc1.xlsx")
    splices_sheet, legend = workbook.worksheets
    assert [c.value for c in splices_sheet[1]] == list(COLUMNS)
    by_a = {
        row[4].value: row for row in splices_sheet.iter_rows(min_row=2) if row[3].value == "C-A"
    }
    # TIA-598: strand 13 of a 12-per-tube cable is tube 2 (orange), fiber 1 (blue).
    strand_13 = by_a["13"][4]
    assert strand_13.fill.fgColor.rgb.endswith(TIA_598[0].hex.lstrip("#").upper())
    assert strand_13.border.left.color.rgb.endswith(TIA_598[1].hex.lstrip("#").upper())
    assert strand_13.number_format == "@"
    formula_cell = next(r[12] for r in splices_sheet.iter_rows(min_row=2) if r[3].value == "C-T")
    assert formula_cell.data_type == "s" and formula_cell.value == "'" + FORMULA
    legend_names = [row[1].value for row in legend.iter_rows() if isinstance(row[0].value, int)]
    assert legend_names == [c.name for c in TIA_598]
    assert legend["A1"].value == "ANSI/TIA-598 colour code"


def test_print_sheet_shows_trays_colours_sides_and_losses(yard: Database) -> None:
    with yard.read() as session:
        page = splice_sheet_html(session, "LC-1")
    assert page.startswith("<!doctype html>")
    assert "Tray 1 <small>(6 of 24 slots used)</small>" in page
    assert "Tray 2 <small>(13 of 24 slots used)</small>" in page
    # Colours as swatches and as names: C-A:13 is orange tube, blue fiber (TIA-598).
    assert '<span class="swatch tia-2"></span>orange' in page
    assert f".tia-2 {{ --swatch: {TIA_598[1].hex};" in page  # a file that stands alone
    assert "style=" not in page  # classes only: the served sheet passes a strict CSP
    assert "orange / " in page and "(OR/BL)" in page
    assert "A <small>toward LK-P1</small>" in page
    assert "<td class=num>0.30</td>" in page and "<td class=num>0.03</td>" in page
    assert "passes through: side A toward LK-P1, side B toward LK-P3" in page
    assert "splitter leg" in page
    assert "@media print" in page and "print-color-adjust: exact" in page
    assert "verify each strand in the field" in page


def test_print_sheet_escapes_every_label(yard: Database) -> None:
    with yard.read() as session:
        page = splice_sheet_html(session, "LC-1")
    assert "<b>Larkspur</b>" not in page
    assert "&lt;b&gt;Larkspur&lt;/b&gt; &amp; crew" in page


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_a_failed_write_leaves_no_partial_file_and_the_old_sheet_whole(
    yard: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, suffix: str
) -> None:
    out = tmp_path / "out"
    out.mkdir()
    target = out / f"lc1{suffix}"
    target.write_bytes(b"the sheet exported yesterday")

    def fails_half_way(sheet: Any, path: Path) -> None:
        path.write_bytes(b"half a sheet")
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(sheet_export, f"write_{suffix[1:]}", fails_half_way)
    with pytest.raises(OSError, match="No space left") as failed:
        export(yard, target)
    assert failed.value.filename == str(target)  # the file asked for, not the temporary one
    assert sorted(p.name for p in out.iterdir()) == [target.name]
    assert target.read_bytes() == b"the sheet exported yesterday"


def test_export_command_writes_each_kind_of_file(
    yard: Database, plant: PlantCli, tmp_path: Path
) -> None:
    for name in ("lc1.csv", "lc1.xlsx", "lc1.html"):
        result = plant("export", "splices", "--closure", "LC-1", "-o", str(tmp_path / name))
        assert result.exit_code == 0, result.output
        assert f"wrote {tmp_path / name}: 19 splices of LC-1" in result.stdout
    assert "<h1>Splice sheet LC-1</h1>" in (tmp_path / "lc1.html").read_text()


def test_export_command_refusals(yard: Database, plant: PlantCli, tmp_path: Path) -> None:
    wrong = plant("export", "splices", "--closure", "LC-1", "-o", str(tmp_path / "lc1.pdf"))
    assert wrong.exit_code == 1
    assert "write the splice sheet to a .csv, .xlsx or .html file" in wrong.stderr
    unknown = plant("export", "splices", "--closure", "LC-9", "-o", str(tmp_path / "x.csv"))
    assert unknown.exit_code == 1 and "no closure is labelled LC-9" in unknown.stderr
    assert not (tmp_path / "x.csv").exists()
