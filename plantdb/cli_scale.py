"""Commands for scale: build a synthetic city plant, and benchmark the answers on it."""

from __future__ import annotations

import time
from typing import Any

import click
from sqlalchemy.orm import Session

from plantdb.cli import Invocation, cli, plant_command
from plantdb.cli_access import READS, writes
from plantdb.db import WRITE_OPTION
from plantdb.errors import PlantError
from plantdb.records.summary import is_empty


def _synth_text(document: dict[str, Any]) -> str:
    return (
        f"built {document['strands']:,} strands in {document['trunks']} trunks "
        f"({document['unbuilt_trunks']} unbuilt) in {document['seconds']:.1f} s"
    )


@plant_command(cli, "synth", access=writes())
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


def _bench_text(document: dict[str, Any]) -> str:
    from plantdb.tables import format_table

    rows = []
    for r in document["results"]:
        ratio = "" if r["ratio"] is None else f"{r['ratio']:.1f}"
        target = "" if r["target_ratio"] is None else f"<= {r['target_ratio']:g}"
        rows.append(
            [
                r["name"],
                f"{r['median_s'] * 1000:,.1f}",
                "" if r["baseline_median_s"] is None else f"{r['baseline_median_s'] * 1000:,.2f}",
                ratio,
                target,
                f"<= {r['target_s'] * 1000:,.0f}",
                f"{r['n']:,}",
            ]
        )
    lines = [
        f"plantdb bench: {document['fibers']:,} strands asked, {document['database']}",
        format_table(
            ["name", "median ms", "baseline ms", "ratio", "target ratio", "target ms at 1M", "n"],
            rows,
            right=(1, 2, 3, 6),
        ),
    ]
    if document.get("build_s") is not None:
        lines.insert(1, f"synthetic plant built in {document['build_s']:.0f} s (target < 300 s)")
    if document.get("peak_memory_mb") is not None:
        lines.append(
            f"server peak memory after one of each request: "
            f"{document['peak_memory_mb']:.0f} MB (target <= 300 MB)"
        )
    return "\n".join(lines)


@plant_command(cli, "bench", access=READS)
@click.option(
    "--fibers",
    type=int,
    default=1_000_000,
    show_default=True,
    help="Size of the synthetic plant to measure on.",
)
@click.option("--seed", type=int, default=1, show_default=True)
@click.option(
    "--repeat",
    type=int,
    default=7,
    show_default=True,
    help="Timed runs per benchmark (after one warm-up).",
)
@click.option(
    "--memory/--no-memory",
    default=True,
    show_default=True,
    help="Also measure a server's peak memory.",
)
def bench_command(run: Invocation, fibers: int, seed: int, repeat: int, memory: bool) -> None:
    """Benchmark the answers on a synthetic plant (built once per size and seed, then reused).

    Without --db (or $PLANTDB_DATABASE_URL) the plant is kept in
    bench-data/synth-N-seedS.sqlite under this folder.
    """
    from plantdb.bench.memory import server_peak_memory_mb
    from plantdb.bench.suite import default_database, prepare, run_suite

    url = run.url if run.explicit_url else default_database(fibers, seed)
    database, build_s = prepare(url, fibers, seed)
    try:
        document = run_suite(database, fibers, repeat)
        document["build_s"] = build_s
        document["peak_memory_mb"] = (
            server_peak_memory_mb(url, document["picks"]) if memory else None
        )
    finally:
        database.dispose()
    run.emit(document, _bench_text)
