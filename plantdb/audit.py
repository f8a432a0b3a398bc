"""Who changed the record: the acting person, and the history rows every change writes.

A service that changes the record calls `record_changes` inside the same transaction, so the
history can never disagree with the record: a change rolled back takes its rows with it. Who
acts is a context variable: the web sets it per request (`acting_as(person)`), and a command
run from a shell is `cli:<login name>`.
"""

from __future__ import annotations

import datetime as dt
import getpass
import json
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass
from typing import Any, cast

from sqlalchemy import Connection, Table, insert
from sqlalchemy.orm import Session

from plantdb.bulk import BulkWriter
from plantdb.errors import PlantError
from plantdb.model.history import (
    ACTOR_LENGTH,
    CHANGE_LABEL_LENGTH,
    CONCERNING,
    Change,
    ChangeAction,
)

# The table's own INSERT, one executemany: the ORM's bulk path costs more than the writing.
_CHANGE = cast(Table, Change.__table__)
_actor: ContextVar[str | None] = ContextVar("plantdb_actor", default=None)
UNKNOWN_LOGIN = "unknown"


@contextmanager
def acting_as(name: str) -> Iterator[None]:
    """Within the block, changes are recorded as made by `name`."""
    name = name.strip() if isinstance(name, str) else ""
    if not name:
        raise PlantError("a change must be made by someone: the acting name is empty")
    if len(name) > ACTOR_LENGTH:
        raise PlantError(f"the acting name is longer than {ACTOR_LENGTH} characters")
    token = _actor.set(name)
    try:
        yield
    finally:
        _actor.reset(token)


def _login_name() -> str:
    # getpass.getuser() raises when neither the environment nor the password database names
    # the user (a container running as an unnamed uid): the change is still recorded.
    try:
        return getpass.getuser() or UNKNOWN_LOGIN
    except (OSError, KeyError, ImportError):
        return UNKNOWN_LOGIN


def current_actor() -> str:
    """Who acts now: the name set by `acting_as`, else `cli:<login name>`."""
    return _actor.get() or f"cli:{_login_name()}"[:ACTOR_LENGTH]


def now_utc() -> dt.datetime:
    """The time a change is recorded: UTC, without a zone (as the history keeps it)."""
    return dt.datetime.now(dt.UTC).replace(tzinfo=None)


# Slots, not frozen: a splice-sheet import makes one per splice, and a frozen dataclass's
# __init__ sets each field through object.__setattr__, several times slower.
@dataclass(slots=True)
class ChangeRow:
    """One change to record: what happened to which thing, and what it concerns."""

    action: ChangeAction
    entity: str
    entity_id: int | None
    label: str
    before: dict[str, Any] | None = None
    after: dict[str, Any] | None = None
    closure_id: int | None = None
    cable_id: int | None = None
    other_cable_id: int | None = None
    circuit_id: int | None = None
    panel_id: int | None = None
    other_panel_id: int | None = None
    structure_id: int | None = None
    span_id: int | None = None


# The databases whose drivers get the rows straight (see `plantdb.bulk`).
BULK_DIALECTS = ("sqlite", "postgresql")
_COLUMNS = (
    "at",
    "actor",
    "action",
    "entity",
    "entity_id",
    "label",
    *CONCERNING,
    "before",
    "after",
)


def record_changes(
    session: Session | Connection, rows: Sequence[ChangeRow], *, at: dt.datetime | None = None
) -> int:
    """Write change rows in the caller's transaction, in one statement; how many."""
    if not rows:
        return 0
    connection = session.connection() if isinstance(session, Session) else session
    when, actor = at or now_utc(), current_actor()
    if connection.dialect.name not in BULK_DIALECTS:  # another driver: the ordinary statement
        connection.execute(insert(_CHANGE), [_row_values(row, when, actor) for row in rows])
        return len(rows)
    # Straight to the driver (COPY on PostgreSQL for many rows): the per-row parameter
    # handling of a compiled statement would cost more than the database spends writing,
    # and a splice-sheet import writes a row per splice.
    values = [
        (
            when,
            actor,
            row.action.value,
            row.entity,
            row.entity_id,
            row.label[:CHANGE_LABEL_LENGTH],
            row.closure_id,
            row.cable_id,
            row.other_cable_id,
            row.circuit_id,
            row.panel_id,
            row.other_panel_id,
            row.structure_id,
            row.span_id,
            _json(row.before),
            _json(row.after),
        )
        for row in rows
    ]
    BulkWriter(connection, page_cache=False).write("change", _COLUMNS, values)
    return len(values)


def _row_values(row: ChangeRow, when: dt.datetime, actor: str) -> dict[str, Any]:
    values = {name: getattr(row, name) for name in _COLUMNS if hasattr(row, name)}
    values.update(at=when, actor=actor, label=row.label[:CHANGE_LABEL_LENGTH])
    return values


# Compact JSON from one encoder (json.dumps with options builds a new encoder per call).
_ENCODE = json.JSONEncoder(ensure_ascii=False, separators=(",", ":")).encode


def _json(value: dict[str, Any] | None) -> str | None:
    # JSON text (SQL NULL for None): both drivers send text to a JSON column as it is.
    return None if value is None else _ENCODE(value)
