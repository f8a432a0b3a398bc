"""Bundles in and out: `load_bundle` (all of it or none) and `dump_bundle` (the whole record)."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

from sqlalchemy.orm import Session

from plantdb.audit import record_changes
from plantdb.errors import PlantError
from plantdb.records import bundle_cables, bundle_connections, bundle_load
from plantdb.records.bundle_dump import dump_bundle
from plantdb.records.bundle_load import BundleError, LoadContext
from plantdb.records.bundle_schema import check_shape
from plantdb.records.lookup import RecordLookup
from plantdb.trace.circuits import refresh_circuits

# Sections in the order their references need: places before the cables that run between
# them, cables before the splices that join them, ports before the circuits that end on them.
SECTION_LOADERS: list[Callable[[LoadContext, dict[str, Any]], None]] = [
    bundle_load.load_fiber_types,
    bundle_load.load_structures,
    bundle_load.load_spans,
    bundle_load.load_routes,
    bundle_load.load_closures,
    bundle_load.load_panels,
    bundle_load.load_equipment,
    bundle_load.load_splitters,
    bundle_cables.load_cables,
    bundle_connections.load_cuts,
    bundle_connections.load_splices,
    bundle_connections.load_terminations,
    bundle_connections.load_jumpers,
    bundle_connections.load_circuits,
    bundle_connections.load_loss_tests,
]

MAX_BUNDLE_BYTES = 512 * 1024 * 1024

__all__ = ["BundleError", "dump_bundle", "load_bundle", "read_bundle_file"]


def load_bundle(session: Session, data: Any) -> dict[str, int]:
    """Validate and write a bundle inside the caller's transaction; counts of what was added.

    Raises `BundleError` listing every problem; the caller's transaction must then roll back.
    """
    problems = check_shape(data)
    if problems:
        raise BundleError(problems)
    ctx = LoadContext(session, RecordLookup(session))
    for loader in SECTION_LOADERS:
        loader(ctx, data)
    if ctx.problems:
        raise BundleError(ctx.report())
    record_changes(session, ctx.changes)
    session.flush()
    # New connections can complete, re-route or break any circuit: re-trace them all.
    refresh_circuits(session)
    return ctx.counts


def read_bundle_file(path: str | Path) -> Any:
    """Parse a bundle file; a clear refusal for a missing, huge or malformed file."""
    file = Path(path)
    refused = "bundle not loaded:"
    try:
        size = file.stat().st_size
        if size > MAX_BUNDLE_BYTES:
            raise PlantError(
                f"{refused} {file} is {size} bytes; bundles are limited to {MAX_BUNDLE_BYTES}"
            )
        raw = file.read_bytes()
    except OSError as exc:
        raise PlantError(f"{refused} cannot read {file}: {exc.strerror or exc}") from exc
    try:
        # Strictly UTF-8 (RFC 8259 section 8.1), a byte order mark allowed; json.loads would
        # otherwise guess UTF-16 or UTF-32 from the first bytes.
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise PlantError(
            f"{refused} {file} is not UTF-8 text ({exc.reason} at byte {exc.start})"
        ) from exc
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise PlantError(
            f"{refused} {file} is not JSON (line {exc.lineno}, column {exc.colno}: {exc.msg})"
        ) from exc
    except RecursionError as exc:
        raise PlantError(f"{refused} {file} is nested too deeply to be a bundle") from exc
