"""Commands for scale: build a synthetic city plant, and benchmark the answers on it."""

from __future__ import annotations

import time
from typing import Any

import click
from sqlalchemy.orm import Session

from plantdb.cli import Invocation, cli, plant_command
from plantdb.db import WRITE_OPTION
from plantdb.errors import PlantError
from plantdb.records.summary import is_empty


def _synth_text(document: dict[str, Any]) -> str:
    return (
        f"built {document['strands']:,} strands in {document['trunks']} trunks "
        f"({document['unbuilt_trunks']} unbuilt) in {document['seconds']:.1f} s"
    )


@plant_command(cli, "synth")
@click.option("--fibers", type=int, required=True, help="About how many strands to build.")
@click.option("--seed", type=int, default=1, show_default=True, help="Same seed, same plant.")
def synth_command(run: Invocation, fibers: int, seed: int) -> None:
    """Build a synthetic city-scale plant of about N strands into an empty database."""
    from seed_data.synth import console_progress, run_synth

    database = run.database()
    with Session(database.engine) as session:
        if not is_empty(session):
            raise PlantError("synth builds into an empty database; this one holds a record")
    started = time.perf_counter()
    try:
        with database.engine.execution_options(**{WRITE_OPTION: True}).begin() as connection:
            document = run_synth(connection, fibers, seed, console_progress())
    except ValueError as exc:
        raise PlantError(str(exc)) from exc
    document["seconds"] = time.perf_counter() - started
    run.emit(document, _synth_text)
