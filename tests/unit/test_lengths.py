"""Piece lengths and their layout along the street, from plain objects (no database)."""

from __future__ import annotations

import pytest

from plantdb.trace.lengths import piece_layout, piece_length
from plantdb.trace.reader import CableRow, SpanRow, StationRow


def _span(n: int, length: float) -> SpanRow:
    return SpanRow(n, f"T{n}", "underground", length, False, f"S{n}", f"S{n + 1}", [])


def _cable(marks: list[float | None], at: list[int], coils: list[tuple[int, float]]) -> CableRow:
    cable = CableRow(1, "K", 2, 12, "loose_tube", 1)
    cable.spans = [_span(0, 250.0), _span(1, 350.0), _span(2, 200.0)]
    cable.stations = [
        StationRow(10 + k, k, f"P{k}", 0 < k < len(at) - 1, f"S{p}", p, m)
        for k, (p, m) in enumerate(zip(at, marks, strict=True))
    ]
    cable.coils = [(p, f"S{p}", n) for p, n in coils]
    return cable


def test_marks_share_their_remainder_among_spans_in_proportion() -> None:
    # Marks 0 -> 815 over spans 250 + 350 + 200 m with a 10 m coil at S2: 5 m remain,
    # shared 250:350:200 (the rule of the interface document's break location).
    cable = _cable([0.0, 815.0], [0, 3], [(2, 10.0)])
    stretches, source = piece_layout(cable, cable.stations[0], cable.stations[1])
    assert source == "sheath marks"
    assert [s.kind for s in stretches] == ["span", "span", "coil", "span"]
    assert [round(s.fiber_m, 4) for s in stretches] == [251.5625, 352.1875, 10.0, 201.25]
    assert piece_length(cable, cable.stations[0], cable.stations[1]) == (815.0, "sheath marks")


def test_walking_the_other_way_reverses_the_stretches() -> None:
    cable = _cable([0.0, 815.0], [0, 3], [(2, 10.0)])
    stretches, _ = piece_layout(cable, cable.stations[1], cable.stations[0])
    assert [s.kind for s in stretches] == ["span", "coil", "span", "span"]


def test_missing_marks_use_spans_and_slack() -> None:
    cable = _cable([None, 815.0], [0, 3], [(2, 10.0)])
    assert piece_length(cable, cable.stations[0], cable.stations[1]) == (810.0, "spans and slack")


def test_a_coil_at_a_mid_span_station_is_shared_by_the_pieces_either_side() -> None:
    cable = _cable([None, None, None], [0, 1, 3], [(1, 8.0), (0, 5.0)])
    first = piece_length(cable, cable.stations[0], cable.stations[1])[0]
    second = piece_length(cable, cable.stations[1], cable.stations[2])[0]
    # 5 m coil at the cable's own end counts whole; the 8 m coil at the closure half each.
    assert first == pytest.approx(250.0 + 5.0 + 4.0)
    assert second == pytest.approx(350.0 + 200.0 + 4.0)
    assert first + second == pytest.approx(800.0 + 13.0)


def test_a_cable_with_no_spans_stands_still_at_its_structure() -> None:
    cable = CableRow(2, "RISER", 1, 12, "tight_buffered", 1)
    cable.stations = [
        StationRow(1, 0, "MDF", False, "B", 0, 0.0),
        StationRow(2, 1, "IDF", False, "B", 0, 30.0),
    ]
    stretches, _ = piece_layout(cable, cable.stations[0], cable.stations[1])
    assert [(s.kind, s.fiber_m, s.structure) for s in stretches] == [("inside", 30.0, "B")]
