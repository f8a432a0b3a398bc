"""Who changed what, when: `plantdb history --closure|--cable|--circuit|--panel|--structure|
--span LABEL`."""

from __future__ import annotations

import datetime as dt
from typing import Any

import click

from plantdb.cli import Invocation, cli, plant_command
from plantdb.cli_access import READS
from plantdb.records.history import KINDS, VERBS, change_summary, history_document
from plantdb.tables import format_table


def history_text(document: dict[str, Any]) -> str:
    """The history for people: one line per change, oldest first."""
    target = document["target"]
    changes = document["changes"]
    since = f" since {document['since'][:10]}" if document["since"] else ""
    head = f"history of {target['kind']} {target['label']}{since}: {len(changes)} change(s)"
    if not changes:
        return head
    rows = [
        [
            change["at"][:16].replace("T", " "),
            change["actor"],
            VERBS[change["action"]],
            change["label"],
            change_summary(change),
        ]
        for change in changes
    ]
    table = format_table(["when (UTC)", "who", "did", "what", "details"], rows)
    return f"{head}\n{table}"


def _target(labels: dict[str, str | None]) -> tuple[str, str]:
    """The one (kind, label) asked for, from the options named by kind."""
    given = [(kind, labels[kind]) for kind in KINDS if labels[kind]]
    if len(given) != 1:
        options = [f"--{kind} LABEL" for kind in KINDS]
        raise click.UsageError(f"give exactly one of {', '.join(options[:-1])} or {options[-1]}")
    kind, label = given[0]
    assert label is not None
    return kind, label


@plant_command(cli, "history", access=READS)
@click.option("--closure", metavar="LABEL", help="A closure: it, its splices, cuts, splitters.")
@click.option("--cable", metavar="LABEL", help="A cable: it, its cuts, splices, terminations.")
@click.option("--circuit", metavar="LABEL", help="A circuit: it, its status, its loss tests.")
@click.option("--panel", metavar="LABEL", help="A panel: it, its terminations, jumpers, splitters.")
@click.option(
    "--structure", metavar="LABEL", help="A structure: it, the closures, panels, equipment in it."
)
@click.option("--span", metavar="LABEL", help="A span: it.")
@click.option(
    "--since",
    type=click.DateTime(["%Y-%m-%d"]),
    metavar="DATE",
    help="Only changes on or after this day (YYYY-MM-DD, UTC).",
)
def history_command(
    run: Invocation,
    closure: str | None,
    cable: str | None,
    circuit: str | None,
    panel: str | None,
    structure: str | None,
    span: str | None,
    since: dt.datetime | None,
) -> None:
    """Who changed what, when: every recorded change of a closure, cable, circuit, panel,
    structure or span."""
    labels = {
        "closure": closure,
        "cable": cable,
        "circuit": circuit,
        "panel": panel,
        "structure": structure,
        "span": span,
    }
    kind, label = _target(labels)
    with run.database().read() as session:
        document = history_document(session, kind, label, since=since)
    run.emit(document, history_text)
