"""Who changed what, when: `plantdb history --closure|--cable|--circuit LABEL`."""

from __future__ import annotations

import datetime as dt
from typing import Any

import click

from plantdb.cli import Invocation, cli, plant_command
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


def _target(closure: str | None, cable: str | None, circuit: str | None) -> tuple[str, str]:
    given = [(k, v) for k, v in zip(KINDS, (closure, cable, circuit), strict=True) if v]
    if len(given) != 1:
        raise click.UsageError(
            "give exactly one of --closure LABEL, --cable LABEL or --circuit LABEL"
        )
    return given[0]


@plant_command(cli, "history")
@click.option("--closure", metavar="LABEL", help="A closure: it, its splices, cuts, splitters.")
@click.option("--cable", metavar="LABEL", help="A cable: it, its cuts, splices, terminations.")
@click.option("--circuit", metavar="LABEL", help="A circuit: it, its status, its loss tests.")
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
    since: dt.datetime | None,
) -> None:
    """Who changed what, when: every recorded change of a closure, cable or circuit."""
    kind, label = _target(closure, cable, circuit)
    with run.database().read() as session:
        document = history_document(session, kind, label, since=since)
    run.emit(document, history_text)
