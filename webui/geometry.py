"""GeoJSON for the map: what lies in a viewport, and the lines of a cable or a circuit.

Viewport answers use the indexed columns only: structures by their longitude and latitude,
spans by their bounding box, closures and panels through their structure's position. Each
feature carries a few small properties (layer, label, kind, url) and nothing else.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from typing import Any

from sqlalchemy import ColumnElement, and_, func, or_, select
from sqlalchemy.orm import Session

from plantdb.model import Closure, Panel, Span, Structure
from plantdb.trace.reader import PlantReader
from plantdb.trace.rows import CableRow

Box = tuple[float, float, float, float]
UrlFor = Callable[[str, str], str]  # (kind, label) -> the thing's page


def _lon_in(column: Any, west: float, east: float) -> ColumnElement[bool]:
    if west <= east:
        return and_(column >= west, column <= east)
    return or_(column >= west, column <= east)  # the box crosses the antimeridian


def _point(lon: float, lat: float) -> dict[str, Any]:
    return {"type": "Point", "coordinates": [lon, lat]}


def feature(layer: str, geometry: dict[str, Any], **properties: Any) -> dict[str, Any]:
    """An RFC 7946 feature whose id is `layer/label`."""
    return {
        "type": "Feature",
        "id": f"{layer}/{properties['label']}",
        "geometry": geometry,
        "properties": {"layer": layer, **properties},
    }


def _structures(session: Session, box: Box, limit: int, url: UrlFor) -> list[dict[str, Any]]:
    west, south, east, north = box
    rows = session.execute(
        select(Structure.label, Structure.kind, Structure.lon, Structure.lat)
        .where(_lon_in(Structure.lon, west, east), Structure.lat.between(south, north))
        .order_by(Structure.id)
        .limit(limit + 1)
    ).all()
    return [
        feature(
            "structure",
            _point(r.lon, r.lat),
            label=r.label,
            kind=str(r.kind),
            url=url("structure", r.label),
        )
        for r in rows
    ]


def _spans(session: Session, box: Box, limit: int, url: UrlFor) -> list[dict[str, Any]]:
    west, south, east, north = box
    overlaps_lon = (
        and_(Span.min_lon <= east, Span.max_lon >= west)
        if west <= east
        else or_(Span.max_lon >= west, Span.min_lon <= east)
    )
    rows = session.execute(
        select(Span.label, Span.kind, Span.geometry, Span.surveyed_length_m, Span.geodesic_length_m)
        .where(overlaps_lon, Span.min_lat <= north, Span.max_lat >= south)
        .order_by(Span.id)
        .limit(limit + 1)
    ).all()
    return [
        feature(
            "span",
            {"type": "LineString", "coordinates": r.geometry},
            label=r.label,
            kind=str(r.kind),
            length_m=round(r.surveyed_length_m or r.geodesic_length_m, 1),
            url=url("span", r.label),
        )
        for r in rows
    ]


def _placed(
    session: Session,
    model: type[Closure] | type[Panel],
    layer: str,
    box: Box,
    limit: int,
    url: UrlFor,
) -> list[dict[str, Any]]:
    west, south, east, north = box
    rows = session.execute(
        select(model.label, Structure.label.label("structure"), Structure.lon, Structure.lat)
        .join(Structure, Structure.id == model.structure_id)
        .where(_lon_in(Structure.lon, west, east), Structure.lat.between(south, north))
        .order_by(model.id)
        .limit(limit + 1)
    ).all()
    return [
        feature(
            layer,
            _point(r.lon, r.lat),
            label=r.label,
            structure=r.structure,
            url=url(layer, r.label),
        )
        for r in rows
    ]


def viewport(session: Session, box: Box, limit: int, url: UrlFor) -> dict[str, Any]:
    """The structures, spans, closures and panels in a box, each layer cut at `limit`."""
    layers = {
        "structure": _structures(session, box, limit, url),
        "span": _spans(session, box, limit, url),
        "closure": _placed(session, Closure, "closure", box, limit, url),
        "panel": _placed(session, Panel, "panel", box, limit, url),
    }
    truncated = sorted(name for name, found in layers.items() if len(found) > limit)
    features = [f for found in layers.values() for f in found[:limit]]
    answer: dict[str, Any] = {"type": "FeatureCollection", "features": features}
    extent = _extent(features, crosses=box[0] > box[2])
    if extent is not None:
        # RFC 7946 section 5: the range of the coordinates given (a span crossing the box's
        # edge reaches past it); the box asked for is kept beside it.
        answer["bbox"] = extent
    answer["requested_bbox"] = list(box)
    answer["truncated"] = truncated
    return answer


def _extent(features: list[dict[str, Any]], crosses: bool) -> list[float] | None:
    """[west, south, east, north] of the features' positions (None for none). Where the box
    asked for crosses the antimeridian, longitudes are compared east of it, and a west edge
    greater than the east one says so, as RFC 7946 section 5.2 writes such a box."""
    positions = [p for f in features for p in _positions(f["geometry"])]
    if not positions:
        return None
    lons = [p[0] + 360.0 if crosses and p[0] < 0 else p[0] for p in positions]
    lats = [p[1] for p in positions]
    west, east = min(lons), max(lons)
    west, east = (w - 360.0 if w > 180.0 else w for w in (west, east))
    return [west, min(lats), east, max(lats)]


def extent(session: Session) -> Box | None:
    """(west, south, east, north) of every structure, or None for an empty record."""
    row = session.execute(
        select(
            func.min(Structure.lon),
            func.min(Structure.lat),
            func.max(Structure.lon),
            func.max(Structure.lat),
        )
    ).one()
    if row[0] is None:
        return None
    return float(row[0]), float(row[1]), float(row[2]), float(row[3])


def structure_points(session: Session, labels: Iterable[str]) -> dict[str, tuple[float, float]]:
    """label -> (lon, lat) of the named structures that exist."""
    wanted = sorted(set(labels))
    found: dict[str, tuple[float, float]] = {}
    for start in range(0, len(wanted), 500):
        for label, lon, lat in session.execute(
            select(Structure.label, Structure.lon, Structure.lat).where(
                Structure.label.in_(wanted[start : start + 500])
            )
        ):
            found[label] = (lon, lat)
    return found


def _span_features(cable: CableRow, first: int, last: int, **extra: Any) -> list[dict[str, Any]]:
    """The cable's spans with path index in [first, last) as line features."""
    return [
        feature(
            "span",
            {"type": "LineString", "coordinates": span.geometry},
            label=span.label,
            kind=span.kind,
            cable=cable.label,
            **extra,
        )
        for span in cable.spans[first:last]
    ]


