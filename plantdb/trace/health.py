"""Records health: circuits that no longer reach Z, and connections that break the rules.

Rules the database cannot hold by constraint are checked here in set-wise queries, so a
check of a large plant costs a handful of scans, not a walk per strand.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import and_, func, select
from sqlalchemy.orm import Session, aliased

from plantdb.model import (
    Cable,
    Circuit,
    CircuitStatus,
    Closure,
    Cut,
    FiberEnd,
    FiberType,
    Panel,
    Port,
    Splice,
    Splitter,
    SplitterLeg,
    Station,
    Strand,
)
from plantdb.trace.circuits import COMPLETE, refresh_circuits

# Circuits expected to have a complete path today. A planned circuit may not be built yet,
# and a retired one may have been taken apart: they are listed, but do not fail the check.
MUST_REACH = (CircuitStatus.ACTIVE, CircuitStatus.RESERVED, CircuitStatus.OUT_OF_SERVICE)


def _strand_label(cable: Any, number: Any) -> str:
    return f"{cable}:{number}"


def _ends_outside_their_station(session: Session) -> list[dict[str, str]]:
    """A splice whose strand end lies at a station that is not in the splice's closure."""
    at_closure, at_panel = aliased(Closure), aliased(Panel)
    rows = session.execute(
        select(
            Cable.label,
            Strand.number,
            Closure.label,
            func.coalesce(at_closure.label, at_panel.label),
        )
        .select_from(FiberEnd)
        .join(Splice, Splice.id == FiberEnd.splice_id)
        .join(Closure, Closure.id == Splice.closure_id)
        .join(Station, Station.id == FiberEnd.station_id)
        .outerjoin(at_closure, at_closure.id == Station.closure_id)
        .outerjoin(at_panel, at_panel.id == Station.panel_id)
        .join(Strand, Strand.id == FiberEnd.strand_id)
        .join(Cable, Cable.id == Strand.cable_id)
        .where(func.coalesce(Station.closure_id, -1) != Splice.closure_id)
    ).all()
    return [
        {
            "kind": "splice_outside_station",
            "what": _strand_label(c, n),
            "where": f"spliced in {cl}, but the fiber end it splices lies at {place}",
        }
        for c, n, cl, place in rows
    ]


def _mid_span_ends_without_cut(session: Session) -> list[dict[str, str]]:
    """A connected end at a mid-span station where the strand is not recorded as cut."""
    edge = (
        select(
            Station.cable_id,
            func.min(Station.seq).label("first"),
            func.max(Station.seq).label("last"),
        )
        .group_by(Station.cable_id)
        .subquery()
    )
    rows = session.execute(
        select(Cable.label, Strand.number, Closure.label)
        .select_from(FiberEnd)
        .join(Station, Station.id == FiberEnd.station_id)
        .join(edge, edge.c.cable_id == Station.cable_id)
        .join(Strand, Strand.id == FiberEnd.strand_id)
        .join(Cable, Cable.id == Strand.cable_id)
        .outerjoin(Closure, Closure.id == Station.closure_id)
        .outerjoin(
            Cut, and_(Cut.strand_id == FiberEnd.strand_id, Cut.station_id == FiberEnd.station_id)
        )
        .where(Station.seq > edge.c.first, Station.seq < edge.c.last, Cut.id.is_(None))
    ).all()
    return [
        {
            "kind": "uncut_mid_span_end",
            "what": _strand_label(c, n),
            "where": f"connected mid-span at {cl} without a cut",
        }
        for c, n, cl in rows
    ]


def _terminations_off_panel(session: Session) -> list[dict[str, str]]:
    at_closure, at_panel = aliased(Closure), aliased(Panel)
    rows = session.execute(
        select(
            Cable.label,
            Strand.number,
            Panel.label,
            Port.name,
            func.coalesce(at_closure.label, at_panel.label),
        )
        .select_from(FiberEnd)
        .join(Port, Port.id == FiberEnd.port_id)
        .join(Panel, Panel.id == Port.panel_id)
        .join(Station, Station.id == FiberEnd.station_id)
        .outerjoin(at_closure, at_closure.id == Station.closure_id)
        .outerjoin(at_panel, at_panel.id == Station.panel_id)
        .join(Strand, Strand.id == FiberEnd.strand_id)
        .join(Cable, Cable.id == Strand.cable_id)
        .where(func.coalesce(Station.panel_id, -1) != Port.panel_id)
    ).all()
    return [
        {
            "kind": "termination_off_panel",
            "what": _strand_label(c, n),
            "where": f"terminated on {p}:{port}, but the fiber end lies at {place}, not {p}",
        }
        for c, n, p, port, place in rows
    ]


