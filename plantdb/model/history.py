"""The audit history: one row per insert, update or delete of the record, who and when.

Rows are written by the services in the same transaction as the change they describe
(`plantdb.audit.record_changes`), so a change is never in the record without its history,
nor its history without the change. They hold no foreign keys: the history of a thing
outlives the thing.
"""

from __future__ import annotations

import datetime as dt
import enum
from typing import Any

from sqlalchemy import JSON, DateTime, Index, Integer, String, text
from sqlalchemy.orm import Mapped, mapped_column

from plantdb.model.base import Base
from plantdb.model.types import enum_type

ACTOR_LENGTH = 100
CHANGE_LABEL_LENGTH = 200


class ChangeAction(enum.StrEnum):
    INSERT = "insert"
    UPDATE = "update"
    DELETE = "delete"


# What a change concerns, each column indexed for the history of a closure, cable, circuit,
# panel, structure or span.
CONCERNING = (
    "closure_id",
    "cable_id",
    "other_cable_id",
    "circuit_id",
    "panel_id",
    "other_panel_id",
    "structure_id",
    "span_id",
)


def _concerning_index(column: str) -> Index:
    # Partial: most changes concern one or two of these, and an index entry for every NULL
    # would cost each of the thousands of rows a splice-sheet import writes for nothing.
    # "column = value" implies "column IS NOT NULL", so both databases use it for the lookups.
    where = text(f"{column} IS NOT NULL")
    return Index(f"ix_change_{column}", column, sqlite_where=where, postgresql_where=where)


class Change(Base):
    """One change of one thing of the record, with its values before and after (as JSON).

    `closure_id`, `cable_id` (and `other_cable_id`, the second cable of a splice),
    `circuit_id`, `panel_id` (and `other_panel_id`, the second panel of a jumper),
    `structure_id` and `span_id` name what the change concerns, for the history of each kind
    of thing; each is indexed.
    """

    __tablename__ = "change"
    __table_args__ = tuple(_concerning_index(column) for column in CONCERNING)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    # UTC, without a zone: the same on every backend.
    at: Mapped[dt.datetime] = mapped_column(DateTime())
    actor: Mapped[str] = mapped_column(String(ACTOR_LENGTH))
    action: Mapped[ChangeAction] = mapped_column(enum_type(ChangeAction, "action"))
    entity: Mapped[str] = mapped_column(String(32))
    entity_id: Mapped[int | None] = mapped_column(Integer)
    label: Mapped[str] = mapped_column(String(CHANGE_LABEL_LENGTH))
    closure_id: Mapped[int | None] = mapped_column(Integer)
    cable_id: Mapped[int | None] = mapped_column(Integer)
    other_cable_id: Mapped[int | None] = mapped_column(Integer)
    circuit_id: Mapped[int | None] = mapped_column(Integer)
    panel_id: Mapped[int | None] = mapped_column(Integer)
    other_panel_id: Mapped[int | None] = mapped_column(Integer)
    structure_id: Mapped[int | None] = mapped_column(Integer)
    span_id: Mapped[int | None] = mapped_column(Integer)
    # SQL NULL (not a JSON null) where there is no before (an insert) or after (a delete).
    before: Mapped[dict[str, Any] | None] = mapped_column(JSON(none_as_null=True))
    after: Mapped[dict[str, Any] | None] = mapped_column(JSON(none_as_null=True))
