"""Loading cables: construction, placement along spans, stations, slack, units and strands."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from plantdb.errors import PlantError
from plantdb.model import Cable, CableSpan, ConstructionKind, SlackCoil, Station, Strand, Unit
from plantdb.records.bundle_load import LoadContext, items, named
from plantdb.records.changes import thing_added
from plantdb.records.lookup import CableInfo, PlaceInfo, StationInfo
from plantdb.records.placement import (
    Path,
    SpanEnds,
    chain_spans,
    check_marks,
    slack_position,
    station_positions,
)


@dataclass
class _Place:
    label: str
    closure: PlaceInfo | None
    panel: PlaceInfo | None

    @property
    def structure_id(self) -> int:
        place = self.closure or self.panel
        assert place is not None
        return place.structure_id


def _construction(item: dict[str, Any]) -> tuple[str, int, int]:
    construction = item["construction"]
    kind, units, per_unit = (
        construction["kind"],
        construction["units"],
        construction["fibers_per_unit"],
    )
    if kind == "central_core" and units != 1:
        raise PlantError(f"a central_core cable has one unit (no tubes), not {units}")
    if kind == "ribbon" and per_unit != 12:
        raise PlantError(f"a ribbon cable's units are 12-fiber ribbons, not {per_unit}-fiber")
    if units * per_unit > 6912:
        raise PlantError(f"{units} x {per_unit} strands is more than any cable holds")
    return kind, units, per_unit


def _stations(ctx: LoadContext, item: dict[str, Any]) -> list[_Place]:
    places: list[_Place] = []
    for k, station in enumerate(item["stations"]):
        at = station["at"]
        closure, panel = ctx.lookup.closure(at), ctx.lookup.panel(at)
        if closure is None and panel is None:
            raise PlantError(f"stations[{k}].at: no closure or panel is labelled {at}")
        if panel is not None and 0 < k < len(item["stations"]) - 1:
            raise PlantError(
                f"stations[{k}]: panel {at} can only be one of the cable's ends, not mid-span"
            )
        if any(p.label == at for p in places):
            raise PlantError(f"stations[{k}]: {at} is listed twice")
        places.append(_Place(at, closure, panel))
    return places


def _placement(
    ctx: LoadContext, item: dict[str, Any], places: list[_Place]
) -> tuple[Path, list[int], list[SpanEnds]]:
    spans = []
    for name in item.get("spans") or []:
        span = ctx.lookup.span(name)
        if span is None:
            raise PlantError(f"spans: no span is labelled {name}")
        spans.append(span)
    names = ctx.lookup.structure_label
    path = chain_spans(spans, places[0].structure_id, names)
    positions = station_positions(
        path, [p.structure_id for p in places], [p.label for p in places], names
    )
    check_marks([s.get("mark_m") for s in item["stations"]], [p.label for p in places])
    return path, positions, spans


def _slack(ctx: LoadContext, item: dict[str, Any], path: Path) -> list[tuple[int, int, float]]:
    coils: list[tuple[int, int, float]] = []
    for k, coil in enumerate(item.get("slack") or []):
        structure = ctx.lookup.structure(coil["at"])
        if structure is None:
            raise PlantError(f"slack[{k}].at: no structure is labelled {coil['at']}")
        if any(c[0] == structure.id for c in coils):
            raise PlantError(f"slack[{k}]: two coils at {coil['at']}; record one with both lengths")
        position = slack_position(path, structure.id, coil["at"])
        coils.append((structure.id, position, float(coil["length_m"])))
    return coils


def load_cables(ctx: LoadContext, data: dict[str, Any]) -> None:
    for path, item in items(data, "cables"):
        label = item["label"]
        if not ctx.claim_place(label, path):
            continue
        fiber_type = ctx.lookup.fiber_type(item["fiber_type"])
        try:
            if fiber_type is None:
                raise PlantError(f"fiber_type: no fiber type is named {item['fiber_type']}")
            kind, units, per_unit = _construction(item)
            places = _stations(ctx, item)
            placement, positions, spans = _placement(ctx, item, places)
            coils = _slack(ctx, item, placement)
        except PlantError as exc:
            ctx.problem(named(path, label), exc.message)
            continue
        _insert_cable(
            ctx,
            item,
            fiber_type[0],
            (kind, units, per_unit),
            places,
            positions,
            spans,
            placement,
            coils,
        )


def _insert_cable(
    ctx: LoadContext,
    item: dict[str, Any],
    fiber_type_id: int,
    construction: tuple[str, int, int],
    places: list[_Place],
    positions: list[int],
    spans: list[SpanEnds],
    placement: Path,
    coils: list[tuple[int, int, float]],
) -> None:
    kind, units, per_unit = construction
    label = item["label"]
    (cable_id,) = ctx.insert_ids(
        Cable,
        [
            {
                "label": label,
                "fiber_type_id": fiber_type_id,
                "construction": ConstructionKind(kind),
                "units": units,
                "fibers_per_unit": per_unit,
                "fiber_count": units * per_unit,
                "notes": item.get("notes"),
            }
        ],
    )
    ctx.insert(
        CableSpan,
        [
            {
                "cable_id": cable_id,
                "seq": seq,
                "span_id": ctx.lookup.span_id(span.label),
                "reversed": placement.reversed[seq],
            }
            for seq, span in enumerate(spans)
        ],
    )
    station_rows = [
        {
            "cable_id": cable_id,
            "seq": seq,
            "closure_id": place.closure.id if place.closure else None,
            "panel_id": place.panel.id if place.panel else None,
            "mark_m": station.get("mark_m"),
            "path_index": position,
        }
        for seq, (place, station, position) in enumerate(
            zip(places, item["stations"], positions, strict=True)
        )
    ]
    station_ids = ctx.insert_ids(Station, station_rows)
    ctx.insert(
        SlackCoil,
        [
            {"cable_id": cable_id, "structure_id": s, "path_index": p, "length_m": length}
            for s, p, length in coils
        ],
    )
    insert_units_and_strands(ctx, cable_id, units, per_unit)
    info = CableInfo(cable_id, label, units, per_unit, kind, fiber_type_id)
    info.stations = [
        StationInfo(
            sid,
            row["seq"],
            row["closure_id"],
            row["panel_id"],
            row["path_index"],
            row["mark_m"],
            place.label,
        )
        for sid, row, place in zip(station_ids, station_rows, places, strict=True)
    ]
    ctx.lookup.remember_cable(info)
    ctx.changes.append(thing_added("cable", cable_id, label, item))
    ctx.count("cables", 1)


def insert_units_and_strands(ctx: LoadContext, cable_id: int, units: int, per_unit: int) -> None:
    """Generate a cable's units and strands from its construction."""
    ctx.insert(
        Unit,
        [
            {"cable_id": cable_id, "number": u, "cable_units": units, "fibers": per_unit}
            for u in range(1, units + 1)
        ],
    )
    ctx.insert(
        Strand,
        [
            {
                "cable_id": cable_id,
                "number": (u - 1) * per_unit + p,
                "unit_number": u,
                "position": p,
                "unit_fibers": per_unit,
            }
            for u in range(1, units + 1)
            for p in range(1, per_unit + 1)
        ],
    )
    ctx.lookup.forget_strands(cable_id)
