"""Resolving the contract's addresses to the fiber ends, legs and ports they name.

Shared by every path that connects fiber (bundle load, splicing, import), so an address means
the same thing everywhere and every refusal reads the same.
"""

from __future__ import annotations

from dataclasses import dataclass

from plantdb.addresses import parse_address, parse_strand_point, strand_address
from plantdb.errors import PlantError
from plantdb.records.lookup import CableInfo, PlaceInfo, RecordLookup, StationInfo


# Slots, not frozen (treat it as read-only all the same): a splice-sheet import makes two per
# splice, and a frozen dataclass's __init__ sets each field through object.__setattr__.
@dataclass(slots=True)
class EndRef:
    """A fiber end (a strand's end at a station) or a splitter leg, ready to connect."""

    address: str
    key: tuple[object, ...]
    strand_id: int | None = None
    station_id: int | None = None
    side: str | None = None
    leg_id: int | None = None
    cable_id: int | None = None
    fiber_type_id: int | None = None
    strand: int | None = None
    fibers_per_unit: int | None = None
    mid_span: bool = False


@dataclass(frozen=True)
class PortRef:
    """A panel or equipment port."""

    address: str
    id: int
    kind: str  # "panel" | "equipment"
    owner_id: int


def resolve_port(lookup: RecordLookup, text: object) -> PortRef:
    """`PANEL:PORT` or `EQUIPMENT:PORT` to its port."""
    address = parse_address(text, "port")
    panel = lookup.panel(address.label)
    if panel is not None:
        port_id = lookup.port_id("panel", panel.id, address.point)
        if port_id is None:
            raise PlantError(
                f"{address}: panel {panel.label} has ports 1-{panel.port_count}, no port"
                f" {address.point}"
            )
        return PortRef(str(address), port_id, "panel", panel.id)
    equipment = lookup.equipment(address.label)
    if equipment is not None:
        port_id = lookup.port_id("equipment", equipment.id, address.point)
        if port_id is None:
            raise PlantError(f"{address}: equipment {equipment.label} has no port {address.point}")
        return PortRef(str(address), port_id, "equipment", equipment.id)
    raise PlantError(f"{address}: no panel or equipment is labelled {address.label}")


def _strand(lookup: RecordLookup, cable: CableInfo, number: int, text: str) -> int:
    strand_id = lookup.strand_id(cable.id, number) if number >= 1 else None
    if strand_id is None:
        raise PlantError(
            f"{text}: cable {cable.label} has strands 1-{cable.fiber_count}, no strand {number}"
        )
    return strand_id


def _strand_end(
    lookup: RecordLookup,
    cable: CableInfo,
    station: StationInfo,
    number: int,
    side: str | None,
    text: str,
) -> EndRef:
    strand_id = _strand(lookup, cable, number, text)
    end_side = cable.end_side(station)
    if end_side is None:
        if side is None:
            raise PlantError(
                f"{text}: {cable.label} passes through {station.place} mid-span; say which piece"
                f" of the cut strand, {strand_address(cable.label, number, 'A')} (toward"
                f" {cable.toward('A')}) or {strand_address(cable.label, number, 'B')}"
                f" (toward {cable.toward('B')})"
            )
    elif side is not None and side != end_side:
        which = "starts" if end_side == "B" else "ends"
        raise PlantError(
            f"{text}: cable {cable.label} {which} at {station.place}, so its strands have only"
            f" one end there ({strand_address(cable.label, number)})"
        )
    final_side = side or end_side
    assert final_side is not None
    shown = strand_address(cable.label, number, final_side if end_side is None else None)
    return EndRef(
        address=shown,
        key=("end", cable.id, strand_id, station.id, final_side),
        strand_id=strand_id,
        station_id=station.id,
        side=final_side,
        cable_id=cable.id,
        fiber_type_id=cable.fiber_type_id,
        strand=number,
        fibers_per_unit=cable.fibers_per_unit,
        mid_span=end_side is None,
    )


def _leg(lookup: RecordLookup, label: str, leg: str, text: str) -> tuple[EndRef, PlaceInfo | None]:
    splitter = lookup.splitter(label)
    assert splitter is not None
    leg_id = splitter.legs.get(leg)
    if leg_id is None:
        names = "in, in2" if splitter.inputs == 2 else "in"
        raise PlantError(
            f"{text}: splitter {label} ({splitter.inputs}x{splitter.outputs}) has legs {names}"
            f" and 1-{splitter.outputs}, no leg {leg}"
        )
    return EndRef(address=f"{label}:{leg}", key=("leg", leg_id), leg_id=leg_id), None


