"""Reading the audit history: the changes of a closure, a cable, a circuit, a panel, a
structure or a span, and the last change of one thing (named when an edit is refused because
someone changed it first).
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from sqlalchemy import ColumnElement, or_, select
from sqlalchemy.orm import Session

from plantdb.errors import NotFound, PlantError
from plantdb.model import Cable, Change, Circuit, Closure, Panel, Span, Structure

KINDS = ("closure", "cable", "circuit", "panel", "structure", "span")
VERBS = {"insert": "added", "update": "changed", "delete": "removed"}
_TABLES: dict[str, Any] = {
    "closure": Closure,
    "cable": Cable,
    "circuit": Circuit,
    "panel": Panel,
    "structure": Structure,
    "span": Span,
}
# kind -> the columns of `change` naming a thing of that kind (any of them).
_CONCERNING: dict[str, tuple[Any, ...]] = {
    "closure": (Change.closure_id,),
    # A splice concerns both its cables, a jumper both its panels: either column, each indexed.
    "cable": (Change.cable_id, Change.other_cable_id),
    "circuit": (Change.circuit_id,),
    "panel": (Change.panel_id, Change.other_panel_id),
    "structure": (Change.structure_id,),
    "span": (Change.span_id,),
}


def target_id(session: Session, kind: str, label: str) -> int:
    """The id of the thing of this kind (closure, cable, circuit...) labelled `label`."""
    if kind not in _TABLES:
        raise PlantError(f"history is kept by {', '.join(KINDS)}, not {kind!r}")
    table = _TABLES[kind]
    found = session.scalar(select(table.id).where(table.label == label))
    if found is None:
        raise NotFound(f"no {kind} is labelled {label}")
    return int(found)


def concerning(kind: str, thing_id: int) -> ColumnElement[bool]:
    """The condition selecting the changes that concern one thing of a kind with a history."""
    return or_(*(column == thing_id for column in _CONCERNING[kind]))


def change_document(change: Change) -> dict[str, Any]:
    """A change as a JSON document."""
    return {
        "id": change.id,
        "at": change.at.isoformat(timespec="seconds") + "Z",
        "actor": change.actor,
        "action": str(change.action),
        "entity": change.entity,
        "entity_id": change.entity_id,
        "label": change.label,
        "before": change.before,
        "after": change.after,
    }


def history_document(
    session: Session,
    kind: str,
    label: str,
    *,
    since: dt.datetime | None = None,
    latest: int | None = None,
    skip: int = 0,
) -> dict[str, Any]:
    """The changes of a closure, cable, circuit, panel, structure or span, oldest first; with
    `latest`, only the newest N (after skipping the newest `skip`), newest first."""
    thing_id = target_id(session, kind, label)
    query = select(Change).where(concerning(kind, thing_id))
    if since is not None:
        query = query.where(Change.at >= since)
    if latest is not None:
        query = query.order_by(Change.id.desc()).offset(skip).limit(latest)
    else:
        query = query.order_by(Change.id)
    changes = list(session.scalars(query))
    return {
        "target": {"kind": kind, "label": label},
        "since": since.isoformat(timespec="seconds") + "Z" if since else None,
        "changes": [change_document(c) for c in changes],
    }


def _shown(value: object) -> str:
    return "none" if value is None else str(value)


def change_summary(document: dict[str, Any]) -> str:
    """What a change did, in a few words: the fields it changed, or what it joins."""
    before, after = document["before"] or {}, document["after"] or {}
    if document["action"] == "update":
        return ", ".join(
            f"{key} {_shown(before.get(key))} -> {_shown(after.get(key))}"
            for key in sorted(set(before) | set(after))
            if before.get(key) != after.get(key)
        )
    item = after or before
    if "a" in item and "b" in item:
        return f"{item['a']} to {item['b']}"
    return ""


def last_change(
    session: Session, entity: str, entity_id: int, within: tuple[str, int]
) -> Change | None:
    """The latest recorded change of one thing, looked for among the changes of the closure,
    cable, circuit... (kind, id) it belongs to (so on an index, not the whole history)."""
    return session.scalar(
        select(Change)
        .where(concerning(*within), Change.entity == entity, Change.entity_id == entity_id)
        .order_by(Change.id.desc())
        .limit(1)
    )


def changed_since(
    session: Session, entity: str, entity_id: int, within: tuple[str, int], what: str
) -> str:
    """The refusal of an edit made on a stale page: what changed, by whom and when."""
    change = last_change(session, entity, entity_id, within)
    by = ""
    if change is not None:
        verb = VERBS[str(change.action)]
        by = f" ({verb} by {change.actor} at {change.at:%Y-%m-%d %H:%M} UTC)"
    return (
        f"{what} was changed by someone else since you opened it{by}; nothing was changed:"
        " look at it again and redo your change if it still applies"
    )
