"""Splice-sheet import, on SQLite and PostgreSQL: whole sheets in, or nothing at all.

Network: `larkspur()` (tests/networks.py), closure LC-1 with 2 trays of 24, C-A:48 already
spliced to C-B:48 in tray 2 slot 24. Colour notation follows ANSI/TIA-598 (seen).
"""

from __future__ import annotations

import sys
import zipfile
from collections.abc import Callable
from io import StringIO
from pathlib import Path
from typing import Any
from unittest.mock import patch

import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st
from openpyxl import Workbook

from plantdb.cli_records import _Progress
from plantdb.db import Database, run_in_transaction
from plantdb.records import splicing
from plantdb.records.bundle import dump_bundle, load_bundle
from plantdb.records.sheet_files import COLUMNS, read_sheet
from plantdb.records.sheet_import import import_sheet
from plantdb.records.splice_edits import remove_splices
from plantdb.records.splicing import SpliceReport
from seed_data.demo_town import build_demo_bundle
from tests.conftest import PlantCli
from tests.networks import larkspur

SEED_SHEET = Path(__file__).resolve().parents[2] / "seed_data" / "demo_splice_sheet.csv"

GOOD_ROWS = [
    ["LC-1", "1", "1", "C-A", "13-24", "", "C-B", "1-12", "", "fusion", "0.03", "2024-05-14",
     "Larkspur crew"],
    ["LC-1", "1", "13", "C-T", "BL/BL-BL/AQ", "B", "C-B", "OR/BL-OR/AQ", "", "", "", "", ""],
    ["LC-1", "2", "13", "C-A", "2", "", "LS-1", "in", "", "mechanical", "0.12", "", ""],
    ["LC-1", "2", "1", "R-1", "ribbon 1", "", "R-2", "ribbon BL", "", "", "", "", ""],
]  # fmt: skip


@pytest.fixture
def yard(database: Database) -> Database:
    run_in_transaction(database, lambda s: load_bundle(s, larkspur().data))
    return database


def write_csv(path: Path, rows: list[list[str]]) -> Path:
    path.write_text("\n".join(",".join(row) for row in [list(COLUMNS), *rows]) + "\n")
    return path


def write_xlsx(path: Path, rows: list[list[str]]) -> Path:
    workbook = Workbook()
    sheet = workbook.active
    assert sheet is not None
    sheet.append(list(COLUMNS))
    for row in rows:
        sheet.append([int(c) if c.isdigit() else (c or None) for c in row])
    workbook.save(path)
    return path


def splices(database: Database) -> list[dict[str, Any]]:
    with database.read() as session:
        found = dump_bundle(session).get("splices", [])
    return sorted(found, key=lambda s: (s["closure"], s["tray"], s["slot"]))


def import_file(database: Database, path: Path, *, dry_run: bool = False) -> SpliceReport:
    sheet = read_sheet(path)
    return run_in_transaction(database, lambda s: import_sheet(s, sheet, dry_run=dry_run))


def test_a_sheet_imports_whole(yard: Database, tmp_path: Path) -> None:
    report = import_file(yard, write_csv(tmp_path / "s.csv", GOOD_ROWS))
    assert report.problems == [] and report.added == 12 + 12 + 1 + 12
    recorded = {(s["a"], s["b"]): s for s in splices(yard)}
    assert recorded[("C-A:13", "C-B:1")]["spliced_by"] == "Larkspur crew"
    # BL/BL-BL/AQ on C-T is tube 1 (blue), strands 1-12; OR/... on C-B is tube 2 (orange).
    assert recorded[("C-T:1/B", "C-B:13")]["slot"] == 13
    assert recorded[("C-A:2", "LS-1:in")]["method"] == "mechanical"
    assert recorded[("R-1:1", "R-2:1")]["method"] == "mass_fusion"


def test_colour_cells_name_strands_by_tia_598(yard: Database, tmp_path: Path) -> None:
    # TIA-598: tube 4 brown, fiber 1 blue = strand 37; tube 2 orange, fiber 8 black = 20.
    rows = [["LC-1", "1", "1", "C-A", "BR/BL", "", "C-B", "or/bk", "", "", "", "", ""]]
    import_file(yard, write_csv(tmp_path / "s.csv", rows))
    assert [(s["a"], s["b"]) for s in splices(yard) if s["tray"] == 1] == [("C-A:37", "C-B:20")]


