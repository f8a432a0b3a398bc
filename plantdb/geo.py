"""Geodesic arithmetic on WGS 84 positions ([longitude, latitude], RFC 7946 order)."""

from __future__ import annotations

from collections.abc import Sequence

from pyproj import Geod

# Lengths on the ellipsoid, not in planar degrees: a degree of longitude shrinks with latitude.
WGS84 = Geod(ellps="WGS84")

Position = tuple[float, float]


def distance_m(a: Sequence[float], b: Sequence[float]) -> float:
    """Geodesic distance between two positions, in metres."""
    _az, _back, dist = WGS84.inv(a[0], a[1], b[0], b[1])
    return float(dist)


def line_length_m(positions: Sequence[Sequence[float]]) -> float:
    """Geodesic length of a line string, in metres."""
    if len(positions) < 2:
        return 0.0
    lons = [p[0] for p in positions]
    lats = [p[1] for p in positions]
    return float(WGS84.line_length(lons, lats))


def bbox(positions: Sequence[Sequence[float]]) -> tuple[float, float, float, float]:
    """(west, south, east, north) of the positions."""
    lons = [p[0] for p in positions]
    lats = [p[1] for p in positions]
    return min(lons), min(lats), max(lons), max(lats)


def point_along(positions: Sequence[Sequence[float]], fraction: float) -> Position:
    """The position at `fraction` (0..1) of the line's geodesic length from its first vertex."""
    fraction = min(max(fraction, 0.0), 1.0)
    legs = [distance_m(positions[i], positions[i + 1]) for i in range(len(positions) - 1)]
    total = sum(legs)
    if total == 0.0:
        return float(positions[0][0]), float(positions[0][1])
    remaining = fraction * total
    for i, leg in enumerate(legs):
        if remaining <= leg or i == len(legs) - 1:
            a, b = positions[i], positions[i + 1]
            azimuth, _back, _dist = WGS84.inv(a[0], a[1], b[0], b[1])
            lon, lat, _az = WGS84.fwd(a[0], a[1], azimuth, min(remaining, leg))
            return float(lon), float(lat)
        remaining -= leg
    raise AssertionError("unreachable")


def sub_line(positions: Sequence[Sequence[float]], start: float, end: float) -> list[Position]:
    """The part of a line between two fractions of its length (start < end), with vertices."""
    start, end = sorted((min(max(start, 0.0), 1.0), min(max(end, 0.0), 1.0)))
    legs = [distance_m(positions[i], positions[i + 1]) for i in range(len(positions) - 1)]
    total = sum(legs) or 1.0
    out: list[Position] = [point_along(positions, start)]
    walked = 0.0
    for i, leg in enumerate(legs):
        walked += leg
        if start * total < walked < end * total:
            out.append((float(positions[i + 1][0]), float(positions[i + 1][1])))
    out.append(point_along(positions, end))
    return out
