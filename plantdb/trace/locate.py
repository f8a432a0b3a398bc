"""Where on the street an OTDR distance falls.

The OTDR reports distance assuming its own group index setting; the fiber's true distance is
`reported x n_otdr / n_fiber` (the round trip t = 2 n L / c, so n_otdr x reported = n_fiber x
true). Without an index setting the fiber's own index is assumed: no correction. Along each
fiber piece, the length is laid out by `lengths.piece_layout` (spans by their lengths, slack
coils standing still at their structure, the remainder shared along the spans) and the point
is interpolated along the span's drawn line in the direction the cable runs through it.

The answer is a range, not a false point: the OTDR's own distance uncertainty plus the
record's (loose-tube fiber runs longer than its sheath, and marks are read by eye).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from plantdb import catalogue, geo
from plantdb.addresses import parse_address
from plantdb.errors import PlantError, RecordsError
from plantdb.safety import LOCATE_CAUTION
from plantdb.trace.elements import Element
from plantdb.trace.lengths import piece_layout
from plantdb.trace.reader import PlantReader
from plantdb.trace.walk import Branch, Walker

# OTDR distance accuracy, as OTDR makers commonly specify it: about 1 m plus 0.01 % of the
# distance (memory; a planning figure - use the instrument's own specification when known).
OTDR_FIXED_M = 1.0
OTDR_FRACTION = 0.0001
# Fiber in a loose tube is 0.05-0.3 % longer than its sheath (seen, cable-maker forum); marks
# are read by eye at the nearest access points (trade: a couple of metres).
EXCESS_FIBER_FRACTION = 0.003
MARK_READING_M = 2.0


@dataclass(frozen=True)
class Leg:
    """A stretch of the path laid on the street, in walking order."""

    kind: str  # span | coil | inside
    fiber_m: float
    scale: float  # OTDR-reported metres per fiber metre here
    line: list[list[float]]  # oriented in walking direction (one point for coil/inside)
    street_m: float
    between: tuple[str, str]
    piece: Element
    piece_offset_m: float  # fiber metres from the piece's start to this leg's start

    @property
    def reported_m(self) -> float:
        return self.fiber_m * self.scale


def _group_index(reader: PlantReader, fiber_type_id: int, nm: int) -> float:
    recorded = reader.fiber_values(fiber_type_id, nm)[2]
    if recorded is not None:
        return float(recorded)
    name, _mode, standard = reader.fiber_mode(fiber_type_id)
    try:
        return catalogue.fiber_class(standard or "").group_index[nm].value
    except (catalogue.CatalogueLookupError, KeyError):
        raise RecordsError(f"fiber type {name} has no group index at {nm} nm") from None


def _legs(reader: PlantReader, branch: Branch, nm: int, otdr_index: float | None) -> list[Leg]:
    legs: list[Leg] = []
    for element in (e for e in branch.elements if e.kind == "fiber"):
        refs = element.refs
        cable = reader.cable(refs["cable_id"])
        a = next(s for s in cable.stations if s.seq == refs["from_seq"])
        b = next(s for s in cable.stations if s.seq == refs["to_seq"])
        index = _group_index(reader, refs["fiber_type_id"], nm)
        scale = index / otdr_index if otdr_index else 1.0
        stretches, _source = piece_layout(cable, a, b)
        with_cable = b.seq > a.seq
        offset = 0.0
        for stretch in stretches:
            if stretch.span is not None:
                span = stretch.span
                drawn = (not span.reversed) == with_cable
                line = span.geometry if drawn else list(reversed(span.geometry))
                ends = (span.start, span.end) if with_cable else (span.end, span.start)
                legs.append(
                    Leg("span", stretch.fiber_m, scale, line, span.length_m, ends, element, offset)
                )
            else:
                where = stretch.structure or a.structure
                legs.append(
                    Leg(
                        stretch.kind,
                        stretch.fiber_m,
                        scale,
                        [reader.structure_point(where)],
                        0.0,
                        (where, where),
                        element,
                        offset,
                    )
                )
            offset += stretch.fiber_m
    return legs


@dataclass(frozen=True)
class Spot:
    leg: Leg
    into_fiber_m: float  # fiber metres into the leg

    @property
    def fraction(self) -> float:
        return self.into_fiber_m / self.leg.fiber_m if self.leg.fiber_m else 0.0

    def point(self) -> list[float]:
        if self.leg.kind != "span":
            return list(self.leg.line[0])
        lon, lat = geo.point_along(self.leg.line, self.fraction)
        return [lon, lat]


def _spot(legs: list[Leg], reported: float) -> Spot:
    walked = 0.0
    for leg in legs:
        if reported <= walked + leg.reported_m or leg is legs[-1]:
            return Spot(leg, min(max(reported - walked, 0.0) / leg.scale, leg.fiber_m))
        walked += leg.reported_m
    raise AssertionError("unreachable")


def _mark(spot: Spot) -> float | None:
    fields = spot.leg.piece.fields
    start, end = fields.get("from_mark_m"), fields.get("to_mark_m")
    if start is None or end is None:
        return None
    along = spot.leg.piece_offset_m + spot.into_fiber_m
    return float(start + along if end >= start else start - along)


def _range_line(legs: list[Leg], low: Spot, high: Spot) -> list[list[float]]:
    points: list[list[float]] = []
    inside = False
    for leg in legs:
        first, last = leg is low.leg, leg is high.leg
        inside = inside or first
        if inside:
            if leg.kind == "span":
                start = low.fraction if first else 0.0
                stop = high.fraction if last else 1.0
                points += [list(p) for p in geo.sub_line(leg.line, start, stop)]
            else:
                points.append(list(leg.line[0]))
        if last:
            break
    return points


def _uncertainty(distance: float) -> dict[str, Any]:
    otdr = OTDR_FIXED_M + OTDR_FRACTION * distance
    record = EXCESS_FIBER_FRACTION * distance + MARK_READING_M
    return {
        "otdr_m": otdr,
        "record_m": record,
        "total_m": otdr + record,
        "explained": f"OTDR about {OTDR_FIXED_M:g} m + {OTDR_FRACTION:.2%} of the distance "
        f"(memory: a typical instrument specification); record: loose-tube fiber"
        f" up to {EXCESS_FIBER_FRACTION:.1%} longer than its sheath (seen) plus"
        f" {MARK_READING_M:g} m for reading marks (trade)",
    }


def _answer(legs: list[Leg], distance: float, branch: Branch) -> dict[str, Any]:
    total_reported = sum(leg.reported_m for leg in legs)
    if distance > total_reported + 1e-9:
        raise PlantError(
            f"{distance:g} m is past the far end: the path is {total_reported:.1f} m long"
            f" (to {branch.end.at}, {branch.end.kind.replace('_', ' ')})"
        )
    spot = _spot(legs, distance)
    margin = _uncertainty(distance)
    low = _spot(legs, max(distance - margin["total_m"], 0.0))
    high = _spot(legs, min(distance + margin["total_m"], total_reported))
    piece = spot.leg.piece.fields
    lon, lat = spot.point()
    before = sum(leg.fiber_m for leg in legs[: legs.index(spot.leg)])
    return {
        "cable": piece["cable"],
        "strand": piece["strand"],
        "sheath_mark_m": _mark(spot),
        "between": list(spot.leg.between),
        "from": {"structure": spot.leg.between[0], "distance_m": spot.fraction * spot.leg.street_m},
        "lon": lon,
        "lat": lat,
        "in_slack_at": spot.leg.between[0] if spot.leg.kind == "coil" else None,
        "fiber_distance_m": before + spot.into_fiber_m,
        "range_m": [
            max(distance - margin["total_m"], 0.0),
            min(distance + margin["total_m"], total_reported),
        ],
        "range_marks_m": [_mark(low), _mark(high)],
        "range_line": _range_line(legs, low, high),
        "uncertainty": margin,
        "path_length_m": total_reported,
        "path_end": branch.end.to_json(),
    }


def locate_document(
    session: Any,
    port: str,
    distance_m: float,
    wavelength: int | None = None,
    otdr_index: float | None = None,
) -> dict[str, Any]:
    """The contract's locate document: where an OTDR distance from a port falls."""
    if distance_m <= 0:
        raise PlantError(f"the OTDR distance must be positive, not {distance_m:g} m")
    if otdr_index is not None and not 1.0 <= otdr_index <= 2.0:
        raise PlantError(f"an OTDR group index setting is about 1.46-1.48, not {otdr_index:g}")
    reader = PlantReader(session)
    parsed = parse_address(port, "port")
    port_id = reader.port_id(parsed.label, parsed.point)
    if reader.termination(port_id) is None:
        raise PlantError(f"{parsed}: no fiber is terminated behind this port")
    branches = Walker(reader).run(("leave_back", port_id), frozenset({("port", port_id)}))
    first_fiber = next(e for e in branches[0].elements if e.kind == "fiber")
    _name, mode, _std = reader.fiber_mode(first_fiber.refs["fiber_type_id"])
    nm = wavelength or catalogue.DEFAULT_WAVELENGTHS[mode][0]
    answers, refusals = [], []
    for branch in branches:
        if not any(e.kind == "fiber" for e in branch.elements):
            continue
        try:
            answers.append(_answer(_legs(reader, branch, nm, otdr_index), distance_m, branch))
        except PlantError as exc:
            refusals.append(exc)
    if not answers:
        raise refusals[0] if refusals else PlantError(f"{parsed}: no fiber beyond this port")
    document: dict[str, Any] = {
        "port": str(parsed),
        "distance_m": distance_m,
        "wavelength_nm": nm,
        "otdr_index": otdr_index,
    }
    document.update(answers[0])
    others = [
        a
        for a in answers[1:]
        if (a["cable"], a["strand"], a["sheath_mark_m"])
        != (answers[0]["cable"], answers[0]["strand"], answers[0]["sheath_mark_m"])
    ]
    if others:
        document["alternatives"] = others
        document["note"] = (
            f"the path splits at a splitter: {len(others) + 1} places match this"
            " distance; test from the far ends to tell them apart"
        )
    document["caution"] = LOCATE_CAUTION
    return document
