"""Reading splice-sheet files: CSV, or the first sheet of an XLSX workbook, into `SheetRow`s.

A sheet is a header row naming the columns (any order, any letter case), then one splice or
one range of splices per row. Every row keeps its file line number (the header is line 1) so
each problem can be named where the clerk will find it.

Files come from outside, so each is treated as hostile until checked: a size limit and a row
limit; text must be UTF-8; an XLSX is opened only after its zip directory has been checked
(member count, uncompressed size, compression ratio: a "zip bomb" is refused before a byte of
it is inflated), and openpyxl parses it with defusedxml in place (no entity expansion).
Cells a spreadsheet would read as a formula are neutralised on export with a leading "'",
which is taken off again here so an exported sheet imports back to the same record.
"""

from __future__ import annotations

import codecs
import csv
import datetime as dt
import io
import math
import zipfile
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, BinaryIO

from plantdb.bulk import collector_paused
from plantdb.errors import PlantError

COLUMNS = (
    "closure",
    "tray",
    "slot",
    "a_cable",
    "a_strand",
    "a_side",
    "b_cable",
    "b_strand",
    "b_side",
    "method",
    "loss_db",
    "spliced_on",
    "spliced_by",
)
REQUIRED = ("closure", "tray", "slot", "a_cable", "a_strand", "b_cable", "b_strand")
STRAND_COLUMNS = ("a_strand", "b_strand")

# Limits against hostile or mistaken files. A closure holds at most a few thousand splices and
# a whole city's re-import a few hundred thousand, so these leave room for real sheets only.
MAX_FILE_BYTES = 64 * 1024 * 1024
MAX_LINES = 500_000
MAX_CELL_CHARS = 1_000
MAX_COLUMNS = 64  # cells past this column of an XLSX row are not read
XLSX_MAX_MEMBERS = 1_000
XLSX_MAX_UNCOMPRESSED = 1024 * 1024 * 1024
# Spreadsheet XML compresses 10-30 times; a member inflating 200 times is built to explode.
XLSX_MAX_RATIO = 200
XLSX_RATIO_FLOOR = 1024 * 1024  # small members may compress well without harm
# What a spreadsheet takes for a formula (OWASP "CSV injection"): =, +, -, @, and tab or CR.
FORMULA_LEADS = ("=", "+", "-", "@", "\t", "\r")


# Slots, not frozen (read-only all the same): a big sheet makes one per line, and a frozen
# dataclass's __init__ sets each field through object.__setattr__.
@dataclass(slots=True)
class SheetRow:
    """One row of a sheet: its cells by column name (stripped text, "" when empty)."""

    line: int
    cells: Mapping[str, str]
    where: str = ""

    def __post_init__(self) -> None:
        if not self.where:
            self.where = f"line {self.line}"

    def get(self, column: str) -> str:
        return self.cells.get(column, "")


@dataclass
class Sheet:
    """A sheet read from a file: its rows, and the problems found reading them."""

    name: str
    rows: list[SheetRow] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)


def unquote(text: str) -> str:
    """Take off the "'" that neutralises a formula-like cell (see `neutralise`)."""
    if len(text) > 1 and text[0] == "'" and text[1] in FORMULA_LEADS:
        return text[1:]
    return text


def neutralise(text: str) -> str:
    """A cell a spreadsheet will not run as a formula: a leading "'" before =, +, -, @."""
    return "'" + text if text.startswith(FORMULA_LEADS) else text


def _header(cells: list[str], sheet: Sheet) -> list[str | None] | None:
    """Column name per position; None (with problems) when the header is unusable."""
    names = [c.strip().lower() for c in cells]
    unknown = [n for n in names if n and n not in COLUMNS]
    repeated = sorted({n for n in names if n and names.count(n) > 1})
    missing = [c for c in REQUIRED if c not in names]
    for what, found in (("unknown", unknown), ("repeated", repeated), ("missing", missing)):
        if found:
            plural = "s" if len(found) > 1 else ""
            sheet.problems.append(f"line 1: {what} column{plural} {', '.join(found)}")
    if unknown or repeated or missing:
        sheet.problems.append("line 1: the header names the columns " + ",".join(COLUMNS))
        return None
    return [n or None for n in names]


def _cell_problem(name: str, text: str) -> str | None:
    """What is wrong with a cell's text whatever its column, or None."""
    if len(text) > MAX_CELL_CHARS:
        return f"{name} is {len(text)} characters long (limit {MAX_CELL_CHARS})"
    if "\x00" in text:
        # JSON rows can carry one ("\u0000"); PostgreSQL cannot even compare text with it.
        return f"{name} holds a NUL character"
    return None


def _row(line: int, cells: list[str], header: list[str | None], sheet: Sheet) -> None:
    values: dict[str, str] = {}
    width = len(header)
    for i, raw in enumerate(cells):
        text = raw.strip()
        if not text:
            continue
        name = header[i] if i < width else None
        if name is None:
            sheet.problems.append(f"line {line}: a value ({text[:20]!r}) under no column")
            continue
        if len(text) > MAX_CELL_CHARS or "\x00" in text:
            sheet.problems.append(f"line {line}: {_cell_problem(name, text)}")
            continue
        values[name] = unquote(text) if text[0] == "'" else text
    if values:
        sheet.rows.append(SheetRow(line, values))


