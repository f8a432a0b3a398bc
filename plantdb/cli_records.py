"""What a records clerk runs: splice, unsplice, move-splice, import splices, export splices."""

from __future__ import annotations

import datetime as dt
import json
import re
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click
from sqlalchemy.orm import Session

from plantdb.cli import Invocation, cli, plant_command
from plantdb.cli_access import READS, writes
from plantdb.db import run_in_transaction
from plantdb.errors import PlantError
from plantdb.records.sheet_export import export_splice_sheet
from plantdb.records.sheet_files import read_sheet
from plantdb.records.sheet_import import import_sheet
from plantdb.records.splice_edits import move_splices, remove_splices
from plantdb.records.splicing import (
    METHODS,
    SpliceRefused,
    SpliceReport,
    SpliceRequest,
    end_group,
    record_splices,
)

_SLOTS = re.compile(r"^\s*(\d+)\s*(?:-\s*(\d+)\s*)?$")


def _end_text(item: dict[str, Any], end: str) -> str:
    """An end of a reported splice; a mid-span piece says where its glass runs."""
    toward = item.get(f"{end}_toward")
    return item[end] if toward is None else f"{item[end]} (toward {toward})"


def _splice_line(item: dict[str, Any]) -> str:
    loss = "" if item.get("loss_db") is None else f", {item['loss_db']:.2f} dB"
    return (
        f"    {item['closure']} tray {item['tray']} slot {item['slot']}: {_end_text(item, 'a')}"
        f" to {_end_text(item, 'b')} ({item['method']}{loss})"
    )


def report_text(document: dict[str, Any], *, dry_run: bool = False) -> str:
    """A splicing report for people: counts, then what was done, warnings and notes."""
    verb = "would add" if dry_run else "added"
    lines = []
    if document.get("file"):
        lines.append(f"{document['file']}: {document['rows']} rows")
    if document["added"] or dry_run:
        count = len(document["splices"]) if dry_run else document["added"]
        cuts = f" ({document['cuts']} strands cut)" if document["cuts"] else ""
        lines.append(f"  {verb} {count} splices{cuts}" + (" (dry run)" if dry_run else ""))
    if document["already_recorded"]:
        lines.append(f"  already recorded identically: {document['already_recorded']}")
        if not document["splices"]:
            lines.append("  nothing added: every splice asked for is already in the record")
    for key in ("removed", "moved"):
        if document[key]:
            lines.append(f"  {key} {document[key]} splices")
    if dry_run or document["removed"] or document["moved"] or len(document["splices"]) <= 24:
        lines.extend(_splice_line(item) for item in document["splices"])
    lines.extend(f"  warning: {w}" for w in document["warnings"])
    lines.extend(f"  note: {n}" for n in document["notes"])
    return "\n".join(lines)


def _finish(run: Invocation, document: dict[str, Any], *, dry_run: bool = False) -> None:
    run.emit(document, lambda d: report_text(d, dry_run=dry_run))


def _write(run: Invocation, work: Callable[[Session], SpliceReport], what: str) -> dict[str, Any]:
    """Run a splicing service in one transaction; refuse the whole of it on any problem."""

    def checked(session: Session) -> SpliceReport:
        report = work(session)
        report.refuse_if_problems(what)  # raising rolls the transaction back
        return report

    try:
        return run_in_transaction(run.database(), checked).document()
    except SpliceRefused as refused:
        if run.as_json:
            click.echo(json.dumps(refused.report.document(), indent=1))
        raise


def _slots(text: str) -> list[int]:
    match = _SLOTS.match(text)
    if not match:
        raise PlantError(f"--slot {text!r}: give a slot number or a range like 1-12")
    first = int(match.group(1))
    last = int(match.group(2) or first)
    if last < first:
        raise PlantError(f"--slot {text!r}: a range counts up, e.g. 1-12")
    return list(range(first, last + 1))


_SIDE = click.Choice(["A", "B"], case_sensitive=False)