def _legs_outside_closure(session: Session) -> list[dict[str, str]]:
    rows = session.execute(
        select(Splitter.label, SplitterLeg.name, Closure.label)
        .select_from(FiberEnd)
        .join(SplitterLeg, SplitterLeg.id == FiberEnd.leg_id)
        .join(Splitter, Splitter.id == SplitterLeg.splitter_id)
        .join(Splice, Splice.id == FiberEnd.splice_id)
        .join(Closure, Closure.id == Splice.closure_id)
        .where(func.coalesce(Splitter.closure_id, -1) != Splice.closure_id)
    ).all()
    return [
        {
            "kind": "leg_outside_closure",
            "what": f"{s}:{leg}",
            "where": f"spliced in {c}, not where the splitter is",
        }
        for s, leg, c in rows
    ]


def _broken_splices(session: Session) -> list[dict[str, str]]:
    """A splice that does not join exactly two ends, or joins single-mode to multimode."""
    counts = session.execute(
        select(Splice.id, Closure.label, func.count(FiberEnd.id))
        .join(Closure, Closure.id == Splice.closure_id)
        .outerjoin(FiberEnd, FiberEnd.splice_id == Splice.id)
        .group_by(Splice.id, Closure.label)
        .having(func.count(FiberEnd.id) != 2)
    ).all()
    found = [
        {
            "kind": "splice_not_two_ends",
            "what": f"splice #{sid}",
            "where": f"in {cl} joins {n} end(s)",
        }
        for sid, cl, n in counts
    ]
    one, two = aliased(FiberEnd), aliased(FiberEnd)
    s1, s2 = aliased(Strand), aliased(Strand)
    c1, c2 = aliased(Cable), aliased(Cable)
    t1, t2 = aliased(FiberType), aliased(FiberType)
    mixed = session.execute(
        select(c1.label, s1.number, c2.label, s2.number, Closure.label)
        .select_from(one)
        .join(two, and_(two.splice_id == one.splice_id, two.splice_side == 2))
        .join(Splice, Splice.id == one.splice_id)
        .join(Closure, Closure.id == Splice.closure_id)
        .join(s1, s1.id == one.strand_id)
        .join(c1, c1.id == s1.cable_id)
        .join(t1, t1.id == c1.fiber_type_id)
        .join(s2, s2.id == two.strand_id)
        .join(c2, c2.id == s2.cable_id)
        .join(t2, t2.id == c2.fiber_type_id)
        .where(one.splice_side == 1, t1.mode != t2.mode)
    ).all()
    found += [
        {
            "kind": "mode_mix",
            "what": f"{a}:{n} to {b}:{m}",
            "where": f"single-mode spliced to multimode in {cl}",
        }
        for a, n, b, m, cl in mixed
    ]
    return found


def check_record(session: Session) -> dict[str, Any]:
    """Every records problem found, circuits re-traced; `ok` is False when any must fail."""
    checked = refresh_circuits(session)
    circuits = session.execute(
        select(Circuit.label, Circuit.status, Circuit.path_state, Circuit.path_note)
        .where(Circuit.path_state != COMPLETE)
        .order_by(Circuit.label)
    ).all()
    problems: list[dict[str, Any]] = []
    notices: list[dict[str, Any]] = []
    for label, status, state, note in circuits:
        entry = {
            "kind": f"circuit_{state}",
            "what": label,
            "status": str(status),
            "where": note or "",
        }
        (problems if status in MUST_REACH else notices).append(entry)
    for finder in (
        _ends_outside_their_station,
        _mid_span_ends_without_cut,
        _terminations_off_panel,
        _legs_outside_closure,
        _broken_splices,
    ):
        problems += finder(session)
    return {
        "ok": not problems,
        "circuits_checked": checked,
        "problems": problems,
        "notices": notices,
    }