def _fill(sheet: Sheet, records: Iterable[tuple[int, list[str]]]) -> Sheet:
    with collector_paused():
        return _fill_rows(sheet, records)


def _fill_rows(sheet: Sheet, records: Iterable[tuple[int, list[str]]]) -> Sheet:
    header: list[str | None] | None = None
    for line, cells in records:
        if line > MAX_LINES:
            raise PlantError(f"{sheet.name} has more than {MAX_LINES} lines; split the sheet")
        if header is None:
            if line != 1 or not any(c.strip() for c in cells):
                raise PlantError(f"{sheet.name}: line 1 must be the header row")
            header = _header(cells, sheet)
            if header is None:
                return sheet
            continue
        _row(line, cells, header, sheet)
    if header is None:
        raise PlantError(f"{sheet.name} is empty: no header row")
    return sheet


# -- CSV ---------------------------------------------------------------------------------


# Byte order marks of the wide encodings a spreadsheet's "Unicode text" export writes (UTF-32
# first: its little-endian mark begins with UTF-16's).
_WIDE_MARKS = (
    (codecs.BOM_UTF32_LE, "utf-32"),
    (codecs.BOM_UTF32_BE, "utf-32"),
    (codecs.BOM_UTF16_LE, "utf-16"),
    (codecs.BOM_UTF16_BE, "utf-16"),
)


def _refuse_wide_text(data: bytes, name: str) -> None:
    """Name the encoding of UTF-16 or UTF-32 text (its NUL bytes would say only "binary")."""
    for mark, encoding in _WIDE_MARKS:
        if data.startswith(mark):
            try:
                data.decode(encoding)
            except UnicodeDecodeError:
                return  # a mark, then junk: not text at all
            raise PlantError(
                f"{name}: line 1: the text is {encoding.upper()} (a spreadsheet's"
                ' "Unicode text"); save the sheet as "CSV UTF-8"'
            )


def _decode(data: bytes, name: str) -> str:
    _refuse_wide_text(data, name)
    if b"\x00" in data:
        line = data[: data.index(b"\x00")].count(b"\n") + 1
        raise PlantError(f"{name}: line {line}: a NUL byte; this is not a text (CSV) file")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise PlantError(
            f"{name}: line {line}: byte 0x{data[exc.start]:02x} is not UTF-8 text;"
            ' save the sheet as "CSV UTF-8"'
        ) from None


def _csv_records(text: str, name: str) -> Iterator[tuple[int, list[str]]]:
    first = text.split("\n", 1)[0]
    # Spreadsheets set to a decimal comma write ';' between cells.
    delimiter = ";" if ";" in first and "," not in first else ","
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=True)
    previous = 0
    while True:
        try:
            record = next(reader)
        except StopIteration:
            return
        except csv.Error as exc:
            raise PlantError(f"{name}: line {previous + 1}: not readable CSV ({exc})") from None
        line, previous = previous + 1, reader.line_num
        yield line, record


def read_csv_sheet(data: bytes, name: str = "sheet.csv") -> Sheet:
    """A sheet from the bytes of a CSV file (UTF-8, with or without a byte-order mark)."""
    if len(data) > MAX_FILE_BYTES:
        raise PlantError(f"{name} is {len(data)} bytes; sheets are limited to {MAX_FILE_BYTES}")
    text = _decode(data, name)
    return _fill(Sheet(name), _csv_records(text, name))


# -- XLSX --------------------------------------------------------------------------------


def check_xlsx_archive(path: Path) -> None:
    """Refuse an XLSX whose zip directory promises too much: members, size, or ratio."""
    try:
        with zipfile.ZipFile(path) as archive:
            members = archive.infolist()
    except zipfile.BadZipFile:
        raise PlantError(f"{path.name} is not an XLSX workbook (not a zip archive)") from None
    if len(members) > XLSX_MAX_MEMBERS:
        raise PlantError(
            f"{path.name} holds {len(members)} parts; a workbook has far fewer"
            f" (limit {XLSX_MAX_MEMBERS})"
        )
    total = sum(m.file_size for m in members)
    if total > XLSX_MAX_UNCOMPRESSED:
        raise PlantError(
            f"{path.name} would inflate to {total} bytes (limit {XLSX_MAX_UNCOMPRESSED})"
        )
    for member in members:
        ratio = member.file_size / max(member.compress_size, 1)
        if member.file_size > XLSX_RATIO_FLOOR and ratio > XLSX_MAX_RATIO:
            raise PlantError(
                f"{path.name}: part {member.filename} inflates {ratio:.0f} times"
                f" (limit {XLSX_MAX_RATIO}); refused as a compression bomb"
            )


