"""Changing a circuit's status (planned, reserved, active, out of service, retired).

A status change touches no connection, so the circuit's kept path stays as it is; whether its
strands count as lit follows from the new status at the next question.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from plantdb.errors import NotFound, PlantError
from plantdb.model import Circuit, CircuitStatus

STATUSES = tuple(s.value for s in CircuitStatus)


def set_circuit_status(session: Session, label: str, status: str) -> dict[str, Any]:
    """Set a circuit's status inside the caller's transaction; what it was and what it is."""
    wanted = status.strip().lower()
    if wanted not in STATUSES:
        raise PlantError(f"circuit {label}: status {status!r} is not one of {', '.join(STATUSES)}")
    circuit = session.scalar(select(Circuit).where(Circuit.label == label).with_for_update())
    if circuit is None:
        raise NotFound(f"no circuit is labelled {label}")
    previous = CircuitStatus(circuit.status).value
    circuit.status = CircuitStatus(wanted)
    session.flush()
    return {"circuit": label, "previous": previous, "status": wanted, "changed": previous != wanted}