def test_importing_the_same_sheet_again_adds_nothing_and_says_so(
    yard: Database, plant: PlantCli, tmp_path: Path
) -> None:
    path = write_csv(tmp_path / "s.csv", GOOD_ROWS)
    first = plant("import", "splices", str(path))
    assert first.exit_code == 0, first.output
    before = splices(yard)
    second = plant("import", "splices", str(path))
    assert second.exit_code == 0
    assert "already recorded identically: 37" in second.stdout
    assert "nothing added" in second.stdout
    assert splices(yard) == before


def test_a_row_that_conflicts_with_the_record_is_an_error(yard: Database, tmp_path: Path) -> None:
    rows = [
        ["LC-1", "2", "24", "C-A", "48", "", "C-B", "48", "", "", "0.05", "", ""],
        ["LC-1", "2", "23", "C-A", "48", "", "C-B", "48", "", "", "", "", ""],
        ["LC-1", "1", "1", "C-A", "47", "", "C-B", "48", "", "", "", "", ""],
    ]
    report = import_file(yard, write_csv(tmp_path / "s.csv", rows))
    assert report.problems == [
        "line 2: C-A:48 to C-B:48 in tray 2 slot 24 at LC-1 is recorded with loss 0.04 dB,"
        " not 0.05 dB",
        "line 3: C-A:48 to C-B:48 is recorded in tray 2 slot 24, not in tray 2 slot 23 at LC-1",
        "line 4: C-B:48 is already spliced to C-A:48 (tray 2 slot 24)",
    ]


def test_a_blank_cell_matches_the_record_and_a_different_one_conflicts(
    yard: Database, plant: PlantCli, tmp_path: Path
) -> None:
    first = import_file(yard, write_csv(tmp_path / "s.csv", GOOD_ROWS[:1]))
    assert first.problems == [] and first.added == 12
    # Blank method, loss, date and splicer state nothing: the row is already recorded.
    blank = ["LC-1", "1", "1", "C-A", "13-24", "", "C-B", "1-12"] + [""] * 5
    again = import_file(yard, write_csv(tmp_path / "blank.csv", [blank]))
    assert again.problems == [] and again.added == 0 and again.already_recorded == 12
    # Another date and splicer is another splice than the one recorded: a conflict, said
    # once for the row (not once per fiber), recorded value first.
    other = [*blank[:11], "2024-06-01", "Other crew"]
    conflict = import_file(yard, write_csv(tmp_path / "other.csv", [other]))
    assert conflict.problems == [
        "line 2: C-A:13-24 to C-B:1-12 in tray 1 slots 1-12 at LC-1 is recorded spliced on"
        " 2024-05-14, not 2024-06-01; spliced by 'Larkspur crew', not 'Other crew'"
    ]
    assert conflict.added == conflict.already_recorded == 0
    command = plant("import", "splices", str(tmp_path / "other.csv"))
    assert command.exit_code == 1
    assert "not 2024-06-01; spliced by 'Larkspur crew', not 'Other crew'" in command.stderr
    assert "already recorded identically" not in command.output


def test_a_range_row_in_conflict_is_one_problem_naming_its_strands(
    yard: Database, tmp_path: Path
) -> None:
    import_file(yard, write_csv(tmp_path / "s.csv", GOOD_ROWS[:2]))
    rows = [
        ["LC-1", "1", "1", "C-A", "13-24", "", "C-B", "1-12", "", "mechanical", "0.05", "", ""],
        ["LC-1", "1", "13", "C-T", "1-12", "A", "C-B", "OR/BL-OR/AQ", "", "", "", "", ""],
    ]
    report = import_file(yard, write_csv(tmp_path / "again.csv", rows))
    assert report.problems == [
        "line 2: C-A:13-24 to C-B:1-12 in tray 1 slots 1-12 at LC-1 is recorded as fusion,"
        " not mechanical; with loss 0.03 dB, not 0.05 dB",
        "line 3: C-B:13-24 is already spliced to C-T:1-12/B (tray 1 slots 13-24)",
        "line 3: tray 1 slots 13-24 at LC-1 is taken: it holds C-T:1-12/B to C-B:13-24",
    ]


