"""How much the record holds."""

from __future__ import annotations

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from plantdb.model import (
    Cable,
    Circuit,
    CircuitStatus,
    Closure,
    Cut,
    Equipment,
    FiberEnd,
    FiberType,
    Jumper,
    Panel,
    Span,
    Splice,
    Splitter,
    Strand,
    Structure,
)

_COUNTED = {
    "fiber_types": FiberType,
    "structures": Structure,
    "spans": Span,
    "closures": Closure,
    "panels": Panel,
    "equipment": Equipment,
    "splitters": Splitter,
    "cables": Cable,
    "strands": Strand,
    "cuts": Cut,
    "splices": Splice,
    "jumpers": Jumper,
    "circuits": Circuit,
}


def record_counts(session: Session) -> dict[str, int]:
    """Row counts of the record's main things, and circuits by status."""
    counts = {
        name: int(session.scalar(select(func.count()).select_from(model)) or 0)
        for name, model in _COUNTED.items()
    }
    counts["terminations"] = int(
        session.scalar(select(func.count()).where(FiberEnd.port_id.is_not(None))) or 0
    )
    for status, n in session.execute(select(Circuit.status, func.count()).group_by(Circuit.status)):
        counts[f"circuits_{CircuitStatus(status).value}"] = int(n)
    return counts


def is_empty(session: Session) -> bool:
    """True when the record holds nothing at all."""
    return all(
        session.scalar(select(model.id).limit(1)) is None
        for model in (FiberType, Structure, Cable, Circuit, Panel, Closure, Equipment)
    )
