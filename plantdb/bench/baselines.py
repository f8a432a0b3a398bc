"""Raw-SQL baselines measured beside each benchmark: the least the database itself must do.

Each baseline asks the database driver directly (sqlite3 or psycopg, no SQLAlchemy) for the
same rows the measured operation needs, so the ratio shows plantdb's own overhead.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Callable
from typing import Any

from sqlalchemy.engine import make_url

from plantdb.trace.elements import TracedPath
from plantdb.trace.reader import PlantReader


class RawConnection:
    """A plain driver connection to the benchmark's database."""

    def __init__(self, url: str) -> None:
        parsed = make_url(url)
        self.postgres = parsed.get_backend_name() == "postgresql"
        if self.postgres:
            import psycopg

            query = dict(parsed.query)
            self.connection: Any = psycopg.connect(
                host=parsed.host or "localhost",
                port=parsed.port or 5432,
                user=parsed.username,
                password=parsed.password,
                dbname=parsed.database,
                options=str(query.get("options", "")) or None,
                autocommit=True,
            )
        else:
            self.connection = sqlite3.connect(parsed.database or "", isolation_level=None)
            # The same rules plantdb's own connections run under, for a fair comparison.
            self.connection.execute("PRAGMA foreign_keys=ON")
            self.connection.execute("PRAGMA busy_timeout=30000")

    def query(self, sql: str, params: tuple[Any, ...] = ()) -> list[Any]:
        if self.postgres:
            sql = sql.replace("?", "%s")
        return list(self.connection.execute(sql, params).fetchall())

    def execute(self, sql: str, params: tuple[Any, ...] = ()) -> None:
        """A statement that returns no rows."""
        if self.postgres:
            sql = sql.replace("?", "%s")
        self.connection.execute(sql, params)

    def executemany(self, sql: str, rows: list[tuple[Any, ...]]) -> None:
        if self.postgres:
            sql = sql.replace("?", "%s")
        cursor = self.connection.cursor()
        try:
            cursor.executemany(sql, rows)
        finally:
            cursor.close()

    def close(self) -> None:
        self.connection.close()


def trace_hops(reader: PlantReader, path: TracedPath) -> list[tuple[str, tuple[Any, ...]]]:
    """The point lookups a walk over this path needs, one or two per element."""
    hops: list[tuple[str, tuple[Any, ...]]] = []
    for element in path.elements:
        refs = element.refs
        if "port_id" in refs:
            hops.append(
                (
                    "SELECT id, panel_id, equipment_id, jumper_id FROM port WHERE id = ?",
                    (refs["port_id"],),
                )
            )
            hops.append(
                (
                    "SELECT id, strand_id, station_id, side FROM fiber_end WHERE port_id = ?",
                    (refs["port_id"],),
                )
            )
        elif element.kind == "jumper":
            hops.append(("SELECT id FROM port WHERE jumper_id = ?", (refs["jumper_id"],)))
        elif element.kind == "fiber":
            cable = reader.cable(refs["cable_id"])
            station = next(s.id for s in cable.stations if s.seq == refs["to_seq"])
            side = "A" if refs["to_seq"] > refs["from_seq"] else "B"
            hops.append(("SELECT cable_id, number FROM strand WHERE id = ?", (refs["strand_id"],)))
            hops.append(("SELECT station_id FROM cut WHERE strand_id = ?", (refs["strand_id"],)))
            hops.append(
                (
                    "SELECT id, splice_id, splice_side, port_id FROM fiber_end"
                    " WHERE strand_id = ? AND station_id = ? AND side = ?",
                    (refs["strand_id"], station, side),
                )
            )
        elif element.kind == "splice":
            hops.append(
                (
                    "SELECT id, strand_id, station_id, side, leg_id FROM fiber_end"
                    " WHERE splice_id = ?",
                    (refs["splice_id"],),
                )
            )
            hops.append(
                (
                    "SELECT closure_id, tray_id, slot, loss_db FROM splice WHERE id = ?",
                    (refs["splice_id"],),
                )
            )
        elif element.kind == "splitter":
            hops.append(
                ("SELECT id, name FROM splitter_leg WHERE splitter_id = ?", (refs["splitter_id"],))
            )
    return hops


def walk(raw: RawConnection, hops: list[tuple[str, tuple[Any, ...]]]) -> Callable[[], None]:
    def run() -> None:
        for sql, params in hops:
            raw.query(sql, params)

    return run


def closure_splices(raw: RawConnection, closure_id: int) -> Callable[[], None]:
    def run() -> None:
        raw.query(
            "SELECT s.id, s.tray_id, s.slot, e.strand_id, e.station_id, e.side, e.leg_id"
            " FROM splice s JOIN fiber_end e ON e.splice_id = s.id WHERE s.closure_id = ?",
            (closure_id,),
        )

    return run


def span_strands(raw: RawConnection, span_id: int) -> Callable[[], None]:
    def run() -> None:
        raw.query(
            "SELECT st.id, st.number FROM cable_span cs JOIN strand st"
            " ON st.cable_id = cs.cable_id WHERE cs.span_id = ?",
            (span_id,),
        )

    return run


def bbox_rows(raw: RawConnection, box: tuple[float, float, float, float]) -> Callable[[], None]:
    west, south, east, north = box

    def run() -> None:
        raw.query(
            "SELECT id, label, kind, lon, lat FROM structure"
            " WHERE lon BETWEEN ? AND ? AND lat BETWEEN ? AND ?",
            (west, east, south, north),
        )
        raw.query(
            "SELECT id, label, kind, geometry FROM span WHERE min_lon <= ? AND max_lon >= ?"
            " AND min_lat <= ? AND max_lat >= ?",
            (east, west, north, south),
        )
        raw.query(
            "SELECT c.id, c.label, t.lon, t.lat FROM closure c JOIN structure t"
            " ON t.id = c.structure_id WHERE t.lon BETWEEN ? AND ? AND t.lat BETWEEN ? AND ?",
            (west, east, south, north),
        )

    return run