def test_scattered_fibers_of_a_row_in_conflict_are_named_as_runs(
    yard: Database, tmp_path: Path
) -> None:
    earlier = [
        ["LC-1", "1", "1", "C-A", "1", "", "C-B", "1"] + [""] * 5,
        ["LC-1", "1", "3", "C-A", "3-6", "", "C-B", "3-6"] + [""] * 5,
    ]
    import_file(yard, write_csv(tmp_path / "s.csv", earlier))
    tube = [["LC-1", "2", "1", "C-A", "tube 1", "", "C-B", "tube 2"] + [""] * 5]
    report = import_file(yard, write_csv(tmp_path / "tube.csv", tube))
    assert report.problems == [
        "line 2: C-A:1, 3-6 is already spliced to C-B:1, 3-6 (tray 1 slots 1, 3-6)"
    ]


def test_a_row_with_bad_cells_is_still_checked_against_the_record(
    yard: Database, tmp_path: Path
) -> None:
    rows = [
        ["LC-1", "1", "1", "C-A", "49", "", "C-B", "1", "", "glue", "", "2024-13-01", ""],
        ["LC-1", "2", "24", "C-A", "47", "", "C-B", "47", "", "", "x", "", ""],
        ["LC-1", "1", "3", "C-A", "3", "Q", "C-B", "3", "", "", "", "", ""],
        ["LC-1", "1", "5", "C-A", "5", "", "C-B", "5", "", "", "", "2024-02-30", ""],
        ["LC-1", "1", "6", "C-A", "5", "", "C-B", "6", "", "", "", "", ""],
        ["LC-1", "1", "7", "C-A", "7", "", "C-B", "48", "", "glue", "9", "", ""],
    ]
    report = import_file(yard, write_csv(tmp_path / "s.csv", rows))
    assert report.problems == [
        "line 2: method 'glue' is not one of fusion, mechanical, mass_fusion",
        "line 2: spliced_on '2024-13-01' is not an ISO date (YYYY-MM-DD)",
        "line 2: C-A:49: the cable has strands 1-48, so no strand 49",
        "line 3: loss_db 'x' is not a number of dB",
        "line 3: tray 2 slot 24 at LC-1 is taken: it holds C-A:48 to C-B:48",
        # A side that cannot be read leaves the row's ends unknown: nothing to check them by.
        "line 4: a_side 'Q' is not A or B (or empty at a cable's end)",
        "line 5: spliced_on '2024-02-30' is not an ISO date (YYYY-MM-DD)",
        # The row with a bad date still claims its ends: the next row may not reuse them.
        "line 6: C-A:5 is already spliced on line 5",
        "line 7: method 'glue' is not one of fusion, mechanical, mass_fusion",
        "line 7: loss_db 9 dB is not a splice loss (0 to 5 dB; above that it is a typo or a"
        " misread meter)",
        "line 7: C-B:48 is already spliced to C-A:48 (tray 2 slot 24)",
    ]
    assert report.added == 0 and report.splices == [] and report.warnings == []
    assert len(splices(yard)) == 1


def test_every_bad_line_is_reported_and_nothing_is_written(
    yard: Database, plant: PlantCli, tmp_path: Path
) -> None:
    rows = [
        GOOD_ROWS[0],
        ["LC-1", "1", "13", "C-A", "49", "", "C-B", "13", "", "", "", "", ""],
        ["LC-1", "1", "14", "C-X", "1", "", "C-B", "14", "", "", "", "", ""],
        ["LC-1", "9", "1", "C-A", "30", "", "C-B", "30", "", "", "", "", ""],
        ["LC-1", "1", "15", "C-A", "31-33", "", "C-B", "31-32", "", "", "", "", ""],
        ["LC-1", "1", "16", "C-A", "34", "", "C-B", "34", "", "", "7.5", "", ""],
        ["LC-1", "one", "17", "C-A", "35", "Q", "C-B", "35", "", "", "", "", ""],
        ["LC-1", "1", "2", "C-A", "36", "", "C-B", "36", "", "", "", "", ""],
        GOOD_ROWS[2],
    ]
    result = plant("import", "splices", str(write_csv(tmp_path / "bad.csv", rows)))
    assert result.exit_code == 1
    lines = result.stderr.splitlines()
    assert lines[0] == ("plantdb: splice sheet bad.csv refused, nothing was written: 8 problems")
    assert [line.split(":")[0].strip() for line in lines[1:9]] == [
        "line 3", "line 4", "line 5", "line 6", "line 7", "line 8", "line 8", "line 9",
    ]  # fmt: skip
    assert "line 9: tray 1 slot 2 at LC-1 is already used on line 2" in result.stderr
    assert "line 7: loss_db 7.5 dB is not a splice loss" in result.stderr
    assert len(splices(yard)) == 1


