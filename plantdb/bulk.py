"""Fast bulk loading of rows: COPY on PostgreSQL, executemany on SQLite.

For generators that build a whole plant into an empty database (millions of rows), and for a
splice-sheet import's hundred thousand splices: the ORM's unit of work, or even Core's
per-row parameter handling, would dominate the time. Rows are plain tuples in the order of
`columns`; ids are the caller's or, where the caller leaves the column out, the database's.
"""

from __future__ import annotations

import gc
import json
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextlib import contextmanager
from typing import Any

from sqlalchemy import Connection, Date, DateTime, text
from sqlalchemy.exc import DBAPIError

from plantdb.model import Base

JSON_COLUMNS = {("span", "geometry")}
# From this many rows PostgreSQL gets COPY; fewer (a clerk's few splices) go as one INSERT
# executemany, which costs less to set up and is an ordinary statement to everything watching.
COPY_ROWS = 1_000


class BulkWriter:
    """Writes tuples into tables over one connection, inside the caller's transaction."""

    def __init__(self, connection: Connection, *, page_cache: bool = True) -> None:
        self.connection = connection
        self.postgres = connection.dialect.name == "postgresql"
        self.counts: dict[str, int] = {}
        if not self.postgres and page_cache:
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
        convert = self._converters(table, columns)
        if convert:
            batch = [
                tuple(convert[i](v) if i in convert else v for i, v in enumerate(row))
                for row in batch
            ]
        if self.postgres and len(batch) >= COPY_ROWS:
            self._copy(table, columns, batch)
        else:
            mark = "?" if self.connection.dialect.paramstyle == "qmark" else "%s"
            marks = ", ".join(mark for _ in columns)
            statement = f'INSERT INTO "{table}" ({_names(columns)}) VALUES ({marks})'  # noqa: S608
            self.connection.exec_driver_sql(statement, batch)
        self.counts[table] = self.counts.get(table, 0) + len(batch)

    def _converters(self, table: str, columns: Sequence[str]) -> dict[int, Callable[[Any], Any]]:
        """Per column position, what turns a Python value into the driver's value.

        JSON goes as its text. On SQLite dates and times go as SQLAlchemy stores them (the
        column type's own bind processor), not through the sqlite3 module's adapters.
        """
        found: dict[int, Callable[[Any], Any]] = {}
        known = Base.metadata.tables[table]
        for i, name in enumerate(columns):
            if (table, name) in JSON_COLUMNS:
                found[i] = json.dumps
            elif not self.postgres and isinstance(known.c[name].type, Date | DateTime):
                # The dialect's own implementation of the type: the generic type has no
                # processor, and the value would reach sqlite3's adapters (another format).
                dialect = self.connection.dialect
                process = known.c[name].type.dialect_impl(dialect).bind_processor(dialect)
                if process is not None:
                    found[i] = process
        return found

    def _copy(self, table: str, columns: Sequence[str], rows: list[Sequence[Any]]) -> None:
        import psycopg

        raw = self.connection.connection.driver_connection
        assert raw is not None
        statement = f'COPY "{table}" ({_names(columns)}) FROM STDIN'
        try:
            with raw.cursor() as cursor, cursor.copy(statement) as copy:
                for row in rows:
                    copy.write_row(row)
        except psycopg.Error as exc:
            # Raised as SQLAlchemy raises a statement's error (a unique violation becomes its
            # IntegrityError), so that callers that tell a lost race from a mistake, and the
            # retrying transaction, see COPY's errors as they see an INSERT's.
            raise DBAPIError.instance(statement, None, exc, psycopg.Error) from exc

    def finish(self) -> None:
        """Move PostgreSQL's id sequences past the ids written, and refresh planner stats."""
        if self.postgres:
            for table in Base.metadata.sorted_tables:
                if "id" not in table.c or table.name not in self.counts:
                    continue
                # The table name comes from the model, never from outside.
                sql = "SELECT setval(pg_get_serial_sequence(:name, 'id'), (SELECT max(id) FROM "
                self.connection.execute(text(sql + table.name + "))"), {"name": table.name})
        # Only the tables written, in this schema: a bare ANALYZE would visit every table of
        # the database, other schemas' included, and queue behind (or deadlock with) whatever
        # else holds their locks. One table per statement, as SQLite's ANALYZE takes one name.
        for name in sorted(self.counts):
            self.connection.exec_driver_sql(f'ANALYZE "{name}"')


def _names(columns: Sequence[str]) -> str:
    # Quoted: a column may be named by an SQL keyword (the history's "before" and "after").
    return ", ".join(f'"{name}"' for name in columns)


@contextmanager
def collector_paused() -> Iterator[None]:
    """Pause CPython's cyclic garbage collector for bulk work (a big sheet read or checked).

    Such work builds hundreds of thousands of long-lived objects and no cycles; the
    generational collector would rescan them over and over (about a third of the time).
    Reference counting still frees everything; the previous setting is restored after.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()
