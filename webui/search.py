"""Finding things by label (and circuits by customer): the map's search and the search page."""

from __future__ import annotations

from typing import Any

from sqlalchemy import func, or_, select
from sqlalchemy.orm import Session

from plantdb.model import Cable, Circuit, Closure, Equipment, Panel, Span, Structure

MAX_QUERY_CHARS = 64


def _pattern(query: str) -> str:
    escaped = query.lower().replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_")
    return f"%{escaped}%"


def _like(column: Any, pattern: str) -> Any:
    return func.lower(column).like(pattern, escape="\\")


def _placed(
    session: Session, model: Any, kind: str, pattern: str, limit: int
) -> list[dict[str, Any]]:
    rows = session.execute(
        select(model.label, Structure.label.label("structure"), Structure.lon, Structure.lat)
        .join(Structure, Structure.id == model.structure_id)
        .where(_like(model.label, pattern))
        .order_by(model.label)
        .limit(limit)
    ).all()
    return [
        {
            "kind": kind,
            "label": r.label,
            "detail": f"at {r.structure}",
            "structure": r.structure,
            "lon": r.lon,
            "lat": r.lat,
        }
        for r in rows
    ]


def _structures(session: Session, pattern: str, limit: int) -> list[dict[str, Any]]:
    rows = session.execute(
        select(Structure.label, Structure.kind, Structure.lon, Structure.lat, Structure.name)
        .where(or_(_like(Structure.label, pattern), _like(Structure.name, pattern)))
        .order_by(Structure.label)
        .limit(limit)
    ).all()
    return [
        {
            "kind": "structure",
            "label": r.label,
            "detail": str(r.kind).replace("_", " ") + (f", {r.name}" if r.name else ""),
            "lon": r.lon,
            "lat": r.lat,
        }
        for r in rows
    ]


def _spans(session: Session, pattern: str, limit: int) -> list[dict[str, Any]]:
    rows = session.execute(
        select(Span.label, Span.kind, Span.min_lon, Span.max_lon, Span.min_lat, Span.max_lat)
        .where(_like(Span.label, pattern))
        .order_by(Span.label)
        .limit(limit)
    ).all()
    return [
        {
            "kind": "span",
            "label": r.label,
            "detail": str(r.kind),
            "lon": (r.min_lon + r.max_lon) / 2,
            "lat": (r.min_lat + r.max_lat) / 2,
        }
        for r in rows
    ]


def _unplaced(session: Session, pattern: str, limit: int) -> list[dict[str, Any]]:
    cables = session.execute(
        select(Cable.label, Cable.fiber_count)
        .where(_like(Cable.label, pattern))
        .order_by(Cable.label)
        .limit(limit)
    ).all()
    circuits = session.execute(
        select(Circuit.label, Circuit.status, Circuit.customer)
        .where(or_(_like(Circuit.label, pattern), _like(Circuit.customer, pattern)))
        .order_by(Circuit.label)
        .limit(limit)
    ).all()
    found = [
        {"kind": "cable", "label": r.label, "detail": f"{r.fiber_count} fibers"} for r in cables
    ]
    for r in circuits:
        detail = str(r.status).replace("_", " ") + (f", {r.customer}" if r.customer else "")
        found.append({"kind": "circuit", "label": r.label, "detail": detail})
    return found


def search(session: Session, query: str, limit: int = 20) -> list[dict[str, Any]]:
    """Things whose label holds `query` (any letter case), exact and prefix matches first."""
    query = query.strip()[:MAX_QUERY_CHARS]
    if not query:
        return []
    pattern = _pattern(query)
    found = (
        _structures(session, pattern, limit)
        + _spans(session, pattern, limit)
        + _placed(session, Closure, "closure", pattern, limit)
        + _placed(session, Panel, "panel", pattern, limit)
        + _placed(session, Equipment, "equipment", pattern, limit)
        + _unplaced(session, pattern, limit)
    )
    wanted = query.lower()

    def rank(item: dict[str, Any]) -> tuple[int, str]:
        label = str(item["label"]).lower()
        return (0 if label == wanted else 1 if label.startswith(wanted) else 2), label

    return sorted(found, key=rank)[:limit]
