"""The trace engine's front door: documents for the command line and the web alike."""

from __future__ import annotations

from typing import Any

from sqlalchemy.orm import Session

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
