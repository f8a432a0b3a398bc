"""Reading splice-sheet files and strand notation, without a database.

Colour checks name ANSI/TIA-598 (seen): blue, orange, green, brown, slate, white, red, black,
yellow, violet, rose, aqua; strand = (unit - 1) x fibers per unit + position (arithmetic).
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import zipfile
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st
from openpyxl import Workbook

from plantdb.errors import PlantError
from plantdb.records import sheet_files
from plantdb.records.sheet_files import (
    COLUMNS,
    neutralise,
    read_csv_sheet,
    read_sheet,
    read_xlsx_sheet,
    sheet_from_items,
    unquote,
)
from plantdb.records.sheet_import import requests_from_sheet
from plantdb.records.splicing import end_group
from plantdb.records.strand_notation import Construction, leg_names, strand_run

HEADER = ",".join(COLUMNS)
ROW = "SC-1,1,1,C-A,13-24,,C-B,1-12,,fusion,0.04,2024-05-14,J. Crew"
LOOSE_TUBE_24x12 = Construction(units=24, fibers_per_unit=12)


def csv_sheet(*lines: str, name: str = "s.csv") -> sheet_files.Sheet:
    return read_csv_sheet("\n".join(lines).encode(), name)


# -- strand notation -------------------------------------------------------------------


def test_numbers_and_ranges() -> None:
    assert strand_run("37", LOOSE_TUBE_24x12).numbers == (37,)
    assert strand_run("13-24", LOOSE_TUBE_24x12).numbers == tuple(range(13, 25))
    assert strand_run(" 13 - 15 ", LOOSE_TUBE_24x12).numbers == (13, 14, 15)


def test_tube_and_fiber_colours_follow_tia_598() -> None:
    # TIA-598: tube 4 is brown, fiber 1 blue -> strand 37 of a 12-per-tube cable.
    assert strand_run("BR/BL", LOOSE_TUBE_24x12).numbers == (37,)
    # Tube 1 blue, fiber 2 orange -> strand 2; tube 2 orange, fiber 8 black -> strand 20.
    assert strand_run("BL/OR", LOOSE_TUBE_24x12).numbers == (2,)
    assert strand_run("or/bk", LOOSE_TUBE_24x12).numbers == (20,)
    # Tube 13 is blue with a black stripe (TIA-598 stripe rule): strands 145-156.
    assert strand_run("BL+BK/AQ", LOOSE_TUBE_24x12).numbers == (156,)
    assert strand_run("GR/BL-GR/AQ", LOOSE_TUBE_24x12).numbers == tuple(range(25, 37))


def test_whole_units_by_number_or_colour() -> None:
    assert strand_run("tube 2", LOOSE_TUBE_24x12).numbers == tuple(range(13, 25))
    run = strand_run("ribbon OR", Construction(6, 12))
    assert run.numbers == tuple(range(13, 25)) and run.whole_unit


def test_a_central_core_cable_takes_lone_fiber_colours() -> None:
    core = Construction(1, 12, has_units=False)
    assert strand_run("SL", core).numbers == (5,)
    with pytest.raises(ValueError, match="no tubes"):
        strand_run("tube 1", core)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("289", "the cable has strands 1-288, so no strand 289"),
        ("280-300", "so no strands 280-300"),
        ("24-13", "runs backwards; write 13-24"),
        ("BL/PK", "not a TIA-598 colour"),
        ("OR", "names only a fiber colour"),
        ("tube 25", "the cable has tubes 1-24, no tube 25"),
        ("", "no strand given"),
    ],
)
def test_strand_notation_refusals(text: str, message: str) -> None:
    with pytest.raises(ValueError, match=message):
        strand_run(text, LOOSE_TUBE_24x12)


def test_splitter_legs() -> None:
    assert leg_names("in") == ("in",)
    assert leg_names("IN2") == ("in2",)
    assert leg_names("1-4") == ("1", "2", "3", "4")


def test_end_groups_take_the_contract_side_suffix() -> None:
    assert end_group("F-1:5/A").side == "A" and end_group("F-1:5/A").points == "5"
    assert end_group("F-1:13-24/b").side == "B"
    assert end_group("C-A:BL/OR").side is None and end_group("C-A:BL/OR").points == "BL/OR"
    assert end_group("C-A:tube 2", "b").side == "B"
    with pytest.raises(PlantError, match="says side A, not B"):
        end_group("F-1:5/A", "B")


# -- CSV -------------------------------------------------------------------------------


def test_csv_rows_keep_their_file_line_numbers() -> None:
    sheet = csv_sheet(
        HEADER,
        ROW,
        "",
        'SC-1,1,13,C-A,25,,C-B,13,,fusion,,,"two-line\nnote"',
        "SC-1,1,14,C-A,26,,C-B,14,,,,,",
    )
    assert [row.line for row in sheet.rows] == [2, 4, 6]
    assert sheet.rows[0].get("a_strand") == "13-24"
    assert sheet.rows[1].get("spliced_by") == "two-line\nnote"
    assert sheet.problems == []


def test_columns_in_any_order_and_case_with_a_byte_order_mark() -> None:
    data = "\ufeffB_Strand,A_Strand,Closure,Tray,Slot,A_Cable,B_Cable\n2,1,SC-1,1,1,C-A,C-B\n"
    sheet = read_csv_sheet(data.encode("utf-8"))
    assert dict(sheet.rows[0].cells) == {
        "b_strand": "2", "a_strand": "1", "closure": "SC-1", "tray": "1", "slot": "1",
        "a_cable": "C-A", "b_cable": "C-B",
    }  # fmt: skip


def test_semicolon_separated_sheets_are_read() -> None:
    sheet = csv_sheet(HEADER.replace(",", ";"), ROW.replace(",", ";"))
    assert sheet.rows[0].get("loss_db") == "0.04"


def test_header_problems_are_named_on_line_1() -> None:
    sheet = csv_sheet("closure,tray,slot,a_cable,a_strnd,b_cable,b_strand,tray", ROW)
    assert sheet.problems[:3] == [
        "line 1: unknown column a_strnd",
        "line 1: repeated column tray",
        "line 1: missing column a_strand",
    ]
    assert sheet.rows == []


def test_a_value_under_no_column_is_a_problem() -> None:
    sheet = csv_sheet("closure,tray,slot,a_cable,a_strand,b_cable,b_strand", "SC-1,1,1,A,1,B,1,x")
    assert sheet.problems == ["line 2: a value ('x') under no column"]


def test_text_that_is_not_utf8_is_refused_naming_the_line() -> None:
    data = (HEADER + "\n" + ROW + "\n").encode() + "SC-1,1,2,Caf\xe9".encode("latin-1")
    with pytest.raises(PlantError, match=r"s.csv: line 3: byte 0xe9 is not UTF-8 text"):
        read_csv_sheet(data, "s.csv")


def test_binary_data_is_refused() -> None:
    with pytest.raises(PlantError, match="a NUL byte"):
        read_csv_sheet(HEADER.encode() + b"\n\x00\x01\x02")


def test_size_and_line_limits(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.setattr(sheet_files, "MAX_LINES", 3)
    with pytest.raises(PlantError, match="more than 3 lines"):
        csv_sheet(HEADER, ROW, ROW, ROW)
    monkeypatch.setattr(sheet_files, "MAX_FILE_BYTES", 100)
    big = tmp_path / "big.csv"
    big.write_text(HEADER + "\n" + ROW + "\n")
    with pytest.raises(PlantError, match=r"big.csv is \d+ bytes; sheets are limited to 100"):
        read_sheet(big)


def test_only_csv_and_xlsx_files(tmp_path: Path) -> None:
    other = tmp_path / "sheet.ods"
    other.write_bytes(b"x")
    with pytest.raises(PlantError, match=r"give a \.csv or \.xlsx splice sheet"):
        read_sheet(other)


def test_an_overlong_cell_is_a_problem() -> None:
    sheet = csv_sheet(HEADER, ROW + "x" * 2000)
    assert sheet.problems == ["line 2: spliced_by is 2007 characters long (limit 1000)"]


# The leading characters a spreadsheet may take as the start of a formula: =, +, -, @, tab
# and carriage return, after OWASP's "CSV Injection" guidance (common practice).
OWASP_FORMULA_LEADS = ("=", "+", "-", "@", "\t", "\r")
FORMULA_CELLS = ("=1+2", "+44", "-3+cmd|' /C calc'!A0", "@SUM(A1)", "\t=1+2", "\r=1+2")


def test_formula_neutralising_round_trips() -> None:
    assert set(OWASP_FORMULA_LEADS) <= set(sheet_files.FORMULA_LEADS)
    for text in FORMULA_CELLS:
        assert neutralise(text) == "'" + text, text
        assert unquote(neutralise(text)) == text
    for text in ("plain", "'quoted", "13-24", "C-A", "0.03"):
        assert neutralise(text) == text and unquote(text) == text
    assert neutralise("=HYPERLINK(x)") == "'=HYPERLINK(x)"


def test_every_formula_lead_is_neutralised_in_the_written_sheet(tmp_path: Path) -> None:
    from plantdb.records.sheet_export import write_csv
    from plantdb.records.splice_rows import ClosureSheet, RecordedEnd, RecordedSplice

    def end(label: str, number: int) -> RecordedEnd:
        return RecordedEnd(f"{label}:{number}", ("end", label, number), label, str(number))

    splices = [
        RecordedSplice(n, 1, 1, 24, n, "fusion", None, None, text, end("C-A", n), end("C-B", n))
        for n, text in enumerate(FORMULA_CELLS, start=1)
    ]
    path = tmp_path / "out.csv"
    write_csv(ClosureSheet("SC-1", "MH-1", [(1, 24)], splices, []), path)
    with path.open(newline="", encoding="utf-8") as handle:
        written = [row[COLUMNS.index("spliced_by")] for row in list(csv.reader(handle))[1:]]
    assert written == ["'" + text for text in FORMULA_CELLS]
    # ... and the import reads each back exactly as it was recorded.
    assert [row.get("spliced_by") for row in read_sheet(path).rows] == list(FORMULA_CELLS)


@given(st.text(max_size=300))
def test_any_text_is_read_or_refused_cleanly(text: str) -> None:
    try:
        sheet = read_csv_sheet((HEADER + "\n" + text).encode("utf-8"))
    except PlantError:
        return
    requests_from_sheet(sheet)  # bad cells become problems, never exceptions


# -- XLSX ------------------------------------------------------------------------------


def xlsx(path: Path, rows: list[list[object]]) -> Path:
    workbook = Workbook()
    sheet = workbook.active
    assert sheet is not None
    for row in rows:
        sheet.append(row)
    workbook.create_sheet("notes").append(["ignored"])
    workbook.save(path)
    return path


def test_the_first_sheet_of_a_workbook_is_read_as_typed(tmp_path: Path) -> None:
    path = xlsx(
        tmp_path / "s.xlsx",
        [list(COLUMNS), ["SC-1", 1, 3.0, "C-A", "BL/OR", None, "C-B", 2, "", "fusion", 0.04,
                         dt.datetime(2024, 5, 14), "J. Crew"], [], ["SC-1", 1, 4, "C-A", 3]],
    )  # fmt: skip
    sheet = read_sheet(path)
    assert [row.line for row in sheet.rows] == [2, 4]
    assert dict(sheet.rows[0].cells) == {
        "closure": "SC-1", "tray": "1", "slot": "3", "a_cable": "C-A", "a_strand": "BL/OR",
        "b_cable": "C-B", "b_strand": "2", "method": "fusion", "loss_db": "0.04",
        "spliced_on": "2024-05-14", "spliced_by": "J. Crew",
    }  # fmt: skip


def test_a_strand_cell_turned_into_a_date_is_a_problem(tmp_path: Path) -> None:
    path = xlsx(tmp_path / "s.xlsx", [list(COLUMNS), ["SC-1", 1, 1, "C-A", dt.date(2024, 1, 12)]])
    sheet = read_xlsx_sheet(path)
    assert sheet.problems == [
        "line 2: the spreadsheet turned the strand cell into a date (2024-01-12); format the"
        " strand columns as text and type it again"
    ]


def test_a_file_that_is_not_a_workbook_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "s.xlsx"
    path.write_text(HEADER)
    with pytest.raises(PlantError, match="not an XLSX workbook"):
        read_sheet(path)
    broken = tmp_path / "broken.xlsx"
    with zipfile.ZipFile(broken, "w") as archive:
        archive.writestr("hello.txt", "not a workbook")
    with pytest.raises(PlantError, match="not a readable XLSX workbook"):
        read_sheet(broken)


def test_a_compression_bomb_is_refused_before_it_is_opened(tmp_path: Path) -> None:
    path = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("xl/worksheets/sheet1.xml", b"\0" * (8 * 1024 * 1024))
    with pytest.raises(PlantError, match=r"inflates \d+ times .* compression bomb"):
        read_sheet(path)


def test_too_many_parts_or_too_much_inflated_data(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    path = tmp_path / "many.xlsx"
    with zipfile.ZipFile(path, "w") as archive:
        for n in range(12):
            archive.writestr(f"part{n}.xml", "<x/>")
    monkeypatch.setattr(sheet_files, "XLSX_MAX_MEMBERS", 10)
    with pytest.raises(PlantError, match="holds 12 parts"):
        read_sheet(path)
    monkeypatch.setattr(sheet_files, "XLSX_MAX_MEMBERS", 1000)
    monkeypatch.setattr(sheet_files, "XLSX_MAX_UNCOMPRESSED", 40)
    with pytest.raises(PlantError, match="would inflate to 48 bytes"):
        read_sheet(path)


def test_xml_entities_are_refused(tmp_path: Path) -> None:
    # A "billion laughs": defusedxml must refuse the entity declarations outright.
    good = xlsx(tmp_path / "good.xlsx", [list(COLUMNS)])
    laughs = (
        '<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY lol "lol">'
        '<!ENTITY lol2 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">]>'
        '<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
        '<sheetData><row r="1"><c r="A1" t="inlineStr"><is><t>&lol2;</t></is></c></row>'
        "</sheetData></worksheet>"
    )
    path = tmp_path / "laughs.xlsx"
    with zipfile.ZipFile(good) as source, zipfile.ZipFile(path, "w") as target:
        for item in source.infolist():
            data = source.read(item.filename)
            if item.filename == "xl/worksheets/sheet1.xml":
                data = laughs.encode()
            target.writestr(item, data)
    refusal = r"laughs\.xlsx is not a readable XLSX workbook \(EntitiesForbidden: "
    with pytest.raises(PlantError, match=refusal):
        read_sheet(path)


def test_csv_and_xlsx_of_the_same_sheet_read_alike(tmp_path: Path) -> None:
    rows = [list(COLUMNS), ROW.split(","), ["SC-1", "1", "13", "C-A", "BR/BL", "A", "C-B",
                                            "37", "", "", "", "", "'=2+3"]]  # fmt: skip
    csv_path = tmp_path / "s.csv"
    csv_path.write_text("\n".join(",".join(r) for r in rows) + "\n")
    from_csv = read_sheet(csv_path)
    from_xlsx = read_sheet(xlsx(tmp_path / "s.xlsx", [list(r) for r in rows]))
    assert [dict(r.cells) for r in from_csv.rows] == [dict(r.cells) for r in from_xlsx.rows]
    assert from_csv.rows[1].get("spliced_by") == "=2+3"


# -- JSON rows (the API) ---------------------------------------------------------------


def test_json_rows_are_named_by_their_index() -> None:
    sheet = sheet_from_items(
        [{"closure": "SC-1", "tray": 1, "slot": 2, "a_cable": "C-A", "a_strand": 3,
          "b_cable": "C-B", "b_strand": "3"}, {"closure": "SC-1", "colour": "blue"}, 7]
    )  # fmt: skip
    assert sheet.rows[0].where == "rows[0]" and sheet.rows[0].get("slot") == "2"
    assert sheet.problems == ["rows[1]: unknown keys colour", "rows[2]: expected an object with"
                              " the sheet's columns"]  # fmt: skip


def test_the_reported_problems_of_a_bad_row() -> None:
    sheet = csv_sheet(
        HEADER, "SC-1,one,1,C-A,1,C,C-B,2,,glue,1;5,2024-13-01,", ",1,1,A,1,,B,2,,,NaN,,"
    )
    _, problems = requests_from_sheet(sheet)
    assert problems == [
        "line 2: tray 'one' is not a whole number",
        "line 2: a_side 'C' is not A or B (or empty at a cable's end)",
        "line 2: method 'glue' is not one of fusion, mechanical, mass_fusion",
        "line 2: loss_db '1;5' is not a number of dB",
        "line 2: spliced_on '2024-13-01' is not an ISO date (YYYY-MM-DD)",
        "line 3: closure is empty",
        "line 3: loss_db 'NaN' is not a number of dB",
    ]


def test_a_digit_that_is_not_a_decimal_is_not_a_tray_number() -> None:
    # "²" and "①" are digits to str.isdigit, but int() refuses them: a problem, not a crash.
    sheet = csv_sheet(HEADER, "SC-1,²,1,C-A,1,,C-B,2,,,,,", "SC-1,1,①,C-A,1,,C-B,2,,,,,")
    _, problems = requests_from_sheet(sheet)
    assert problems == [
        "line 2: tray '²' is not a whole number",
        "line 3: slot '①' is not a whole number",
    ]


def test_a_decimal_comma_gets_a_hint() -> None:
    sheet = read_csv_sheet(
        (HEADER.replace(",", ";") + "\n" + ROW.replace(",", ";").replace("0.04", "0,04")).encode()
    )
    _, problems = requests_from_sheet(sheet)
    assert problems == ["line 2: loss_db '0,04' is not a number of dB (use a point for decimals)"]


def test_requests_carry_their_line() -> None:
    (request,), problems = requests_from_sheet(csv_sheet(HEADER, "", ROW))
    assert problems == [] and request.where == "line 3"
    assert (request.a.points, request.b.points, request.loss_db) == ("13-24", "1-12", 0.04)
    assert request.spliced_on == dt.date(2024, 5, 14)


def test_reading_from_memory_matches_reading_a_file(tmp_path: Path) -> None:
    path = tmp_path / "s.csv"
    path.write_bytes((HEADER + "\r\n" + ROW + "\r\n").encode())
    assert read_sheet(path).rows == read_csv_sheet(io.BytesIO(path.read_bytes()).read()).rows