@plant_command(cli, "splice", access=writes("clerk"))
@click.option("--closure", required=True, metavar="LABEL", help="The closure spliced in.")
@click.option(
    "--a",
    "a_text",
    required=True,
    metavar="CABLE:STRANDS",
    help='One side: "C-A:13", "C-A:13-24", "C-A:BL/OR", "C-A:tube 2", "F-1:5/A", "SPL-1:in".',
)
@click.option("--b", "b_text", required=True, metavar="CABLE:STRANDS", help="The other side.")
@click.option("--tray", type=int, required=True, help="Tray number.")
@click.option("--slot", type=int, required=True, help="First slot; a range counts up from it.")
@click.option("--method", type=click.Choice(METHODS), help="Default fusion (ribbons: mass fusion).")
@click.option("--a-side", type=_SIDE, help="At a mid-span access: the piece toward A or B.")
@click.option("--b-side", type=_SIDE, help="The same for the other side.")
@click.option("--loss-db", type=float, help="Measured loss of each splice, dB.")
@click.option("--spliced-on", type=click.DateTime(["%Y-%m-%d"]), help="ISO date.")
@click.option("--spliced-by", help="Who made the splices.")
@click.option("--dry-run", is_flag=True, help="Check and show what would be added only.")
def splice_command(run: Invocation, **options: Any) -> None:
    """Splice one strand, a range, or a whole tube or ribbon to another, in one step."""
    on: dt.datetime | None = options["spliced_on"]
    request = SpliceRequest(
        closure=options["closure"],
        tray=options["tray"],
        slot=options["slot"],
        a=end_group(options["a_text"], options["a_side"]),
        b=end_group(options["b_text"], options["b_side"]),
        method=options["method"],
        loss_db=options["loss_db"],
        spliced_on=on.date() if on else None,
        spliced_by=options["spliced_by"],
    )
    dry_run = bool(options["dry_run"])
    document = _write(run, lambda s: record_splices(s, [request], dry_run=dry_run), "splicing")
    _finish(run, document, dry_run=dry_run)


@plant_command(cli, "unsplice", access=writes("clerk"))
@click.option("--closure", required=True, metavar="LABEL", help="The closure.")
@click.option("--tray", type=int, required=True, help="Tray number.")
@click.option("--slot", required=True, metavar="N|N-M", help="A slot, or a range of slots.")
def unsplice_command(run: Invocation, closure: str, tray: int, slot: str) -> None:
    """Remove the splices in a slot (or range of slots); their strands stay cut."""
    slots = _slots(slot)
    document = _write(run, lambda s: remove_splices(s, closure, tray, slots), "removal")
    _finish(run, document)


@plant_command(cli, "move-splice", access=writes("clerk"))
@click.option("--closure", required=True, metavar="LABEL", help="The closure.")
@click.option("--tray", type=int, required=True, help="Tray the splices are in now.")
@click.option("--slot", required=True, metavar="N|N-M", help="Their slot, or range of slots.")
@click.option("--to-tray", type=int, required=True, help="Tray to move them to.")
@click.option("--to-slot", type=int, required=True, help="First slot there; counts up.")
def move_splice_command(
    run: Invocation, closure: str, tray: int, slot: str, to_tray: int, to_slot: int
) -> None:
    """Move splices to another tray or slot (a correction of the record)."""
    slots = _slots(slot)
    document = _write(
        run, lambda s: move_splices(s, closure, tray, slots, to_tray, to_slot), "the move"
    )
    _finish(run, document)


@cli.group("import")
def import_group() -> None:
    """Bring records in from files (splice sheets)."""


class _Progress:
    """A progress bar on standard error, only when it is a terminal."""

    def __init__(self, total: int) -> None:
        self.bar: Any = None
        if sys.stderr.isatty():
            from tqdm import tqdm

            self.bar = tqdm(total=total, unit="row", desc="checking", file=sys.stderr)

    def __call__(self, step: int) -> None:
        if self.bar is not None:
            self.bar.update(step)

    def restart(self) -> None:
        if self.bar is not None:
            self.bar.reset()

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()


@plant_command(import_group, "splices", access=writes("clerk"))
@click.argument("file", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--dry-run", is_flag=True, help="Check the whole sheet, show what would be added.")
def import_splices_command(run: Invocation, file: Path, dry_run: bool) -> None:
    """Import a splice sheet (.csv or .xlsx): every row, or none when any has a problem."""
    sheet = read_sheet(file)
    progress = _Progress(len(sheet.rows))

    def work(session: Session) -> SpliceReport:
        progress.restart()  # a retried transaction checks the sheet again
        return import_sheet(session, sheet, dry_run=dry_run, progress=progress)

    try:
        document = _write(run, work, f"splice sheet {file.name}")
    finally:
        progress.close()
    document.update(file=str(file), rows=len(sheet.rows), dry_run=dry_run)
    _finish(run, document, dry_run=dry_run)


@cli.group("export")
def export_group() -> None:
    """Write records out to files (splice sheets)."""


@plant_command(export_group, "splices", access=READS)
@click.option("--closure", required=True, metavar="LABEL", help="The closure.")
@click.option(
    "-o",
    "--output",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="FILE.csv or FILE.xlsx (the import's columns), or FILE.html (print-ready).",
)
def export_splices_command(run: Invocation, closure: str, output: Path) -> None:
    """Write a closure's splice sheet: CSV or XLSX to re-import, HTML to print."""
    with run.database().read() as session:
        document = export_splice_sheet(session, closure, output)
    run.emit(document, lambda d: f"wrote {d['written']}: {d['splices']} splices of {d['closure']}")
