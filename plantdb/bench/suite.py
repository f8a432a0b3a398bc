"""The benchmark suite: the answers people wait for, timed on a synthetic city plant.

Every measurement is the median of repeated runs after a warm-up, beside a raw-SQL baseline
measured in the same run on the same database (see `baselines`). Timings are reported, never
asserted in the test run.
"""

from __future__ import annotations

import json
import time
from pathlib import Path
from typing import Any

from sqlalchemy import select

from plantdb.bench import baselines
from plantdb.bench.imports import ImportBench
from plantdb.bench.timing import TARGETS, Result, median_times
from plantdb.db import Database, require_current_schema, schema_revisions, upgrade_schema
from plantdb.errors import PlantError
from plantdb.model import Setting
from plantdb.records.summary import is_empty
from plantdb.trace.dispatch import impact_document, live_document
from plantdb.trace.loss import LossOptions
from plantdb.trace.reader import PlantReader
from plantdb.trace.service import trace_with_loss
from plantdb.trace.tracing import circuit_path


def default_database(fibers: int, seed: int) -> str:
    """Where a synthetic plant of this size and seed is kept between runs."""
    folder = Path("bench-data")
    folder.mkdir(exist_ok=True)
    return f"sqlite:///{folder / f'synth-{fibers}-seed{seed}.sqlite'}"


def prepare(url: str, fibers: int, seed: int) -> tuple[Database, float | None]:
    """The database holding the synthetic plant of (fibers, seed), reused or built now; and
    the seconds the build took (None when reused)."""
    database = Database(url)
    try:
        return database, _fill(database, fibers, seed)
    except BaseException:
        # A refused database must not leave its pooled connections to the garbage collector.
        database.dispose()
        raise


def _fill(database: Database, fibers: int, seed: int) -> float | None:
    current, _head = schema_revisions(database.engine)
    if current is None:
        upgrade_schema(database.engine)
    require_current_schema(database.engine)
    wanted = {"fibers": fibers, "seed": seed, "generator": 1}
    with database.read() as session:
        empty = is_empty(session)
        stored = session.scalar(select(Setting.value).where(Setting.key == "synth"))
    if empty:
        from seed_data.synth import console_progress, run_synth

        started = time.perf_counter()
        with database.writing() as session, session.begin():
            run_synth(session.connection(), fibers, seed, console_progress())
        return time.perf_counter() - started
    if stored is None or json.loads(stored) != wanted:
        raise PlantError(
            f"{database.url} holds a different record (synthetic plant {stored or 'none'});"
            " give an empty database or the one built with the same --fibers and --seed"
        )
    return None


def _busiest(database: Database) -> dict[str, Any]:
    """The circuit, closure, span and viewport the suite measures."""
    from plantdb.bench.picks import busiest

    with database.read() as session:
        return busiest(session)


def _measure(name: str, action: Any, baseline: Any, repeat: int, n: int = 1) -> Result:
    what, ratio, seconds = TARGETS[name]
    median, base = median_times(action, baseline, repeat)
    return Result(name, what, median, base, ratio, seconds, n)


def run_suite(database: Database, fibers: int, repeat: int = 7) -> dict[str, Any]:
    """Measure every benchmark on a prepared database; the JSON document of the results."""
    from webui import create_app

    picks = _busiest(database)
    raw = baselines.RawConnection(database.url)
    app = create_app({"DATABASE_URL": database.url})
    client = app.test_client()
    results = []
    try:
        results.append(_trace(database, raw, picks, repeat))
        live = picks["closure"]
        results.append(
            _measure(
                "live",
                lambda: _read(database, live_document, live),
                baselines.closure_splices(raw, picks["closure_id"]),
                repeat,
            )
        )
        results.append(
            _measure(
                "impact",
                lambda: _read(database, _impact, picks["span"]),
                baselines.span_strands(raw, picks["span_id"]),
                repeat,
            )
        )
        bbox = ",".join(f"{v:.6f}" for v in picks["bbox"])
        results.append(
            _measure(
                "map",
                lambda: _get(client, f"/api/v1/map?bbox={bbox}"),
                baselines.bbox_rows(raw, picks["bbox"]),
                repeat,
            )
        )
        results.append(_measure("page", lambda: _get(client, f"/closures/{live}"), None, repeat))
        results.append(ImportBench(database, raw).run(repeat=max(3, repeat // 2)))
    finally:
        raw.close()
        app.extensions["plantdb.database"].dispose()
    return {
        "results": [r.to_json() for r in results],
        "fibers": fibers,
        "database": database.dialect,
        "picks": {k: v for k, v in picks.items() if not k.endswith("_id")},
    }


def _read(database: Database, function: Any, *args: Any) -> Any:
    with database.read() as session:
        return function(session, *args)


def _impact(session: Any, span: str) -> Any:
    return impact_document(session, span=span)


def _get(client: Any, url: str) -> None:
    response = client.get(url)
    if response.status_code != 200:
        raise PlantError(f"benchmark request {url} answered {response.status_code}")


def _trace(
    database: Database, raw: baselines.RawConnection, picks: dict[str, Any], repeat: int
) -> Result:
    circuit = picks["circuit"]
    with database.read() as session:
        reader = PlantReader(session)
        _id, _status, a_port, z_port, _customer = reader.circuit(circuit)
        path, _every = circuit_path(reader, a_port, z_port)
        if path is None:
            raise PlantError(f"benchmark circuit {circuit} does not reach its Z end")
        hops = baselines.trace_hops(reader, path)

    def action() -> None:
        with database.read() as session:
            trace_with_loss(session, "circuit", circuit, LossOptions())

    return _measure("trace", action, baselines.walk(raw, hops), repeat, n=len(path.elements))
