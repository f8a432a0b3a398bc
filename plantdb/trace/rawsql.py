"""Fixed SQL run straight on the session's driver connection, inside its transaction.

The hot read paths (the walk, live, impact) ask many small questions or fetch many rows;
going to the driver directly skips statement building and result processing that the ORM
and Core would repeat per call. The SQL is plain and portable between SQLite and PostgreSQL;
only the parameter marks differ ("?" here, "%s" for psycopg).
"""

from __future__ import annotations

from typing import Any

from sqlalchemy.orm import Session


class RawSql:
    """Runs SQL text with `?` marks on the session's own driver connection."""

    def __init__(self, session: Session) -> None:
        self._session = session
        connection = session.connection()
        self._raw: Any = connection.connection.driver_connection
        self.postgres = connection.dialect.name == "postgresql"
        self._converted: dict[str, str] = {}

    def rows(self, sql: str, params: tuple[Any, ...] | list[Any] = ()) -> list[Any]:
        # The driver connection belongs to the session's transaction; once that has ended
        # it may be back in the pool, serving someone else. Refuse rather than leak into it.
        if not self._session.in_transaction():
            raise RuntimeError("a plant read was attempted after its session's transaction ended")
        if self.postgres:
            if sql not in self._converted:
                self._converted[sql] = sql.replace("?", "%s")
            sql = self._converted[sql]
        if not isinstance(params, tuple):
            params = tuple(params)
        # Both drivers' fetchall gives a new list already.
        rows: list[Any] = self._raw.execute(sql, params).fetchall()
        return rows
