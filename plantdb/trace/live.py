"""What is live through a closure: every strand of every cable with a station there.

A strand is `spliced` when an end of it here is spliced, `cut` when it is cut here with
nothing spliced, `express` when it passes through uncut (opening the closure puts it at risk
all the same), `open` when the cable ends here and the strand's end is unconnected. The
circuits on each strand come from the circuits' kept paths: one query per cable, not a walk.
"""

from __future__ import annotations

from collections import defaultdict
from typing import Any

from sqlalchemy import and_, select
from sqlalchemy.orm import Session, aliased

from plantdb.colours import marking, strand_colours
from plantdb.errors import NotFound
from plantdb.model import (
    Cable,
    Circuit,
    CircuitPathItem,
    CircuitStatus,
    Closure,
    Cut,
    FiberEnd,
    Splice,
    Station,
    Strand,
    Structure,
    Tray,
)
from plantdb.safety import CLOSURE_CAUTION
from plantdb.trace.reader import CableRow, PlantReader


def _splices_here(session: Session, station_id: int) -> dict[int | None, list[dict[str, Any]]]:
    """Strand id -> the splices of its ends at this station (tray, slot, side, other end)."""
    other = aliased(FiberEnd)
    rows = session.execute(
        select(
            FiberEnd.strand_id,
            FiberEnd.side,
            Tray.number,
            Splice.slot,
            Splice.loss_db,
            other.strand_id,
            other.station_id,
            other.side,
            other.leg_id,
        )
        .join(Splice, Splice.id == FiberEnd.splice_id)
        .join(Tray, Tray.id == Splice.tray_id)
        .join(
            other,
            and_(other.splice_id == FiberEnd.splice_id, other.splice_side != FiberEnd.splice_side),
        )
        .where(FiberEnd.station_id == station_id)
    ).all()
    found: dict[int | None, list[dict[str, Any]]] = defaultdict(list)
    for strand_id, side, tray, slot, loss, o_strand, o_station, o_side, o_leg in rows:
        found[strand_id].append(
            {
                "tray": tray,
                "slot": slot,
                "side": str(side),
                "loss_db": loss,
                "_other": (o_strand, o_station, str(o_side) if o_side else None, o_leg),
            }
        )
    return found


def _circuits_here(
    session: Session, cable_id: int, seq: int
) -> dict[int | None, list[dict[str, str]]]:
    """Strand id -> circuits whose kept path uses that strand's glass at this station."""
    rows = session.execute(
        select(CircuitPathItem.strand_id, Circuit.label, Circuit.status, Circuit.path_state)
        .join(Circuit, Circuit.id == CircuitPathItem.circuit_id)
        .where(
            CircuitPathItem.cable_id == cable_id,
            CircuitPathItem.lo_seq <= seq,
            CircuitPathItem.hi_seq >= seq,
        )
        .order_by(Circuit.label)
    ).all()
    found: dict[int | None, list[dict[str, str]]] = defaultdict(list)
    for strand_id, label, status, state in rows:
        entry = {"label": label, "status": str(status)}
        if state != "complete":
            entry["path_state"] = str(state)
        if entry not in found[strand_id]:
            found[strand_id].append(entry)
    return found


def _name_other(reader: PlantReader, other: tuple[Any, ...]) -> str:
    strand_id, station_id, side, leg_id = other
    if leg_id is not None:
        splitter, name = reader.splitter_of_leg(leg_id)
        return f"{splitter.label}:{name}"
    cable, number = reader.strand(strand_id)
    station = cable.station(station_id)
    return f"{cable.label}:{number}" + ("" if cable.is_end(station) else f"/{side}")


def _cable_strands(
    session: Session, reader: PlantReader, cable: CableRow, station_id: int
) -> list[dict[str, Any]]:
    station = cable.station(station_id)
    at_end = cable.is_end(station)
    cuts = set(session.scalars(select(Cut.strand_id).where(Cut.station_id == station_id)))
    splices = _splices_here(session, station_id)
    circuits = _circuits_here(session, cable.id, station.seq)
    has_units = cable.construction != "central_core"
    per_unit = cable.fibers_per_unit if has_units else cable.units * cable.fibers_per_unit
    out = []
    for strand_id, number in session.execute(
        select(Strand.id, Strand.number).where(Strand.cable_id == cable.id).order_by(Strand.number)
    ):
        joined = splices.get(strand_id, [])
        for splice in joined:
            splice["to"] = _name_other(reader, splice.pop("_other"))
            if at_end:
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
        strands += _cable_strands(session, reader, cable, station_id)
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
        "caution": CLOSURE_CAUTION,
    }
