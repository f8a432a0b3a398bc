"""Circuits over the plant: their paths kept indexed, and which strands are lit.

A strand is lit when an active circuit's path uses it. Walking every circuit to answer that
would cost the whole plant per question, so each circuit's traced path is kept as rows of
`circuit_path_item` (the strands and the piece of each it uses, the ports, the splitters) and
rewritten whenever the connections under the circuit change. Any service that changes
splices, cuts, terminations or jumpers calls `refresh_affected` in the same transaction.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterable
from typing import Any

from sqlalchemy import delete, insert, or_, select, update
from sqlalchemy.orm import Session

from plantdb.errors import PlantError
from plantdb.model import Circuit, CircuitPathItem, CircuitStatus
from plantdb.model.circuits import UNTRACED
from plantdb.trace.elements import TracedPath
from plantdb.trace.rawsql import RawSql
from plantdb.trace.reader import PlantReader
from plantdb.trace.tracing import circuit_path

COMPLETE = "complete"
INCOMPLETE = "incomplete"
NO_Z = "no_z"
RECORDS_ERROR = UNTRACED


def _items(reader: PlantReader, circuit_id: int, path: TracedPath) -> list[dict[str, Any]]:
    rows = []
    for position, element in enumerate(path.elements):
        row: dict[str, Any] = {"circuit_id": circuit_id, "position": position, "kind": element.kind}
        refs = element.refs
        if element.kind == "fiber":
            cable = reader.cable(refs["cable_id"])
            seqs = sorted((refs["from_seq"], refs["to_seq"]))
            index = {s.seq: s.path_index for s in cable.stations}
            row.update(
                strand_id=refs["strand_id"],
                cable_id=refs["cable_id"],
                lo_seq=seqs[0],
                hi_seq=seqs[1],
                lo_index=index[seqs[0]],
                hi_index=index[seqs[1]],
            )
        elif "port_id" in refs:
            row["port_id"] = refs["port_id"]
        elif element.kind == "splitter":
            row["splitter_id"] = refs["splitter_id"]
        else:
            continue
        rows.append(row)
    return rows


def refresh_circuits(session: Session, circuit_ids: Iterable[int] | None = None) -> int:
    """Re-trace circuits (all when None) and rewrite their path items; how many were done."""
    query = select(Circuit.id, Circuit.a_port_id, Circuit.z_port_id)
    wanted = None if circuit_ids is None else sorted(set(circuit_ids))
    if wanted is not None:
        if not wanted:
            return 0
        query = query.where(Circuit.id.in_(wanted))
    circuits = session.execute(query).all()
    reader = PlantReader(session)
    ids = [c[0] for c in circuits]
    for chunk in range(0, len(ids), 500):
        session.execute(
            delete(CircuitPathItem).where(CircuitPathItem.circuit_id.in_(ids[chunk : chunk + 500]))
        )
    rows: list[dict[str, Any]] = []
    states = []
    for circuit_id, a_port, z_port in circuits:
        state, note = COMPLETE, None
        try:
            path, every = circuit_path(reader, a_port, z_port)
        except PlantError as exc:
            path, state, note = None, RECORDS_ERROR, exc.message
        else:
            if z_port is None:
                state, note = NO_Z, "no Z end recorded"
            elif path is None:
                stops = ", ".join(sorted({f"{p.end.kind} at {p.end.at}" for p in every}))
                state, note = INCOMPLETE, f"the walk from A stops at {stops}"
        if path is not None:
            rows += _items(reader, circuit_id, path)
        elif state in (INCOMPLETE, NO_Z):
            # A broken circuit, or one whose Z end was never recorded, still rides everything
            # its A end reaches: keep those steps, so a cut or an opened closure there still
            # names it.
            for partial in every:
                rows += _items(reader, circuit_id, partial)
        states.append(
            {
                "id": circuit_id,
                "path_state": state,
                "path_note": note,
                "a_address": reader.port(a_port).address,
                "z_address": reader.port(z_port).address if z_port else None,
            }
        )
    if rows:
        session.execute(insert(CircuitPathItem), rows)
    if states:
        session.execute(update(Circuit), states)
    return len(circuits)


def refresh_affected(
    session: Session,
    strand_ids: Iterable[int] = (),
    port_ids: Iterable[int] = (),
    splitter_ids: Iterable[int] = (),
) -> int:
    """Re-trace the circuits whose paths touch these, and every circuit not yet complete
    (a new connection may complete it)."""
    strands, ports, splitters = set(strand_ids), set(port_ids), set(splitter_ids)
    conditions = [Circuit.path_state.is_(None), Circuit.path_state != COMPLETE]
    touched: set[int] = set(session.scalars(select(Circuit.id).where(or_(*conditions))))
    for column, values in (
        (CircuitPathItem.strand_id, strands),
        (CircuitPathItem.port_id, ports),
        (CircuitPathItem.splitter_id, splitters),
    ):
        ordered = sorted(values)
        for chunk in range(0, len(ordered), 500):
            touched.update(
                session.scalars(
                    select(CircuitPathItem.circuit_id).where(
                        column.in_(ordered[chunk : chunk + 500])
                    )
                )
            )
    return refresh_circuits(session, touched)


_LIT = (
    "SELECT i.strand_id, i.lo_seq, i.hi_seq, i.port_id, c.label, c.status"
    " FROM circuit_path_item i JOIN circuit c ON c.id = i.circuit_id"
    " WHERE i.strand_id IN ({strands}) OR i.port_id IN ({ports})"
)
_CHUNK = 64  # ids per statement: a few statements per trace, each on its index


def _lit_rows(sql: RawSql, strands: list[int], ports: list[int]) -> list[Any]:
    rows: list[Any] = []
    for start in range(0, max(len(strands), len(ports)), _CHUNK):
        some, others = strands[start : start + _CHUNK], ports[start : start + _CHUNK]
        # Padded to a fixed size so the statement text (and its cached plan) repeats;
        # only "?" marks are formatted in, every id is bound as a parameter.
        statement = _LIT.format(strands=", ".join("?" * _CHUNK), ports=", ".join("?" * _CHUNK))
        padded = some + [-1] * (_CHUNK - len(some)) + others + [-1] * (_CHUNK - len(others))
        rows += sql.rows(statement, padded)
    return rows


def mark_lit(session: Session, paths: list[TracedPath]) -> None:
    """Mark each fiber element (and port) that an active circuit's path uses, naming them."""
    strands = {e.refs["strand_id"] for p in paths for e in p.elements if e.kind == "fiber"}
    ports = {e.refs["port_id"] for p in paths for e in p.elements if "port_id" in e.refs}
    if not strands and not ports:
        return
    rows = _lit_rows(RawSql(session), sorted(strands), sorted(ports))
    by_strand: dict[int, list[tuple[int, int, str, str]]] = defaultdict(list)
    by_port: dict[int, list[tuple[str, str]]] = defaultdict(list)
    for strand_id, lo, hi, port_id, label, status in rows:
        if strand_id is not None:
            by_strand[strand_id].append((lo or 0, hi or 0, label, str(status)))
        elif port_id is not None:
            by_port[port_id].append((label, str(status)))
    for path in paths:
        for element in path.elements:
            if element.kind == "fiber":
                a, b = sorted((element.refs["from_seq"], element.refs["to_seq"]))
                on = {
                    (label, status)
                    for lo, hi, label, status in by_strand.get(element.refs["strand_id"], [])
                    if lo <= a and b <= hi
                }
            elif element.kind in ("port", "equipment"):
                on = set(by_port.get(element.refs["port_id"], []))
            else:
                continue
            element.fields["circuits"] = [{"label": lb, "status": st} for lb, st in sorted(on)]
            element.fields["lit"] = any(st == CircuitStatus.ACTIVE.value for _l, st in on)


# The state is written into the statement, not bound, so that both planners see it matches
# the partial index `ix_circuit_untraced` (a bound parameter could be any state).
_UNTRACED = (
    "SELECT label, status, path_note FROM circuit WHERE path_state = 'records_error' ORDER BY"
    " CASE status WHEN 'active' THEN 0 WHEN 'out_of_service' THEN 1 ELSE 2 END, label"
)
assert f"'{UNTRACED}'" in _UNTRACED


def untraced_circuits(sql: RawSql) -> list[dict[str, Any]]:
    """Circuits whose paths cannot be walked (a records error): no answer can place them, so
    the dispatcher answers name them rather than leave them out silently."""
    return [
        {"label": label, "status": str(status), "note": note}
        for label, status, note in sql.rows(_UNTRACED)
    ]
