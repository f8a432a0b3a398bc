"""The walk: from a start, along the glass and across whatever joins it, to every end reached.

A fiber runs unbroken from its cable's A end to its B end except where it is cut at a mid-span
access, so its ends are only at the cable's ends and at its cuts, and each end holds at most
one connection. The walk follows that: along a piece of glass to its next end, across the
splice, termination or jumper there, and on, fanning out through a splitter from its input
and converging back to the input(s) from a leg, until equipment, an open port or a dead end.

The walk is iterative (a worklist of partial paths), so a long route cannot exhaust Python's
stack, and it keeps the set of places each partial path has visited: coming back to one is a
records error naming where the loop closes, never an endless walk.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from plantdb.addresses import strand_address
from plantdb.colours import strand_colours
from plantdb.errors import RecordsError
from plantdb.trace.elements import Element, PathEnd
from plantdb.trace.lengths import piece_length
from plantdb.trace.reader import CableRow, EndRow, PlantReader, PortRow, StationRow

# A record cannot hold a real path this long; past it something is wrong with the data.
MAX_ELEMENTS = 20_000

Action = tuple[Any, ...]


@dataclass(frozen=True)
class Branch:
    """A walk away from the start: its elements in walking order, and where it stopped."""

    elements: list[Element]
    end: PathEnd


class _Chain:
    """An immutable list built by prepending, so fan-out branches share their common start."""

    __slots__ = ("element", "previous", "size")

    def __init__(self, element: Element, previous: _Chain | None) -> None:
        self.element = element
        self.previous = previous
        self.size: int = 1 + (previous.size if previous else 0)

    def to_list(self) -> list[Element]:
        out: list[Element] = []
        node: _Chain | None = self
        while node is not None:
            out.append(node.element)
            node = node.previous
        out.reverse()
        return out


class Walker:
    """Walks the record through a `PlantReader`; `run` turns an action into its branches."""

    def __init__(self, reader: PlantReader) -> None:
        self.reader = reader

    # -- the worklist ------------------------------------------------------------------
    def run(self, action: Action, seen: frozenset[tuple[Any, ...]]) -> list[Branch]:
        """Every branch of the walk that starts with `action`."""
        done: list[Branch] = []
        # Each partial path owns a set of the places it has visited; a fan-out copies it
        # for every branch but one, so a long unbranched walk never copies at all.
        work: list[tuple[_Chain | None, set[tuple[Any, ...]], Action]] = [(None, set(seen), action)]
        while work:
            chain, visited, current = work.pop()
            steps = self._step(current, visited)
            last = len(steps) - 1
            for n, (new_elements, visit, following) in enumerate(reversed(steps)):
                node = chain
                for element in new_elements:
                    node = _Chain(element, node)
                if node is not None and node.size > MAX_ELEMENTS:
                    raise RecordsError(
                        f"a path longer than {MAX_ELEMENTS} elements: check the record"
                    )
                if isinstance(following, PathEnd):
                    done.append(Branch(node.to_list() if node else [], following))
                    continue
                own = visited if n == last else set(visited)
                own.update(visit)
                work.append((node, own, following))
        return done

    def _step(
        self, action: Action, visited: set[tuple[Any, ...]]
    ) -> list[tuple[list[Element], frozenset[tuple[Any, ...]], Action | PathEnd]]:
        handler = getattr(self, f"_{action[0]}")
        steps = handler(*action[1:])
        for _elements, visit, _following in steps:
            loop = visited.intersection(visit)
            if loop:
                raise RecordsError(
                    f"the record loops: the walk comes back to {self._where(frozenset(loop))}"
                )
        return steps

    def _where(self, keys: frozenset[tuple[Any, ...]]) -> str:
        key = sorted(keys, key=repr)[0]
        if key[0] == "port":
            port = self.reader.port(key[1])
            return f"port {port.address} at {port.structure}"
        if key[0] == "end":
            cable, number = self.reader.strand(key[1])
            station = cable.station(key[2])
            return f"{self._address(cable, number, station, key[3])} at {station.place}"
        splitter = self.reader.splitter(key[1])
        return f"splitter {splitter.label} at {splitter.place}"

    # -- addresses and elements --------------------------------------------------------
    @staticmethod
    def _address(cable: CableRow, number: int, station: StationRow, side: str) -> str:
        return strand_address(cable.label, number, None if cable.is_end(station) else side)

    def _port_element(self, port: PortRow, termination: EndRow | None) -> Element:
        if not port.panel:
            return Element(
                "equipment",
                port.address,
                port.structure,
                {"equipment": port.owner, "port": port.name, "role": port.role},
                {
                    "port_id": port.id,
                    "equipment": True,
                    "tx_dbm": port.tx_dbm,
                    "rx_sensitivity_dbm": port.rx_sensitivity_dbm,
                    "role": port.role,
                },
            )
        fields: dict[str, Any] = {
            "panel": port.owner,
            "port": port.name,
            "connector": port.connector,
            "polish": port.polish,
        }
        if termination is not None:
            fields["termination"] = termination.method
            fields["fiber"] = self._end_address(termination)
        return Element(
            "port",
            port.address,
            port.structure,
            fields,
            {"port_id": port.id, "termination": termination.method if termination else None},
        )

    def _end_address(self, end: EndRow) -> str:
        if end.leg_id is not None:
            splitter, name = self.reader.splitter_of_leg(end.leg_id)
            return f"{splitter.label}:{name}"
        assert end.strand_id is not None and end.station_id is not None and end.side
        cable, number = self.reader.strand(end.strand_id)
        return self._address(cable, number, cable.station(end.station_id), end.side)

    # -- steps -------------------------------------------------------------------------
    def _leave_front(self, port_id: int) -> list[tuple[Any, ...]]:
        port = self.reader.port(port_id)
        peer = self.reader.jumper_peer(port)
        if peer is None:
            kind = "open_port" if port.panel else "equipment"
            return [([], frozenset(), PathEnd(kind, port.address))]
        other, length = peer
        # A jumper's own few metres of fiber are outside the contract's loss count; its
        # length is reported but not summed into the path's fiber length.
        jumper = Element(
            "jumper",
            f"{port.address} - {other.address}",
            port.structure,
            {"from_port": port.address, "to_port": other.address, "length_m": length},
            {"jumper_id": port.jumper_id},
        )
        return [([jumper], frozenset(), ("enter_front", other.id))]

    def _enter_front(self, port_id: int) -> list[tuple[Any, ...]]:
        port = self.reader.port(port_id)
        visit = frozenset({("port", port_id)})
        if not port.panel:
            element = self._port_element(port, None)
            inline = (
                self.reader.inline_peer(port) if port.role in ("regenerator", "amplifier") else None
            )
            if inline is None:
                return [([element], visit, PathEnd("equipment", port.address))]
            element.fields["passes_to"] = inline.address
            element.refs["inline"] = True
            return [([element], visit | {("port", inline.id)}, ("leave_front", inline.id))]
        termination = self.reader.termination(port_id)
        element = self._port_element(port, termination)
        if termination is None:
            return [([element], visit, PathEnd("open_port", port.address))]
        return [([element], visit, self._from_end(termination))]

    def _enter_back(self, port_id: int) -> list[tuple[Any, ...]]:
        port = self.reader.port(port_id)
        element = self._port_element(port, self.reader.termination(port_id))
        return [([element], frozenset({("port", port_id)}), ("leave_front", port_id))]

    def _from_end(self, end: EndRow) -> Action:
        """Having crossed onto `end` (from a splice or a port), go on away from it."""
        if end.leg_id is not None:
            return ("enter_splitter", end.leg_id)
        return ("glass", end.strand_id, end.station_id, end.side)

    def _glass(self, strand_id: int, station_id: int, side: str) -> list[tuple[Any, ...]]:
        cable, number = self.reader.strand(strand_id)
        here = cable.station(station_id)
        cuts = set(self.reader.cut_stations(strand_id))
        if side == "B":
            ahead = [s for s in cable.stations if s.seq > here.seq]
        else:
            ahead = [s for s in reversed(cable.stations) if s.seq < here.seq]
        passed: list[StationRow] = []
        target = ahead[-1] if ahead else here
        for station in ahead:
            if station.id in cuts:
                target = station
                break
            passed.append(station)
        passed = [s for s in passed if s is not target]
        element = self._fiber_element(cable, number, strand_id, here, target, passed)
        arriving = "A" if side == "B" else "B"
        return [([element], frozenset(), ("arrive", strand_id, target.id, arriving))]

    def _fiber_element(
        self,
        cable: CableRow,
        number: int,
        strand_id: int,
        a: StationRow,
        b: StationRow,
        passed: list[StationRow],
    ) -> Element:
        length, source = piece_length(cable, a, b)
        has_units = cable.construction != "central_core"
        per_unit = cable.fibers_per_unit if has_units else cable.units * cable.fibers_per_unit
        side_a = "B" if b.seq > a.seq else "A"
        fields = {
            "cable": cable.label,
            "strand": number,
            "colours": strand_colours(number, per_unit, has_units),
            "from_station": a.place,
            "to_station": b.place,
            "from_structure": a.structure,
            "to_structure": b.structure,
            "from_end": self._address(cable, number, a, side_a),
            "to_end": self._address(cable, number, b, "A" if side_a == "B" else "B"),
            "from_mark_m": a.mark_m,
            "to_mark_m": b.mark_m,
            "length_m": length,
            "length_source": source,
            "expresses_through": [s.place for s in passed if s.closure],
        }
        refs = {
            "strand_id": strand_id,
            "cable_id": cable.id,
            "fiber_type_id": cable.fiber_type_id,
            "from_seq": a.seq,
            "to_seq": b.seq,
        }
        return Element("fiber", f"{cable.label}:{number}", a.structure, fields, refs)

    def _arrive(self, strand_id: int, station_id: int, side: str) -> list[tuple[Any, ...]]:
        visit = frozenset({("end", strand_id, station_id, side)})
        end = self.reader.end_at(strand_id, station_id, side)
        if end is None:
            cable, number = self.reader.strand(strand_id)
            address = self._address(cable, number, cable.station(station_id), side)
            return [([], visit, PathEnd("dead_end", address))]
        return [(els, visit | more, nxt) for els, more, nxt in self._cross(end)]

    def _cross(self, end: EndRow) -> list[tuple[Any, ...]]:
        """Cross whatever holds `end`: a splice to its other side, or a termination to a port."""
        if end.port_id is not None:
            return [([], frozenset(), ("enter_back", end.port_id))]
        splice, other = self.reader.other_side(end)
        element = Element(
            "splice",
            f"{splice.closure} tray {splice.tray} slot {splice.slot}",
            splice.structure,
            {
                "closure": splice.closure,
                "tray": splice.tray,
                "slot": splice.slot,
                "method": splice.method,
                "loss_db": splice.loss_db,
                "from_end": self._end_address(end),
                "to_end": self._end_address(other),
            },
            {"splice_id": splice.id, "method": splice.method, "loss_db": splice.loss_db},
        )
        visit: frozenset[tuple[Any, ...]] = frozenset()
        if other.strand_id is not None:
            visit = frozenset({("end", other.strand_id, other.station_id, other.side)})
        return [([element], visit, self._from_end(other))]

    def _enter_splitter(self, leg_id: int) -> list[tuple[Any, ...]]:
        splitter, name = self.reader.splitter_of_leg(leg_id)
        inputs = ["in", "in2"][: splitter.inputs]
        targets = [str(n) for n in range(1, splitter.outputs + 1)] if name in inputs else inputs
        steps = []
        for target in targets:
            element = Element(
                "splitter",
                splitter.label,
                splitter.structure,
                {
                    "ratio": splitter.ratio,
                    "place": splitter.place,
                    "from_leg": name,
                    "to_leg": target,
                    "loss_db": splitter.loss_db,
                },
                {"splitter_id": splitter.id, "ratio": splitter.ratio, "loss_db": splitter.loss_db},
            )
            steps.append(
                (
                    [element],
                    frozenset({("splitter", splitter.id)}),
                    ("leave_leg", splitter.legs[target]),
                )
            )
        return steps

    def _leave_leg(self, leg_id: int) -> list[tuple[Any, ...]]:
        end = self.reader.leg_end(leg_id)
        if end is None:
            splitter, name = self.reader.splitter_of_leg(leg_id)
            return [([], frozenset(), PathEnd("dead_end", f"{splitter.label}:{name}"))]
        return self._cross(end)

    def _leave_back(self, port_id: int) -> list[tuple[Any, ...]]:
        termination = self.reader.termination(port_id)
        assert termination is not None
        return [([], frozenset(), self._from_end(termination))]
