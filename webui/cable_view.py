"""A cable's strands as its page shows them: colours, the state at every station, circuits.

At a closure the state is the live-through-closure answer's (spliced, cut, express, open), so
the cable page and the closure page never disagree; at a panel a strand is terminated on a
port or open.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from plantdb.colours import Marking
from plantdb.model import Circuit, CircuitPathItem, FiberEnd, Panel, Port, Strand
from plantdb.trace.dispatch import live_document
from plantdb.trace.rows import CableRow, StationRow
from webui.views import strand_markings


@dataclass
class StrandLine:
    """One strand of the cable: its markings, its state at each station, its circuits."""

    number: int
    unit: int
    unit_mark: Marking | None
    fiber_mark: Marking
    states: list[dict[str, Any]] = field(default_factory=list)
    circuits: list[dict[str, str]] = field(default_factory=list)


def _closure_states(
    session: Session, cable: CableRow, station: StationRow
) -> dict[int, dict[str, Any]]:
    live = live_document(session, station.place)
    found = {}
    for strand in live["strands"]:
        if strand["cable"] != cable.label:
            continue
        joined = [f"T{s['tray']}/S{s['slot']} to {s['to']}" for s in strand["splices"]]
        found[strand["strand"]] = {"state": strand["state"], "detail": "; ".join(joined)}
    return found


def _panel_states(
    session: Session, cable: CableRow, station: StationRow
) -> dict[int, dict[str, Any]]:
    rows = session.execute(
        select(Strand.number, Panel.label, Port.name)
        .join(FiberEnd, FiberEnd.strand_id == Strand.id)
        .join(Port, Port.id == FiberEnd.port_id)
        .join(Panel, Panel.id == Port.panel_id)
        .where(Strand.cable_id == cable.id, FiberEnd.station_id == station.id)
    ).all()
    terminated = {number: f"{panel}:{port}" for number, panel, port in rows}
    return {
        n: {
            "state": "terminated",
            "detail": terminated[n],
            "panel": terminated[n].partition(":")[0],
        }
        for n in terminated
    }


def _circuits(session: Session, cable_id: int) -> dict[int, list[dict[str, str]]]:
    rows = session.execute(
        select(Strand.number, Circuit.label, Circuit.status)
        .join(CircuitPathItem, CircuitPathItem.strand_id == Strand.id)
        .join(Circuit, Circuit.id == CircuitPathItem.circuit_id)
        .where(Strand.cable_id == cable_id)
        .distinct()
        .order_by(Strand.number, Circuit.label)
    ).all()
    found: dict[int, list[dict[str, str]]] = defaultdict(list)
    for number, label, status in rows:
        found[number].append({"label": label, "status": str(status)})
    return found


def strand_lines(session: Session, cable: CableRow) -> list[StrandLine]:
    """Every strand of the cable, in number order."""
    per_station = []
    for station in cable.stations:
        if station.closure:
            per_station.append(_closure_states(session, cable, station))
        else:
            per_station.append(_panel_states(session, cable, station))
    circuits = _circuits(session, cable.id)
    count = cable.units * cable.fibers_per_unit
    lines = []
    for number in range(1, count + 1):
        unit_mark, fiber_mark = strand_markings(
            number, cable.construction, cable.fibers_per_unit, count
        )
        line = StrandLine(number, (number - 1) // cable.fibers_per_unit + 1, unit_mark, fiber_mark)
        for states in per_station:
            line.states.append(states.get(number, {"state": "open", "detail": ""}))
        line.circuits = circuits.get(number, [])
        lines.append(line)
    return lines
