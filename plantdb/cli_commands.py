"""The record's own commands: init, demo, load, dump, summary."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import click
from sqlalchemy.orm import Session

from plantdb.cli import Invocation, cli, plant_command
from plantdb.cli_access import READS, writes
from plantdb.db import run_in_transaction, upgrade_schema
from plantdb.errors import PlantError
from plantdb.files import written_whole
from plantdb.records.bundle import dump_bundle, load_bundle, read_bundle_file
from plantdb.records.summary import is_empty, record_counts


def _counts_text(counts: dict[str, int]) -> str:
    return "\n".join(f"  {name.replace('_', ' ')}: {n}" for name, n in counts.items() if n)


@plant_command(cli, "init", access=writes())
def init_command(run: Invocation) -> None:
    """Create the schema, or upgrade it to the newest migration (safe to run again)."""
    database = run.database(current=False)
    before, head = upgrade_schema(database.engine)
    if before == head:
        state = "already current"
    elif before is None:
        state = "created"
    else:
        state = f"upgraded from {before}"
    run.emit(
        {
            "database": database.engine.url.render_as_string(hide_password=True),
            "schema": head,
            "previous": before,
            "state": state,
        },
        lambda d: f"schema {d['schema']} {d['state']} in {d['database']}",
    )


def _load(run: Invocation, data: Any, *, require_empty: bool) -> dict[str, int]:
    def work(session: Session) -> dict[str, int]:
        if require_empty and not is_empty(session):
            raise PlantError(
                "the demo town loads into an empty database; this one already holds a record"
                " (use another --db, or a new file)"
            )
        return load_bundle(session, data)

    return run_in_transaction(run.database(), work)


@plant_command(cli, "demo", access=writes("clerk"))
def demo_command(run: Invocation) -> None:
    """Load the invented demo town (Quillmere) into an empty database."""
    from seed_data.demo_town import build_demo_bundle

    counts = _load(run, build_demo_bundle(), require_empty=True)
    run.emit({"loaded": counts}, lambda d: "demo town loaded:\n" + _counts_text(d["loaded"]))


@plant_command(cli, "load", access=writes("clerk"))
@click.argument("file", type=click.Path(dir_okay=False, path_type=Path))
def load_command(run: Invocation, file: Path) -> None:
    """Load a bundle in one transaction: all of it or none."""
    data = read_bundle_file(file)
    counts = _load(run, data, require_empty=False)
    run.emit(
        {"loaded": counts, "file": str(file)},
        lambda d: f"loaded {d['file']}:\n" + (_counts_text(d["loaded"]) or "  nothing new"),
    )


@plant_command(cli, "dump", access=READS)
@click.option(
    "-o",
    "--output",
    type=click.Path(dir_okay=False, path_type=Path),
    help="Write the bundle to this file instead of standard output.",
)
def dump_command(run: Invocation, output: Path | None) -> None:
    """Write the whole record as a bundle (load it into an empty database to copy it)."""
    with run.database().read() as session:
        bundle = dump_bundle(session)
    text = json.dumps(bundle, indent=1, ensure_ascii=False) + "\n"
    if output is None:
        click.echo(text, nl=False)
        return
    try:
        with written_whole(output) as temporary:
            temporary.write_text(text, encoding="utf-8")
    except OSError as exc:
        raise PlantError(f"cannot write {output}: {exc.strerror or exc}") from exc
    if run.as_json:
        click.echo(json.dumps({"written": str(output), "bytes": len(text.encode())}))
    else:
        click.echo(f"wrote {output}", err=True)


@plant_command(cli, "fiber-types", access=READS)
def fiber_types_command(run: Invocation) -> None:
    """The record's fiber types: optical values per wavelength and their sources."""
    from plantdb.records.fiber_types import fiber_types_document, fiber_types_text

    with run.database().read() as session:
        document = fiber_types_document(session)
    run.emit(document, fiber_types_text)


@plant_command(cli, "summary", access=READS)
def summary_command(run: Invocation) -> None:
    """Count what the record holds."""
    with run.database().read() as session:
        counts = record_counts(session)
    run.emit(counts, lambda d: "the record holds:\n" + _counts_text(d))
