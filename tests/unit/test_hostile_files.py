"""Hostile files without a database: splice sheets (random bytes, random CSV, random cells, wrong
encodings, huge cells, odd workbooks) and bundles (random JSON, mutations of a valid one). Every
input is read or refused with a `PlantError` naming where; nothing else ever escapes."""

from __future__ import annotations

import csv
import functools
import io
import json
import re
import tempfile
import zipfile
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from openpyxl import Workbook

from plantdb.errors import PlantError
from plantdb.records.bundle import read_bundle_file
from plantdb.records.bundle_schema import check_shape
from plantdb.records.sheet_files import (
    COLUMNS,
    MAX_CELL_CHARS,
    Sheet,
    read_csv_sheet,
    read_sheet,
    sheet_from_items,
)
from plantdb.records.sheet_import import requests_from_sheet
from tests.mutations import JSON, SCALARS, labels_of, mutations
from tests.networks import ashgrove

FUZZ = settings(
    max_examples=150,
    derandomize=True,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
HEADER = ",".join(COLUMNS)


def checked(sheet: Sheet) -> None:
    """Turning a sheet's rows into requests never raises; every problem names its place."""
    _requests, problems = requests_from_sheet(sheet)
    assert all(p.startswith(("line ", "rows")) for p in problems), problems


def read_or_refuse(data: bytes, name: str = "s.csv") -> Sheet | None:
    try:
        sheet = read_csv_sheet(data, name)
    except PlantError as exc:
        assert exc.message.startswith(name), exc.message
        return None
    checked(sheet)
    return sheet


# -- splice sheets: CSV ----------------------------------------------------------------------------


@FUZZ
@given(st.binary(max_size=400))
def test_any_bytes_are_read_or_refused(data: bytes) -> None:
    read_or_refuse(data)
    read_or_refuse(HEADER.encode() + b"\n" + data)


_CELLS = st.text(max_size=12) | st.sampled_from(
    ["", '"', '""', "a,b", "x\ny", "\r", "=1+2", "'=1", "1-4", "BL/OR", "ЖЖ", "\u202e", "1e9"]
)


@FUZZ
@given(
    header=st.permutations(COLUMNS).map(list),
    case=st.sampled_from([str.lower, str.upper, str.title]),
    rows=st.lists(st.lists(_CELLS, max_size=len(COLUMNS) + 2), max_size=6),
    delimiter=st.sampled_from([",", ";"]),
)
def test_any_cells_in_a_proper_csv_are_read_or_refused(
    header: list[str], case: Any, rows: list[list[str]], delimiter: str
) -> None:
    text = io.StringIO()
    writer = csv.writer(text, delimiter=delimiter)
    writer.writerows([[case(c) for c in header], *rows])
    read_or_refuse(text.getvalue().encode())


@FUZZ
@given(items=JSON | st.lists(st.dictionaries(st.sampled_from([*COLUMNS, "x"]), SCALARS)))
def test_any_json_rows_are_read_or_refused(items: Any) -> None:
    try:
        sheet = sheet_from_items(items, "rows")
    except PlantError as exc:
        assert exc.message.startswith("rows"), exc.message
        return
    checked(sheet)


@pytest.mark.parametrize(
    ("encoding", "words"),
    [
        ("utf-16", 'line 1: the text is UTF-16 (a spreadsheet\'s "Unicode text")'),
        ("utf-32", "line 1: the text is UTF-32"),
        ("utf-16-le", "line 1: a NUL byte; this is not a text (CSV) file"),  # no mark to go by
        ("latin-1", "line 2: byte 0xe9 is not UTF-8 text"),
        ("cp1252", "line 2: byte 0x93 is not UTF-8 text"),
        ("shift_jis", "line 2: byte 0x81 is not UTF-8 text"),
    ],
)
def test_text_in_another_encoding_is_refused_naming_the_line(encoding: str, words: str) -> None:
    text = HEADER + "\nSC-1,1,1,C-A,1,,C-B,1,,fusion,,,\u201cRen\u00e9\u201d \u5de5\u4e8b\n"
    data = text.encode(encoding, errors="ignore")
    with pytest.raises(PlantError, match="^" + re.escape(f"s.csv: {words}")):
        read_csv_sheet(data, "s.csv")
    assert read_csv_sheet(text.encode("utf-8-sig"), "s.csv").rows[0].get("spliced_by")


def test_huge_cells_are_problems_or_refusals() -> None:
    long_cell = "x" * (MAX_CELL_CHARS * 5)
    sheet = read_csv_sheet(f"{HEADER}\nSC-1,1,1,C-A,1,,C-B,1,,,,,{long_cell}\n".encode())
    assert sheet.problems == [
        f"line 2: spliced_by is {len(long_cell)} characters long (limit 1000)"
    ]
    # Past the CSV reader's own field limit (128 KiB) the file is refused outright.
    huge = f'{HEADER}\nSC-1,1,1,C-A,1,,C-B,1,,,,,"{"y" * 300_000}"\n'.encode()
    with pytest.raises(PlantError, match=r"^s.csv: line 2: not readable CSV \(field larger"):
        read_csv_sheet(huge, "s.csv")
    # A row of many cells past the header's columns: each is named, nothing else happens.
    wide = read_csv_sheet(f"{HEADER}\nSC-1{',z' * 20}\n".encode())
    assert len(wide.problems) == 20 - (len(COLUMNS) - 1)
    assert wide.problems[0] == "line 2: a value ('z') under no column"


# -- splice sheets: XLSX ---------------------------------------------------------------------------

_MAIN = 'xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"'
_HEADER_XML = "".join(
    f'<c r="{chr(65 + i)}1" t="inlineStr"><is><t>{c}</t></is></c>' for i, c in enumerate(COLUMNS)
)


def workbook(folder: Path) -> Path:
    path = folder / "good.xlsx"
    book = Workbook()
    sheet = book.active
    assert sheet is not None
    sheet.append(list(COLUMNS))
    book.save(path)
    return path


def with_sheet_xml(folder: Path, name: str, rows_xml: str, tail: str = "") -> Path:
    """A copy of a good workbook whose first sheet holds the header and then `rows_xml`."""
    xml = f'<worksheet {_MAIN}><sheetData><row r="1">{_HEADER_XML}</row>{rows_xml}</sheetData>'
    xml += f"{tail}</worksheet>"
    path = folder / name
    with zipfile.ZipFile(workbook(folder)) as source, zipfile.ZipFile(path, "w") as target:
        for item in source.infolist():
            data = source.read(item.filename)
            if item.filename == "xl/worksheets/sheet1.xml":
                data = xml.encode()
            target.writestr(item.filename, data, zipfile.ZIP_DEFLATED)
    return path


def test_a_cell_on_the_last_row_is_refused_not_padded(tmp_path: Path) -> None:
    far = '<row r="1048576"><c r="A1048576" t="inlineStr"><is><t>x</t></is></c></row>'
    path = with_sheet_xml(tmp_path, "far.xlsx", far)
    assert path.stat().st_size < 10_000  # a tiny file...
    with pytest.raises(PlantError, match=r"^far\.xlsx has more than 500000 lines; split the sheet"):
        read_sheet(path)  # ...whose half a million empty rows are skipped, then refused


@pytest.mark.parametrize(
    "rows_xml",
    [
        '<row r="2"><c r="!!" t="inlineStr"><is><t>x</t></is></c></row>',
        '<row r="-5"><c r="A-5"><v>1</v></c></row>',
        '<row r="2"><c r="B2" t="d"><v>not a date</v></c></row>',
        '<row r="2"><c r="E2" t="s"><v>99</v></c></row>',
        '<row r="2"><c r="A2"><v>1e999999</v></c><c r="B2" t="b"><v>7</v></c></row>',
        '<row r="2"><c r="A2" t="e"><v>#REF!</v></c><c r="B2" t="str"><f>1/0</f></c></row>',
    ],
)
def test_malformed_cells_are_read_or_refused(tmp_path: Path, rows_xml: str) -> None:
    path = with_sheet_xml(tmp_path, "odd.xlsx", rows_xml)
    try:
        sheet = read_sheet(path)
    except PlantError as exc:
        assert exc.message.startswith("odd.xlsx"), exc.message
        return
    checked(sheet)  # read: its cells still become problems, never exceptions


def test_deeply_nested_xml_is_read_or_refused(tmp_path: Path) -> None:
    deep = "<x>" * 50_000 + "</x>" * 50_000
    path = with_sheet_xml(tmp_path, "deep.xlsx", "", tail=deep)
    try:
        sheet = read_sheet(path)
    except PlantError as exc:
        assert exc.message.startswith("deep.xlsx"), exc.message
        return
    assert sheet.rows == []


def test_a_huge_cell_in_a_workbook_is_a_problem(tmp_path: Path) -> None:
    cell = f'<row r="2"><c r="M2" t="inlineStr"><is><t>{"w" * 50_000}</t></is></c></row>'
    sheet = read_sheet(with_sheet_xml(tmp_path, "wide.xlsx", cell))
    assert sheet.problems == ["line 2: spliced_by is 50000 characters long (limit 1000)"]


def test_a_workbook_nested_in_zips_is_refused(tmp_path: Path) -> None:
    data = workbook(tmp_path).read_bytes()
    for _ in range(20):
        buffer = io.BytesIO()
        with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
            archive.writestr("inner.xlsx", data)
        data = buffer.getvalue()
    path = tmp_path / "nested.xlsx"
    path.write_bytes(data)
    with pytest.raises(PlantError, match=r"^nested\.xlsx is not a readable XLSX workbook"):
        read_sheet(path)


@functools.cache
def good_workbook() -> bytes:
    with tempfile.TemporaryDirectory() as folder:
        return workbook(Path(folder)).read_bytes()


@settings(max_examples=60, derandomize=True, deadline=None)
@given(
    flips=st.lists(st.tuples(st.integers(0, 10**6), st.integers(0, 255)), min_size=1, max_size=8)
)
def test_a_damaged_workbook_is_read_or_refused(
    tmp_path_factory: pytest.TempPathFactory, flips: list[tuple[int, int]]
) -> None:
    damaged = bytearray(good_workbook())
    for where, byte in flips:
        damaged[where % len(damaged)] = byte
    path = tmp_path_factory.mktemp("damaged") / "damaged.xlsx"
    path.write_bytes(bytes(damaged))
    try:
        sheet = read_sheet(path)
    except PlantError as exc:
        assert exc.message.startswith("damaged.xlsx"), exc.message
        return
    checked(sheet)


# -- bundles ---------------------------------------------------------------------------------------

VALID = ashgrove().data
LABELS = labels_of(VALID)


def shape_problems(data: Any) -> list[str]:
    problems = check_shape(data)
    assert isinstance(problems, list) and all(isinstance(p, str) for p in problems)
    return problems


@FUZZ
@given(data=JSON)
def test_any_json_is_checked_without_an_exception(data: Any) -> None:
    assert shape_problems(data)  # nothing random is a bundle


@FUZZ
@given(data=mutations(VALID, LABELS))
def test_any_mutation_of_a_bundle_is_checked_without_an_exception(data: Any) -> None:
    for problem in shape_problems(data):
        assert ": " in problem, problem  # each names its path


@FUZZ
@given(raw=st.binary(max_size=300) | JSON.map(lambda d: json.dumps(d).encode()))
def test_any_file_is_read_or_refused(tmp_path_factory: pytest.TempPathFactory, raw: bytes) -> None:
    path = tmp_path_factory.mktemp("bundle") / "b.json"
    path.write_bytes(raw)
    try:
        read_bundle_file(path)
    except PlantError as exc:
        assert exc.message.startswith("bundle not loaded:"), exc.message


def test_nul_characters_are_refused_by_name() -> None:
    sheet = sheet_from_items([{"closure": "SC\x00-1", "tray": 1}], "rows")
    assert sheet.problems == ["rows[0]: closure holds a NUL character"] and sheet.rows == []
    bundle = {**VALID, "structures": [{**VALID["structures"][0], "label": "AG\x00CO"}]}
    assert "structures[0].label: text holds a NUL character" in check_shape(bundle)
