"""The trace engine's front door: documents for the command line and the web alike."""

from __future__ import annotations

from typing import Any

from sqlalchemy.orm import Session

from plantdb.errors import PlantError
from plantdb.trace.budget import loss_document
from plantdb.trace.circuits import mark_lit
from plantdb.trace.loss import LossOptions
from plantdb.trace.reader import PlantReader
from plantdb.trace.tracing import trace


def trace_document(session: Session, kind: str, value: str) -> dict[str, Any]:
    """The contract's trace document, lit elements marked."""
    result = trace(PlantReader(session), kind, value)
    mark_lit(session, result.paths)
    return result.to_json()


def loss_report(session: Session, kind: str, value: str, options: LossOptions) -> dict[str, Any]:
    """The contract's loss document for a circuit or a port."""
    reader = PlantReader(session)
    return loss_document(reader, trace(reader, kind, value), value, options)


def trace_with_loss(
    session: Session, kind: str, value: str, options: LossOptions
) -> tuple[dict[str, Any], dict[str, Any] | None]:
    """The trace and, where the path allows one, its loss document, from a single walk.

    The loss is None when it cannot be counted (a circuit that does not reach Z, a path with
    a records error); the trace still shows where the walk goes.
    """
    reader = PlantReader(session)
    result = trace(reader, kind, value)
    mark_lit(session, result.paths)
    try:
        loss = loss_document(reader, result, value, options)
    except PlantError:
        loss = None
    return result.to_json(), loss
