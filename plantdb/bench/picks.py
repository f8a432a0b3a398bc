"""What the suite measures on a plant: the longest circuit, the busiest closure and span,
and a 2 km x 2 km viewport in the middle of the map."""

from __future__ import annotations

import math
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from plantdb.errors import PlantError
from plantdb.model import (
    Cable,
    CableSpan,
    Circuit,
    CircuitPathItem,
    Closure,
    Span,
    Splice,
    Structure,
)

VIEWPORT_M = 2000.0
M_PER_DEG = 111_195.0


def busiest(session: Session) -> dict[str, Any]:
    """Labels (and ids for the baselines) of the things the suite measures."""
    count = func.count(CircuitPathItem.id)
    longest = session.execute(
        select(Circuit.label)
        .join(CircuitPathItem, CircuitPathItem.circuit_id == Circuit.id)
        .where(Circuit.path_state == "complete")
        .group_by(Circuit.id, Circuit.label)
        .order_by(count.desc(), Circuit.label)
        .limit(1)
    ).scalar()
    splices = func.count(Splice.id)
    closure = session.execute(
        select(Closure.id, Closure.label)
        .join(Splice, Splice.closure_id == Closure.id)
        .group_by(Closure.id, Closure.label)
        .order_by(splices.desc(), Closure.label)
        .limit(1)
    ).first()
    strands = func.sum(Cable.fiber_count)
    span = session.execute(
        select(Span.id, Span.label)
        .join(CableSpan, CableSpan.span_id == Span.id)
        .join(Cable, Cable.id == CableSpan.cable_id)
        .group_by(Span.id, Span.label)
        .order_by(strands.desc(), Span.label)
        .limit(1)
    ).first()
    if longest is None or closure is None or span is None:
        raise PlantError("the benchmark needs a plant with circuits, splices and cables")
    west, south, east, north = session.execute(
        select(
            func.min(Structure.lon),
            func.min(Structure.lat),
            func.max(Structure.lon),
            func.max(Structure.lat),
        )
    ).one()
    lon, lat = (west + east) / 2, (south + north) / 2
    half_lat = VIEWPORT_M / 2 / M_PER_DEG
    half_lon = half_lat / math.cos(math.radians(lat))
    return {
        "circuit": longest,
        "closure_id": closure[0],
        "closure": closure[1],
        "span_id": span[0],
        "span": span[1],
        "bbox": (lon - half_lon, lat - half_lat, lon + half_lon, lat + half_lat),
    }
