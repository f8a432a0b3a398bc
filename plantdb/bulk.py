"""Fast bulk loading of rows with known ids: COPY on PostgreSQL, executemany on SQLite.

For generators that build a whole plant into an empty database (millions of rows): the ORM's
unit of work, or even Core's per-statement bookkeeping, would dominate the time. Rows are
plain tuples in the table's column order given by `columns`; the caller assigns ids.
"""

from __future__ import annotations

import json
from collections.abc import Iterable, Sequence
from typing import Any

from sqlalchemy import Connection, text

from plantdb.model import Base

JSON_COLUMNS = {("span", "geometry")}


class BulkWriter:
    """Writes tuples into tables over one connection, inside the caller's transaction."""

    def __init__(self, connection: Connection) -> None:
        self.connection = connection
        self.postgres = connection.dialect.name == "postgresql"
        self.counts: dict[str, int] = {}
        if not self.postgres:
            # A big page cache keeps the indexes' B-trees in memory while millions of rows go
            # in; the default (2 MB) turns every insert into page reads once tables outgrow it.
            connection.exec_driver_sql("PRAGMA cache_size = -1000000")

    def write(self, table: str, columns: Sequence[str], rows: Iterable[Sequence[Any]]) -> None:
        """Insert rows (tuples in `columns` order) into `table`."""
        batch = list(rows)
        if not batch:
            return
        # Names are checked against the model, so the statements below carry no outside text.
        known = Base.metadata.tables.get(table)
        if known is None or any(c not in known.c for c in columns):
            raise ValueError(f"unknown table or column in {table}({', '.join(columns)})")
        json_at = [i for i, c in enumerate(columns) if (table, c) in JSON_COLUMNS]
        if json_at:
            batch = [
                tuple(json.dumps(v) if i in json_at else v for i, v in enumerate(row))
                for row in batch
            ]
        if self.postgres:
            self._copy(table, columns, batch)
        else:
            marks = ", ".join("?" for _ in columns)
            statement = f"INSERT INTO {table} ({', '.join(columns)}) VALUES ({marks})"  # noqa: S608
            self.connection.exec_driver_sql(statement, batch)
        self.counts[table] = self.counts.get(table, 0) + len(batch)

    def _copy(self, table: str, columns: Sequence[str], rows: list[Sequence[Any]]) -> None:
        raw = self.connection.connection.driver_connection
        assert raw is not None
        with (
            raw.cursor() as cursor,
            cursor.copy(f"COPY {table} ({', '.join(columns)}) FROM STDIN") as copy,
        ):
            for row in rows:
                copy.write_row(row)

    def finish(self) -> None:
        """Move PostgreSQL's id sequences past the ids written, and refresh planner stats."""
        if self.postgres:
            for table in Base.metadata.sorted_tables:
                if "id" not in table.c or table.name not in self.counts:
                    continue
                # The table name comes from the model, never from outside.
                sql = "SELECT setval(pg_get_serial_sequence(:name, 'id'), (SELECT max(id) FROM "
                self.connection.execute(text(sql + table.name + "))"), {"name": table.name})
        self.connection.exec_driver_sql("ANALYZE")