def cable_lines(reader: PlantReader, label: str) -> list[dict[str, Any]]:
    """Every span a cable occupies, and a point at each of its stations with the sheath mark."""
    cable = reader.cable(reader.cable_id(label))
    features = _span_features(cable, 0, len(cable.spans))
    points = structure_points(reader.session, [s.structure for s in cable.stations])
    for station in cable.stations:
        if station.structure in points:
            features.append(
                feature(
                    "station",
                    _point(*points[station.structure]),
                    label=station.place,
                    structure=station.structure,
                    mark_m=station.mark_m,
                )
            )
    return features


def trace_lines(reader: PlantReader, document: dict[str, Any]) -> list[dict[str, Any]]:
    """The spans each fiber piece of a trace document runs through, and the places it stops."""
    features: list[dict[str, Any]] = []
    places: list[str] = []
    for path in document["paths"]:
        for element in path["elements"]:
            places.append(element["at"])
            if element["kind"] != "fiber":
                continue
            cable = reader.cable(reader.cable_id(element["cable"]))
            index = {s.place: s.path_index for s in cable.stations}
            ends = sorted((index[element["from_station"]], index[element["to_station"]]))
            features += _span_features(cable, ends[0], ends[1], strand=element["label"])
    points = structure_points(reader.session, places)
    seen: set[str] = set()
    for place in places:
        if place in points and place not in seen:
            seen.add(place)
            features.append(feature("stop", _point(*points[place]), label=place))
    return features


def collection(features: list[dict[str, Any]]) -> dict[str, Any]:
    """A FeatureCollection with its bounding box (absent when it holds nothing)."""
    positions = [p for f in features for p in _positions(f["geometry"])]
    found: dict[str, Any] = {"type": "FeatureCollection", "features": features}
    if positions:
        lons = [p[0] for p in positions]
        lats = [p[1] for p in positions]
        found["bbox"] = [min(lons), min(lats), max(lons), max(lats)]
    return found


def _positions(geometry: dict[str, Any]) -> list[list[float]]:
    if geometry["type"] == "Point":
        return [geometry["coordinates"]]
    return list(geometry["coordinates"])