def test_dry_run_prints_the_report_and_writes_nothing(
    yard: Database, plant: PlantCli, tmp_path: Path
) -> None:
    result = plant("import", "splices", str(write_csv(tmp_path / "s.csv", GOOD_ROWS)), "--dry-run")
    assert result.exit_code == 0
    assert "would add 37 splices" in result.stdout
    # C-T passes through LC-1 from LK-P1 (its A end) to LK-P3 (its B end): side B runs there.
    assert "LC-1 tray 1 slot 13: C-T:1/B (toward LK-P3) to C-B:13 (fusion)" in result.stdout
    assert len(splices(yard)) == 1


def test_json_report_of_an_import(yard: Database, plant: PlantCli, tmp_path: Path) -> None:
    document = plant.json("import", "splices", str(write_csv(tmp_path / "s.csv", GOOD_ROWS[:1])))
    assert document["added"] == 12 and document["rows"] == 1 and document["problems"] == []
    assert document["warnings"] == [
        "line 2: colour change: C-A:13 (orange/blue) to C-B:1 (blue/blue) by the TIA-598"
        " colour code (and 11 more on this row)"
    ]


def test_csv_and_xlsx_of_the_same_sheet_give_the_same_record(
    yard: Database, tmp_path: Path
) -> None:
    from_csv = import_file(yard, write_csv(tmp_path / "s.csv", GOOD_ROWS))
    record_from_csv = splices(yard)
    for tray, slots in ((1, range(1, 25)), (2, range(1, 14))):
        run_in_transaction(yard, lambda s, t=tray, n=slots: remove_splices(s, "LC-1", t, list(n)))
    from_xlsx = import_file(yard, write_xlsx(tmp_path / "s.xlsx", GOOD_ROWS))
    assert from_csv.added == from_xlsx.added == 37
    assert splices(yard) == record_from_csv


