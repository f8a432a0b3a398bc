"""What is live through a closure: every strand of every cable with a station there.

A strand is `spliced` when an end of it here is spliced, `cut` when it is cut here with
nothing spliced, `express` when it passes through uncut (opening the closure puts it at risk
all the same), `open` when the cable ends here and the strand's end is unconnected. The
circuits on each strand come from the circuits' kept paths: one query per cable, not a walk.
"""

from __future__ import annotations

from collections import defaultdict
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from plantdb.colours import marking, strand_colours
from plantdb.errors import NotFound
from plantdb.model import (
    Cable,
    CircuitStatus,
    Closure,
    Station,
    Structure,
)
from plantdb.safety import CLOSURE_CAUTION
from plantdb.trace.circuits import untraced_circuits
from plantdb.trace.rawsql import RawSql
from plantdb.trace.reader import CableRow, PlantReader

# Each splice at a station with its other end named in the same row: the other strand's
# cable and number, whether that end is at its cable's own end (then no /A or /B), or the leg.
_SPLICES = (
    "SELECT e.strand_id, e.side, y.number, s.slot, s.loss_db, oc.label, os.number, o.side,"
    " NOT EXISTS (SELECT 1 FROM station b WHERE b.cable_id = ost.cable_id AND b.seq < ost.seq)"
    " OR NOT EXISTS (SELECT 1 FROM station b WHERE b.cable_id = ost.cable_id"
    " AND b.seq > ost.seq), sp.label, leg.name"
    " FROM fiber_end e JOIN splice s ON s.id = e.splice_id JOIN tray y ON y.id = s.tray_id"
    " JOIN fiber_end o ON o.splice_id = e.splice_id AND o.splice_side <> e.splice_side"
    " LEFT JOIN strand os ON os.id = o.strand_id LEFT JOIN cable oc ON oc.id = os.cable_id"
    " LEFT JOIN station ost ON ost.id = o.station_id"
    " LEFT JOIN splitter_leg leg ON leg.id = o.leg_id"
    " LEFT JOIN splitter sp ON sp.id = leg.splitter_id"
    " WHERE e.station_id = ?"
)
_CIRCUITS = (
    "SELECT i.strand_id, c.label, c.status, c.path_state FROM circuit_path_item i"
    " JOIN circuit c ON c.id = i.circuit_id"
    " WHERE i.cable_id = ? AND i.lo_seq <= ? AND i.hi_seq >= ? ORDER BY c.label"
)


def _splices_here(sql: RawSql, station_id: int) -> dict[int, list[dict[str, Any]]]:
    """Strand id -> the splices of its ends at this station (tray, slot, side, other end)."""
    found: dict[int, list[dict[str, Any]]] = defaultdict(list)
    for (
        strand_id,
        side,
        tray,
        slot,
        loss,
        o_cable,
        o_number,
        o_side,
        o_end,
        o_splitter,
        o_leg,
    ) in sql.rows(_SPLICES, (station_id,)):
        if o_leg is not None:
            other = f"{o_splitter}:{o_leg}"
        else:
            other = f"{o_cable}:{o_number}" + ("" if o_end else f"/{o_side}")
        found[strand_id].append(
            {"tray": tray, "slot": slot, "side": side, "loss_db": loss, "to": other}
        )
    return found


def _circuits_here(sql: RawSql, cable_id: int, seq: int) -> dict[int, list[dict[str, str]]]:
    """Strand id -> circuits whose kept path uses that strand's glass at this station."""
    found: dict[int, list[dict[str, str]]] = defaultdict(list)
    for strand_id, label, status, state in sql.rows(_CIRCUITS, (cable_id, seq, seq)):
        entry = {"label": label, "status": status}
        if state != "complete":
            entry["path_state"] = state
        if entry not in found[strand_id]:
            found[strand_id].append(entry)
    return found


def _cable_strands(sql: RawSql, cable: CableRow, station_id: int) -> list[dict[str, Any]]:
    station = cable.station(station_id)
    at_end = cable.is_end(station)
    cuts = {r[0] for r in sql.rows("SELECT strand_id FROM cut WHERE station_id = ?", (station_id,))}
    splices = _splices_here(sql, station_id)
    circuits = _circuits_here(sql, cable.id, station.seq)
    has_units = cable.construction != "central_core"
    per_unit = cable.fibers_per_unit if has_units else cable.units * cable.fibers_per_unit
    out = []
    for strand_id, number in sql.rows(
        "SELECT id, number FROM strand WHERE cable_id = ? ORDER BY number", (cable.id,)
    ):
        joined = splices.get(strand_id, [])
        if at_end:
            for splice in joined:
                splice.pop("side")
        if joined:
            state = "spliced"
        elif at_end:
            state = "open"
        else:
            state = "cut" if strand_id in cuts else "express"
        on = circuits.get(strand_id, [])
        out.append(
            {
                "address": f"{cable.label}:{number}",
                "cable": cable.label,
                "strand": number,
                "unit": (number - 1) // cable.fibers_per_unit + 1 if has_units else None,
                "colours": strand_colours(number, per_unit, has_units),
                "swatch": marking((number - 1) % per_unit + 1).hex,
                "state": state,
                "splices": joined,
                "circuits": on,
                "live": any(c["status"] == CircuitStatus.ACTIVE.value for c in on),
            }
        )
    return out


def live_document(session: Session, closure: str) -> dict[str, Any]:
    """The contract's live document for a closure, with its caution."""
    row = session.execute(
        select(Closure.id, Structure.label)
        .join(Structure, Structure.id == Closure.structure_id)
        .where(Closure.label == closure)
    ).first()
    if row is None:
        raise NotFound(f"no closure is labelled {closure}")
    closure_id, structure = row
    reader = PlantReader(session)
    sql = reader.sql
    stations = session.execute(
        select(Station.id, Station.cable_id)
        .join(Cable, Cable.id == Station.cable_id)
        .where(Station.closure_id == closure_id)
        .order_by(Cable.label)
    ).all()
    strands: list[dict[str, Any]] = []
    cables = []
    for station_id, cable_id in stations:
        cable = reader.cable(cable_id)
        station = cable.station(station_id)
        cables.append(
            {
                "cable": cable.label,
                "access": "end" if cable.is_end(station) else "mid-span",
                "mark_m": station.mark_m,
                "toward_a": cable.stations[0].place,
                "toward_b": cable.stations[-1].place,
            }
        )
        strands += _cable_strands(sql, cable, station_id)
    counts: dict[str, int] = defaultdict(int)
    for strand in strands:
        counts[strand["state"]] += 1
    return {
        "closure": closure,
        "structure": structure,
        "cables": cables,
        "strands": strands,
        "summary": {
            "strands": len(strands),
            "live": sum(s["live"] for s in strands),
            **dict(sorted(counts.items())),
        },
        "untraced_circuits": untraced_circuits(sql),
        "caution": CLOSURE_CAUTION,
    }