def _cell_text(value: Any) -> str:
    """A cell's value as the text a clerk typed: 3 not 3.0, dates as ISO dates."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, float):
        if math.isfinite(value) and value.is_integer():
            return str(int(value))
        return repr(value)
    if isinstance(value, dt.datetime):
        return value.date().isoformat() if value.time() == dt.time() else value.isoformat()
    if isinstance(value, dt.date | dt.time):
        return value.isoformat()
    return str(value)


def _xlsx_records(rows: Iterable[tuple[Any, ...]], sheet: Sheet) -> Iterator[tuple[int, list[str]]]:
    strand_positions: set[int] = set()
    for line, values in enumerate(rows, start=1):
        if values.count(None) == len(values):
            # The reader pads every gap with empty rows: a few hundred bytes naming a cell on
            # row 1,048,576 would otherwise cost seconds of converting nothing per upload.
            yield line, []
            continue
        cells = [_cell_text(v) for v in values]
        if line == 1:
            names = [c.strip().lower() for c in cells]
            strand_positions = {i for i, n in enumerate(names) if n in STRAND_COLUMNS}
        for i in strand_positions:
            if i < len(values) and isinstance(values[i], dt.date | dt.time):
                sheet.problems.append(
                    f"line {line}: the spreadsheet turned the strand cell into a date"
                    f" ({cells[i]}); format the strand columns as text and type it again"
                )
                cells[i] = ""
        yield line, cells


def _reason(exc: BaseException) -> str:
    """The innermost cause of a reader's failure, on one line."""
    while exc.__cause__ is not None or exc.__context__ is not None:
        exc = exc.__cause__ or exc.__context__  # type: ignore[assignment]
    text = str(exc).strip().splitlines()
    return f"{type(exc).__name__}: {text[0]}" if text else type(exc).__name__


def _first_sheet(handle: BinaryIO, sheet: Sheet) -> Sheet:
    from openpyxl import load_workbook

    try:
        workbook = load_workbook(handle, read_only=True, data_only=True)
    except Exception as exc:  # noqa: BLE001 - any failure of a hostile file is a refusal
        raise PlantError(f"{sheet.name} is not a readable XLSX workbook ({_reason(exc)})") from None
    try:
        first = workbook.worksheets[0]
        first.reset_dimensions()  # a forged dimension must not make the reader pad rows
        rows = first.iter_rows(min_row=1, max_col=MAX_COLUMNS, values_only=True)
        return _fill(sheet, _xlsx_records(rows, sheet))
    except PlantError:
        raise
    except Exception as exc:  # noqa: BLE001 - any failure of a hostile file is a refusal
        raise PlantError(
            f"{sheet.name}: the first sheet is not readable ({_reason(exc)})"
        ) from None
    finally:
        workbook.close()


def read_xlsx_sheet(path: Path) -> Sheet:
    """A sheet from the first worksheet of an XLSX workbook, after the archive checks."""
    from openpyxl.xml import DEFUSEDXML

    if not DEFUSEDXML:  # without it openpyxl would expand XML entities (a "billion laughs")
        raise PlantError("reading XLSX needs the defusedxml package installed")
    check_xlsx_archive(path)
    # Opened here, so the file is closed even when openpyxl fails half-way through.
    with path.open("rb") as handle:
        return _first_sheet(handle, Sheet(path.name))


# -- either ------------------------------------------------------------------------------


def read_sheet(path: str | Path) -> Sheet:
    """Read a .csv or .xlsx splice sheet; a clear refusal for anything else or anything huge."""
    file = Path(path)
    suffix = file.suffix.lower()
    if suffix not in (".csv", ".xlsx"):
        raise PlantError(f"{file.name}: give a .csv or .xlsx splice sheet")
    try:
        size = file.stat().st_size
    except OSError as exc:
        raise PlantError(f"cannot read {file}: {exc.strerror}") from None
    if size > MAX_FILE_BYTES:
        raise PlantError(f"{file.name} is {size} bytes; sheets are limited to {MAX_FILE_BYTES}")
    if suffix == ".xlsx":
        return read_xlsx_sheet(file)
    return read_csv_sheet(file.read_bytes(), file.name)


def sheet_from_items(items: object, name: str = "rows") -> Sheet:
    """A sheet from JSON items with the sheet's columns as keys (the API's splice rows)."""
    sheet = Sheet(name)
    if not isinstance(items, list):
        sheet.problems.append(f"{name}: expected a list of splice rows")
        return sheet
    if len(items) > MAX_LINES:
        raise PlantError(f"{name}: more than {MAX_LINES} rows; send them in parts")
    for i, item in enumerate(items):
        where = f"{name}[{i}]"
        if not isinstance(item, dict):
            sheet.problems.append(f"{where}: expected an object with the sheet's columns")
            continue
        unknown = sorted(str(k) for k in item if k not in COLUMNS)
        if unknown:
            sheet.problems.append(f"{where}: unknown keys {', '.join(unknown)}")
            continue
        cells = {k: _cell_text(v).strip() for k, v in item.items() if v is not None}
        problems = [p for k, v in cells.items() if (p := _cell_problem(k, v))]
        if problems:
            sheet.problems.extend(f"{where}: {p}" for p in problems)
            continue
        sheet.rows.append(SheetRow(i + 1, {k: v for k, v in cells.items() if v}, where))
    return sheet
