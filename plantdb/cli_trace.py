"""Commands that walk the record: trace, loss, check."""

from __future__ import annotations

import sys
from typing import Any

import click

from plantdb.cli import Invocation, cli, plant_command
from plantdb.cli_access import READS
from plantdb.db import run_in_transaction
from plantdb.trace.dispatch import impact_document, live_document, locate_document
from plantdb.trace.dispatch_text import impact_text, live_text, locate_text
from plantdb.trace.health import check_record
from plantdb.trace.loss import LossOptions
from plantdb.trace.service import loss_report, trace_document
from plantdb.trace.text import loss_text, trace_text
from plantdb.trace.tracing import require_start


@plant_command(cli, "trace", access=READS)
@click.option("--port", metavar="PANEL:PORT", help="Start at a panel or equipment port.")
@click.option("--fiber", metavar="CABLE:STRAND", help="Start at a strand (walks both ways).")
@click.option("--circuit", metavar="LABEL", help="A circuit's path from its A end to Z.")
def trace_command(
    run: Invocation, port: str | None, fiber: str | None, circuit: str | None
) -> None:
    """Follow the light from a port, a strand or a circuit to every end it reaches."""
    kind, value = require_start(port, fiber, circuit)
    with run.database().read() as session:
        document = trace_document(session, kind, value)
    run.emit(document, trace_text)


@plant_command(cli, "loss", access=READS)
@click.option("--circuit", metavar="LABEL", help="A circuit's path from A to Z.")
@click.option("--port", metavar="PANEL:PORT", help="Every path from a port.")
@click.option(
    "--wavelength",
    "wavelengths",
    type=int,
    multiple=True,
    metavar="NM",
    help="Test wavelength (repeat); default 1310 and 1550 single-mode, 850 and 1300 "
    "multimode; 1383, 1490, 1625 on request.",
)
@click.option("--splice-max-db", type=float, help="Splice allowance (default 0.3 dB).")
@click.option(
    "--splice-typical-db",
    type=float,
    help="Typical splice where none was measured (default by method).",
)
@click.option("--connector-max-db", type=float, help="Connector pair allowance (default 0.75).")
@click.option("--connector-typical-db", type=float, help="Typical connector pair.")
@click.option(
    "--margin-db", type=float, default=0.0, show_default=True, help="Margin added to both bases."
)
def loss_command(
    run: Invocation,
    circuit: str | None,
    port: str | None,
    wavelengths: tuple[int, ...],
    splice_max_db: float | None,
    splice_typical_db: float | None,
    connector_max_db: float | None,
    connector_typical_db: float | None,
    margin_db: float,
) -> None:
    """Expected end-to-end loss per wavelength: the standards maximum and a typical estimate."""
    kind, value = require_start(port, None, circuit)
    options = LossOptions(
        tuple(wavelengths),
        splice_max_db,
        splice_typical_db,
        connector_max_db,
        connector_typical_db,
        margin_db,
    )
    with run.database().read() as session:
        document = loss_report(session, kind, value, options)
    run.emit(document, loss_text)


def _check_text(document: dict[str, Any]) -> str:
    lines = [f"checked {document['circuits_checked']} circuit(s)"]
    if document["ok"]:
        lines.append("no records problems found")
    for problem in document["problems"]:
        lines.append(f"PROBLEM {problem['kind']}: {problem['what']} - {problem['where']}")
    for notice in document["notices"]:
        lines.append(f"note ({notice['status']}) {notice['what']}: {notice['where']}")
    return "\n".join(lines)


@plant_command(cli, "check", access=READS)
def check_command(run: Invocation) -> None:
    """Records health: circuits whose A no longer reaches Z, connections breaking the rules.

    Exits 1 when any problem is found (planned and retired circuits are listed as notes).
    """
    document = run_in_transaction(run.database(), check_record)
    run.emit(document, _check_text)
    if not document["ok"]:
        sys.exit(1)


@plant_command(cli, "live", access=READS)
@click.option("--closure", required=True, metavar="LABEL", help="The closure a crew will open.")
def live_command(run: Invocation, closure: str) -> None:
    """Every strand through a closure, live ones first, with the circuits on each."""
    with run.database().read() as session:
        document = live_document(session, closure)
    run.emit(document, live_text)


@plant_command(cli, "impact", access=READS)
@click.option("--span", metavar="LABEL", help="A span that was cut.")
@click.option("--structure", metavar="LABEL", help="A structure where everything was cut.")
def impact_command(run: Invocation, span: str | None, structure: str | None) -> None:
    """What a cut takes down: cables, strands, circuits (active first) and customers."""
    with run.database().read() as session:
        document = impact_document(session, span=span, structure=structure)
    run.emit(document, impact_text)


@plant_command(cli, "locate", access=READS)
@click.option("--port", required=True, metavar="PANEL:PORT", help="Where the OTDR was connected.")
@click.option("--distance-m", required=True, type=float, help="The distance the OTDR reports.")
@click.option("--wavelength", type=int, metavar="NM", help="OTDR wavelength (default 1310 SM).")
@click.option("--otdr-index", type=float, help="The group index the OTDR was set to.")
def locate_command(
    run: Invocation, port: str, distance_m: float, wavelength: int | None, otdr_index: float | None
) -> None:
    """Where on the street an OTDR event lies: cable, sheath mark, structures, a range."""
    with run.database().read() as session:
        document = locate_document(session, port, distance_m, wavelength, otdr_index)
    run.emit(document, locate_text)