def test_a_hostile_workbook_is_refused_cleanly(plant: PlantCli, tmp_path: Path) -> None:
    bomb = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(bomb, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("xl/worksheets/sheet1.xml", b"<" * (16 * 1024 * 1024))
    result = plant("import", "splices", str(bomb))
    assert result.exit_code == 1
    assert "refused as a compression bomb" in result.stderr
    assert "Traceback" not in result.output


def test_the_example_sheet_imports_cleanly_into_the_demo_town(database: Database) -> None:
    run_in_transaction(database, lambda s: load_bundle(s, build_demo_bundle()))
    report = import_file(database, SEED_SHEET)
    assert report.problems == [] and report.warnings == []
    assert report.added == 12 and report.cuts == 12
    assert report.splices[0]["a"] == "QM-F288:25/B" and report.splices[0]["b"] == "QM-R72A:25"


# -- never half a sheet ------------------------------------------------------------------

_ENDS = st.sampled_from(["C-A", "C-B", "C-T", "M-1", "D-1", "C-X", "R-2", "LS-1", "NONE"])
_POINTS = st.one_of(
    st.integers(0, 50).map(str),
    st.tuples(st.integers(1, 48), st.integers(0, 14)).map(lambda t: f"{t[0]}-{t[0] + t[1]}"),
    st.sampled_from(["BL/OR", "OR/BL-OR/AQ", "tube 2", "in", "1-3", "xx"]),
)
_ROW = st.tuples(
    st.sampled_from(["LC-1", "LC-1", "LC-1", "LC-2"]),
    st.integers(1, 3).map(str),
    st.integers(0, 26).map(str),
    _ENDS,
    _POINTS,
    st.sampled_from(["", "", "A", "B"]),
    _ENDS,
    _POINTS,
    st.sampled_from(["", "", "A", "B"]),
    st.sampled_from(["", "fusion", "mass_fusion", "glue"]),
    st.sampled_from(["", "0.02", "0.45", "-1", "9"]),
    st.just(""),
    st.just(""),
).map(list)


# Rows that are often right, so generated sheets are imported as well as refused.
_LIKELY_ROW = st.integers(1, 47).map(
    lambda n: (
        ["LC-1", str(1 + n // 24), str(1 + n % 24), "C-A", str(n), "", "C-B", str(n)] + [""] * 5
    )
)


# The generated cells that name several fibers, by ANSI/TIA-598 (seen: blue 1, orange 2,
# aqua 12) in larkspur's cables of 12 fibers a unit: BL/OR is tube 1 fiber 2, OR/... and
# tube 2 are strands 13-24. Worked out here, not by the import's own notation reader.
_FIBERS_OF_CELL = {"BL/OR": [2], "OR/BL-OR/AQ": list(range(13, 25)), "tube 2": list(range(13, 25))}


# C-T passes through LC-1 and LC-2, so its ends there carry a side; every other cable ends
# in the closure it is spliced in, where a side (if accepted) is its end's own and unwritten.
_MID_SPAN = {"C-T"}


def _asked_for(row: list[str]) -> list[tuple[str, frozenset[str], int, int]]:
    """The fiber splices a row asks for: (closure, its two end addresses, tray, slot)."""
    closure, tray, slot, a_cable, a_cell, a_side, b_cable, b_cell, b_side = row[:9]

    def addresses(cable: str, cell: str, side: str) -> list[str]:
        points: list[int | str]
        if cell in _FIBERS_OF_CELL:
            points = list(_FIBERS_OF_CELL[cell])
        elif "-" in cell:
            first, last = (int(n) for n in cell.split("-"))
            points = list(range(first, last + 1))
        else:
            points = [cell]  # one strand number, or a splitter leg's name
        suffix = f"/{side}" if cable in _MID_SPAN else ""
        return [f"{cable}:{point}{suffix}" for point in points]

    # An imported row named as many fibers on each side (else it is refused): strict.
    pairs = zip(addresses(a_cable, a_cell, a_side), addresses(b_cable, b_cell, b_side), strict=True)
    return [(closure, frozenset(pair), int(tray), int(slot) + i) for i, pair in enumerate(pairs)]


@settings(
    max_examples=25,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
@given(rows=st.lists(st.one_of(_ROW, _LIKELY_ROW), min_size=1, max_size=6))
@pytest.mark.parametrize("writer", [write_csv, write_xlsx], ids=["csv", "xlsx"])
def test_any_sheet_is_imported_whole_or_refused_whole(
    yard: Database,
    tmp_path: Path,
    writer: Callable[[Path, list[list[str]]], Path],
    rows: list[list[str]],
) -> None:
    before = splices(yard)
    suffix = "csv" if writer is write_csv else "xlsx"
    report = import_file(yard, writer(tmp_path / f"p.{suffix}", rows))
    after = splices(yard)
    event("refused" if report.problems else "imported")
    if report.problems:
        assert after == before and report.added == 0
        return
    assert len(after) == len(before) + report.added
    assert all(s in after for s in before)
    # Every fiber splice the sheet asks for is now in the record: added, or already there.
    asked = [splice for row in rows for splice in _asked_for(row)]
    assert report.added + report.already_recorded == len(asked)
    record = {(s["closure"], frozenset((s["a"], s["b"])), s["tray"], s["slot"]) for s in after}
    assert [splice for splice in asked if splice not in record] == []


@settings(
    max_examples=25,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
@given(rows=st.lists(st.one_of(_ROW, _LIKELY_ROW), min_size=1, max_size=8))
def test_looking_everything_up_up_front_changes_no_answer(
    yard: Database, tmp_path: Path, rows: list[list[str]]
) -> None:
    """A big sheet's closures and cables are looked up together before the rows are checked
    (`PREFETCH_REQUESTS`); the report must be exactly the one the lazy lookups give."""
    sheet = read_sheet(write_csv(tmp_path / "q.csv", rows))

    def report(threshold: int) -> SpliceReport:
        with patch.object(splicing, "PREFETCH_REQUESTS", threshold):
            return run_in_transaction(yard, lambda s: import_sheet(s, sheet, dry_run=True))

    assert report(1) == report(10**9)


# -- the progress bar ----------------------------------------------------------------------


class _Terminal(StringIO):
    """Standard error as a terminal shows it (isatty), caught to read back."""

    def isatty(self) -> bool:
        return True


def test_the_progress_bar_shows_on_a_terminal(monkeypatch: pytest.MonkeyPatch) -> None:
    terminal = _Terminal()
    monkeypatch.setattr(sys, "stderr", terminal)
    progress = _Progress(2500)
    progress(1000)
    progress.restart()  # a retried transaction checks the sheet again from the start
    progress(1000)
    progress(1500)
    progress.close()
    shown = terminal.getvalue()
    assert "checking" in shown and "2500/2500" in shown


def test_no_progress_bar_when_standard_error_is_not_a_terminal(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    piped = StringIO()  # a file or a pipe: isatty() is False
    monkeypatch.setattr(sys, "stderr", piped)
    progress = _Progress(2500)
    progress(2500)
    progress.close()
    assert progress.bar is None and piped.getvalue() == ""