def resolve_splice_end(lookup: RecordLookup, text: object, closure: PlaceInfo) -> EndRef:
    """A strand end or splitter leg to be spliced in `closure`."""
    address = parse_address(text, "fiber end")
    kind = lookup.place_kind(address.label)
    if kind == "splitter":
        end, _ = _leg(lookup, address.label, address.point, str(address))
        splitter = lookup.splitter(address.label)
        assert splitter is not None
        if splitter.closure_id != closure.id:
            raise PlantError(
                f"{address}: splitter {address.label} is not in closure {closure.label}"
            )
        return end
    if kind != "cable":
        raise PlantError(f"{address}: no cable or splitter is labelled {address.label}")
    cable = lookup.cable(address.label)
    assert cable is not None
    number, side = parse_strand_point(address)
    station = cable.station_at_closure(closure.id)
    if station is None:
        raise PlantError(
            f"{address}: cable {cable.label} has no station in closure {closure.label}"
        )
    return _strand_end(lookup, cable, station, number, side, str(address))


def resolve_termination_end(lookup: RecordLookup, text: object, panel: PlaceInfo) -> EndRef:
    """A strand end (at the cable's end on this panel) or a splitter leg to land on a port."""
    address = parse_address(text, "fiber")
    kind = lookup.place_kind(address.label)
    if kind == "splitter":
        end, _ = _leg(lookup, address.label, address.point, str(address))
        splitter = lookup.splitter(address.label)
        assert splitter is not None
        here = splitter.panel_id == panel.id or (
            splitter.closure_id is not None and splitter.structure_id == panel.structure_id
        )
        if not here:
            raise PlantError(f"{address}: splitter {address.label} is not at panel {panel.label}")
        return end
    if kind != "cable":
        raise PlantError(f"{address}: no cable or splitter is labelled {address.label}")
    cable = lookup.cable(address.label)
    assert cable is not None
    number, side = parse_strand_point(address)
    station = cable.station_at_panel(panel.id)
    if station is None:
        raise PlantError(f"{address}: cable {cable.label} does not end at panel {panel.label}")
    return _strand_end(lookup, cable, station, number, side, str(address))


def resolve_cut(lookup: RecordLookup, text: object, closure: PlaceInfo) -> EndRef:
    """The strand (at a mid-span station in `closure`) that a cut names."""
    address = parse_address(text, "fiber")
    cable = lookup.cable(address.label)
    if cable is None:
        raise PlantError(f"{address}: no cable is labelled {address.label}")
    number, side = parse_strand_point(address)
    if side is not None:
        raise PlantError(f"{address}: a cut names the strand ({cable.label}:{number}), not a piece")
    station = cable.station_at_closure(closure.id)
    if station is None:
        raise PlantError(
            f"{address}: cable {cable.label} has no station in closure {closure.label}"
        )
    end_side = cable.end_side(station)
    if end_side is not None:
        which = "starts" if end_side == "B" else "ends"
        raise PlantError(
            f"{address}: cable {cable.label} {which} at {closure.label}; strands are cut only"
            " at a mid-span access"
        )
    return _strand_end(lookup, cable, station, number, "A", str(address))


def sibling_end(lookup: RecordLookup, end: EndRef, cable: CableInfo, number: int) -> EndRef:
    """The end of strand `number` of `end`'s cable at the same station, on the same side.

    A run of strands shares its station and side, so a range resolves its first strand with
    `resolve_splice_end` (every rule) and the others with this (only the strand differs).
    """
    assert end.station_id is not None and end.side is not None and end.cable_id == cable.id
    shown = strand_address(cable.label, number, end.side if end.mid_span else None)
    strand_id = _strand(lookup, cable, number, shown)
    return EndRef(
        address=shown,
        key=("end", cable.id, strand_id, end.station_id, end.side),
        strand_id=strand_id,
        station_id=end.station_id,
        side=end.side,
        cable_id=cable.id,
        fiber_type_id=cable.fiber_type_id,
        strand=number,
        fibers_per_unit=cable.fibers_per_unit,
        mid_span=end.mid_span,
    )
