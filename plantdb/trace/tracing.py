"""Traces from a port, a strand or a circuit: the contract's `trace` document.

A trace from an equipment port, or from a panel port with one side connected, walks that way;
one started where both sides are connected (a patched port, a strand) walks both ways, and
each path then runs from one end reached to the other.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from typing import Any

from plantdb.addresses import parse_address, parse_strand_point
from plantdb.errors import NotFound, PlantError, UsageProblem
from plantdb.safety import TRACE_CAUTION
from plantdb.trace.elements import Element, PathEnd, TracedPath
from plantdb.trace.reader import PlantReader
from plantdb.trace.walk import Branch, Walker


@dataclass
class Trace:
    """The paths found from one start."""

    start: str
    paths: list[TracedPath]
    circuit: dict[str, Any] | None = None
    notes: list[str] = field(default_factory=list)

    def to_json(self) -> dict[str, Any]:
        document: dict[str, Any] = {"start": self.start, "paths": [p.to_json() for p in self.paths]}
        if self.circuit is not None:
            document["circuit"] = self.circuit
        if self.notes:
            document["notes"] = self.notes
        document["caution"] = TRACE_CAUTION
        return document


def _join(
    left: list[Branch] | None, middle: list[Element], right: list[Branch] | None, start: PathEnd
) -> list[TracedPath]:
    """Paths through `middle`: each branch walked one way joined to each walked the other."""
    if left is None and right is None:
        return [TracedPath(list(middle), start, start)]
    if left is None or right is None:
        one = left if right is None else right
        assert one is not None
        return [TracedPath(middle + b.elements, start, b.end) for b in one]
    paths = []
    for back in left:
        head = [e.flipped() for e in reversed(back.elements)]
        for ahead in right:
            paths.append(TracedPath(head + middle + ahead.elements, back.end, ahead.end))
    return paths


def trace_port_id(reader: PlantReader, port_id: int) -> list[TracedPath]:
    """Every path through a port (panel or equipment)."""
    walker = Walker(reader)
    port = reader.port(port_id)
    seen = frozenset({("port", port_id)})
    if not port.panel:
        element = walker._port_element(port, None)
        branches = walker.run(("leave_front", port_id), seen)
        return _join(None, [element], branches, PathEnd("equipment", port.address))
    termination = reader.termination(port_id)
    element = walker._port_element(port, termination)
    front = walker.run(("leave_front", port_id), seen) if port.jumper_id is not None else None
    back = walker.run(("leave_back", port_id), seen) if termination is not None else None
    return _join(front, [element], back, PathEnd("open_port", port.address))


def trace_port(reader: PlantReader, address: str) -> Trace:
    """The trace from `PANEL:PORT` or `EQUIPMENT:PORT`."""
    parsed = parse_address(address, "port")
    port_id = reader.port_id(parsed.label, parsed.point)
    return Trace(str(parsed), trace_port_id(reader, port_id))


def trace_fiber(reader: PlantReader, address: str) -> Trace:
    """The trace of a strand, both ways; a cut strand gives the paths of each of its pieces."""
    parsed = parse_address(address, "strand")
    number, side = parse_strand_point(parsed)
    if side is not None:
        raise PlantError(
            f"{address}: trace the strand as {parsed.label}:{number}; every piece of a cut"
            " strand is traced"
        )
    cable = reader.cable(reader.cable_id(parsed.label))
    strand_id = reader.strand_id(cable.id, number)
    walker = Walker(reader)
    cuts = set(reader.cut_stations(strand_id))
    ends = [s for s in cable.stations if s.id in cuts or cable.is_end(s)]
    paths: list[TracedPath] = []
    for a, b in itertools.pairwise(ends):
        passed = [s for s in cable.stations if a.seq < s.seq < b.seq]
        piece = walker._fiber_element(cable, number, strand_id, a, b, passed)
        # Each way starts at its own end; reaching the other one means the record loops.
        a_end, b_end = ("end", strand_id, a.id, "B"), ("end", strand_id, b.id, "A")
        left = walker.run(("arrive", *a_end[1:]), frozenset({b_end}))
        right = walker.run(("arrive", *b_end[1:]), frozenset({a_end}))
        paths += _join(left, [piece], right, PathEnd("dead_end", piece.label))
    notes = []
    if len(ends) > 2:
        notes.append(
            f"{cable.label}:{number} is cut at {len(ends) - 2} place(s): one set of paths per piece"
        )
    return Trace(f"{cable.label}:{number}", paths, notes=notes)


def _port_index(path: TracedPath, port_id: int) -> int | None:
    for i, element in enumerate(path.elements):
        if element.refs.get("port_id") == port_id:
            return i
    return None


def circuit_path(
    reader: PlantReader, a_port: int, z_port: int | None
) -> tuple[TracedPath | None, list[TracedPath]]:
    """(the path from A to Z trimmed to them, or None; every path from A)."""
    paths = trace_port_id(reader, a_port)
    if z_port is None:
        return None, paths
    for path in paths:
        i, j = _port_index(path, a_port), _port_index(path, z_port)
        if i is None or j is None:
            continue
        if i > j:
            path = path.reversed()
            i, j = len(path.elements) - 1 - i, len(path.elements) - 1 - j
        elements = path.elements[i : j + 1]
        a_el, z_el = elements[0], elements[-1]
        # An end the path goes on past (a patched port) is where the circuit ends, not an
        # open port; the walk's own end where nothing lies beyond.
        before = path.begin if i == 0 else None
        begin = before or PathEnd(
            "equipment" if a_el.kind == "equipment" else "circuit_end", a_el.label
        )
        beyond = path.end if j == len(path.elements) - 1 else None
        end = beyond or PathEnd(
            "equipment" if z_el.kind == "equipment" else "circuit_end", z_el.label
        )
        return TracedPath(elements, begin, end), paths
    return None, paths


def trace_circuit(reader: PlantReader, label: str) -> Trace:
    """A circuit's path: from its A end to its Z end (the branch that reaches Z)."""
    _id, status, a_port, z_port, customer = reader.circuit(label)
    a = reader.port(a_port).address
    z = reader.port(z_port).address if z_port is not None else None
    path, every = circuit_path(reader, a_port, z_port)
    info: dict[str, Any] = {
        "label": label,
        "status": status,
        "a": a,
        "z": z,
        "customer": customer,
        "reaches_z": path is not None,
    }
    if path is not None:
        return Trace(a, [path], circuit=info)
    stops = ", ".join(sorted({f"{p.end.kind} at {p.end.at}" for p in every}))
    note = (
        f"circuit {label}: its A end {a} no longer reaches Z {z}; the walk from A stops at {stops}"
        if z
        else f"circuit {label} has no Z end recorded"
    )
    return Trace(a, every, circuit=info, notes=[note])


def require_start(port: str | None, fiber: str | None, circuit: str | None) -> tuple[str, str]:
    """Exactly one of the three starts, as (kind, value)."""
    given = [(k, v) for k, v in (("port", port), ("fiber", fiber), ("circuit", circuit)) if v]
    if len(given) != 1:
        raise UsageProblem(
            "give exactly one start: --port PANEL:PORT, --fiber CABLE:STRAND or --circuit LABEL"
        )
    return given[0]


def trace(reader: PlantReader, kind: str, value: str) -> Trace:
    """Trace from a start of the given kind ("port", "fiber" or "circuit")."""
    if kind == "port":
        return trace_port(reader, value)
    if kind == "fiber":
        return trace_fiber(reader, value)
    if kind == "circuit":
        return trace_circuit(reader, value)
    raise NotFound(f"unknown start kind {kind}")
