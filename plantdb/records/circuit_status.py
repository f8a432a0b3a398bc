"""Changing a circuit's status (planned, reserved, active, out of service, retired).

A status change touches no connection, so the circuit's kept path stays as it is; whether its
strands count as lit follows from the new status at the next question. Each change bumps the
circuit's version and writes its history row in the same transaction; a change made on a page
that showed an older version is refused rather than applied over someone else's.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from plantdb.audit import ChangeRow, record_changes
from plantdb.errors import ConflictError, NotFound, PlantError
from plantdb.model import ChangeAction, Circuit, CircuitStatus
from plantdb.records.history import changed_since

STATUSES = tuple(s.value for s in CircuitStatus)


def set_circuit_status(
    session: Session, label: str, status: str, *, version: int | None = None
) -> dict[str, Any]:
    """Set a circuit's status inside the caller's transaction; what it was and what it is.

    `version` is the circuit's version as the page showed it (None: as it is now); a
    `ConflictError` when someone changed the circuit since.
    """
    wanted = status.strip().lower()
    if wanted not in STATUSES:
        raise PlantError(f"circuit {label}: status {status!r} is not one of {', '.join(STATUSES)}")
    circuit = session.scalar(select(Circuit).where(Circuit.label == label).with_for_update())
    if circuit is None:
        raise NotFound(f"no circuit is labelled {label}")
    if version is not None and version != circuit.version:
        within = ("circuit", circuit.id)
        raise ConflictError(
            changed_since(session, "circuit", circuit.id, within, f"circuit {label}")
        )
    previous = CircuitStatus(circuit.status).value
    if previous != wanted:
        circuit.status = CircuitStatus(wanted)
        circuit.version += 1
        record_changes(session, [_status_change(circuit, previous, wanted)])
    session.flush()
    return {
        "circuit": label,
        "previous": previous,
        "status": wanted,
        "changed": previous != wanted,
        "version": circuit.version,
    }


def _status_change(circuit: Circuit, previous: str, wanted: str) -> ChangeRow:
    return ChangeRow(
        ChangeAction.UPDATE,
        "circuit",
        circuit.id,
        f"circuit {circuit.label}",
        {"label": circuit.label, "status": previous},
        {"label": circuit.label, "status": wanted},
        circuit_id=circuit.id,
    )
