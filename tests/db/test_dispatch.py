"""Dispatcher answers on hand-built networks: live through a closure, cut impact, locate.

Sources: OTDR distance = c*t / (2*n_group) and re-scaling d_true = d_reported * n_otdr /
n_fiber (FOA, seen; the second follows from the first); group index of standard single-mode
fiber 1.4677 at 1310 nm and 1.4682 at 1550 nm (fiber datasheet, seen). The break-location
layout rule (spans by length, coils standing still, remainder shared by span length) is the
interface document's; positions are checked against lengths worked by hand below, on the
drawn lines in local metres (the builder's positions), turned into degrees by
`tests.networks.position`. The builder's spherical metres differ from WGS 84 geodesic metres by
under 0.35 % here, a few centimetres on these lines, so positions are checked to half a metre.
Strand colours follow ANSI/TIA-598: blue, orange, green, brown, slate, white, red, black,
yellow, violet, rose, aqua (seen).
"""

from __future__ import annotations

import itertools
import json
import math
import re
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import pytest

from plantdb import geo
from plantdb.catalogue import otdr_distance_m
from plantdb.db import Database, run_in_transaction
from plantdb.errors import PlantError
from plantdb.records.bundle import load_bundle
from plantdb.safety import CLOSURE_CAUTION, IMPACT_CAUTION, LOCATE_CAUTION
from plantdb.trace.dispatch import impact_document, live_document, locate_document
from tests.conftest import PlantCli
from tests.networks import SINGLE_MODE, Bundle, ashgrove, position


def _load(database: Database, bundle: Bundle) -> None:
    run_in_transaction(database, lambda s: load_bundle(s, bundle.data))


def _live(database: Database, closure: str) -> dict[str, Any]:
    with database.read() as session:
        return live_document(session, closure)


def _impact(database: Database, **place: str) -> dict[str, Any]:
    with database.read() as session:
        return impact_document(session, **place)


def _locate(database: Database, port: str, distance: float, **extra: Any) -> dict[str, Any]:
    with database.read() as session:
        return locate_document(session, port, distance, **extra)


def _states(document: dict[str, Any]) -> dict[str, str]:
    return {s["address"]: s["state"] for s in document["strands"]}


def _load_cli(plant: PlantCli, tmp_path: Path, bundle: Bundle) -> None:
    file = tmp_path / "bundle.json"
    file.write_text(json.dumps(bundle.data))
    result = plant("load", str(file))
    assert result.exit_code == 0, result.output


def _text(plant: PlantCli, *argv: str) -> str:
    result = plant(*argv)
    assert result.exit_code == 0, result.output
    return result.stdout


def _ends_with(text: str, caution: str) -> bool:
    """The text wraps its caution: compare with every run of white space made one space."""
    return " ".join(text.split()).endswith(" ".join(caution.split()))


def _along(points: Sequence[tuple[float, float]], fraction: float) -> list[float]:
    """[lon, lat] of the point at `fraction` of a line's length, the line given in local
    metres (east, north): worked leg by leg on the flat, by length, not by vertex count."""
    legs = [math.dist(a, b) for a, b in itertools.pairwise(points)]
    metres = fraction * sum(legs)
    for (e0, n0), (e1, n1), leg in zip(points, points[1:], legs, strict=False):
        if metres <= leg:
            return position(e0 + (e1 - e0) * metres / leg, n0 + (n1 - n0) * metres / leg)
        metres -= leg
    raise AssertionError("past the end of the line")


def _at(document: dict[str, Any]) -> list[float]:
    return [document["lon"], document["lat"]]


# -- live through a closure -------------------------------------------------------------


def test_live_lists_spliced_cut_express_and_open_strands(database: Database) -> None:
    bundle = ashgrove().cut("AC-1", "F-1:9")
    _load(database, bundle)
    document = _live(database, "AC-1")
    states = _states(document)
    assert len(states) == 24 + 12
    assert states["F-1:5"] == "spliced"
    assert states["F-1:9"] == "cut"
    assert states["F-1:1"] == "express"
    assert states["D-1:1"] == "spliced" and states["D-1:2"] == "open"
    strand = {s["address"]: s for s in document["strands"]}
    assert strand["F-1:1"]["live"] and strand["F-1:1"]["circuits"] == [
        {"label": "AG-1", "status": "active"}
    ]
    assert strand["F-1:5"]["splices"] == [
        {"tray": 1, "slot": 1, "side": "A", "loss_db": 0.05, "to": "D-1:1"}
    ]
    assert not strand["F-1:2"]["live"]
    # Express strands are listed: opening the closure puts them at risk too.
    assert document["summary"]["express"] == 22
    assert "treat every fiber as live" in document["caution"].lower()


def test_live_text_puts_live_strands_first_and_ends_with_the_caution(
    plant: PlantCli, tmp_path: Path
) -> None:
    bundle = ashgrove()
    bundle.data["circuits"][0]["status"] = "reserved"  # AG-1 on F-1:1 is no longer live
    _load_cli(plant, tmp_path, bundle)
    text = _text(plant, "live", "--closure", "AC-1")
    assert text.index("LIVE STRANDS") < text.index("F-1, unit 1")
    assert "*** " in text and "F-1:5" in text
    # Inside the tube, the one live strand (5) comes before strand 1, which is not live.
    tube = text[text.index("F-1, unit 1") :].split("\n\n")[0].splitlines()
    rows = [line.split() for line in tube[3:]]
    assert rows[0][:2] == ["LIVE", "F-1:5"]
    assert [r[0] for r in rows[1:]] == [f"F-1:{n}" for n in (1, 2, 3, 4, 6, 7, 8, 9, 10, 11, 12)]
    assert _ends_with(text, CLOSURE_CAUTION)


def test_live_colours_follow_the_tia_598_order(database: Database) -> None:
    _load(database, ashgrove())
    document = _live(database, "AC-1")
    # ANSI/TIA-598 positions 1-12 (seen); units are numbered by the same sequence (seen).
    order = [
        *("blue", "orange", "green", "brown", "slate", "white"),
        *("red", "black", "yellow", "violet", "rose", "aqua"),
    ]
    by_cable: dict[str, list[str]] = {}
    for strand in document["strands"]:
        by_cable.setdefault(strand["cable"], []).append(strand["colours"])
    # F-1: 2 loose tubes of 12 -> unit colour / fiber colour.
    assert by_cable["F-1"] == [f"{unit}/{fiber}" for unit in order[:2] for fiber in order]
    # D-1: a central-core cable of 12 has no units: the fiber colour alone.
    assert by_cable["D-1"] == order


# -- cut impact ----------------------------------------------------------------------------


def test_only_the_piece_in_the_span_counts(database: Database) -> None:
    _load(database, ashgrove())
    # AG-2 rides F-1:5 only from the office to AC-1 (span S1), then the drop.
    assert [c["label"] for c in _impact(database, span="S1")["circuits"]] == ["AG-1", "AG-2"]
    document = _impact(database, span="S2")
    assert [c["label"] for c in document["circuits"]] == ["AG-1"]
    assert document["cables"] == ["F-1"] and document["strands"] == 24
    assert [c["label"] for c in _impact(database, span="S4")["circuits"]] == ["AG-2"]


def test_circuits_sort_active_first_with_ends_and_customer(database: Database) -> None:
    bundle = ashgrove()
    bundle.data["circuits"][0]["status"] = "reserved"
    _load(database, bundle)
    circuits = _impact(database, span="S1")["circuits"]
    assert [(c["label"], c["status"]) for c in circuits] == [
        ("AG-2", "active"),
        ("AG-1", "reserved"),
    ]
    assert circuits[0]["a"] == "CO-P1:5" and circuits[0]["z"] == "PR-P1:1"
    assert circuits[0]["customer"] == "Ashgrove Kiln Works"


def _pon() -> Bundle:
    b = ashgrove()
    b.splitter("SP-1", "AC-1", "1x4")
    b.cut("AC-1", "F-1:6")
    b.splice("AC-1", "F-1:6/A", "SP-1:in", slot=2)
    b.structure("AG-PR2", 330, 100, kind="customer_premises")
    b.span("S5", "AH-1", "AG-PR2", 110.0, kind="aerial")
    b.panel("PR2-P", "AG-PR2", ports=2)
    b.cable("D-2", ["S5"], [("AC-1", 0.0), ("PR2-P", 112.0)], units=1, kind="central_core")
    b.splice("AC-1", "SP-1:1", "D-1:2", slot=3).splice("AC-1", "SP-1:2", "D-2:1", slot=4)
    b.terminate("D-1:2", "PR-P1:2", method="field_connector")
    b.terminate("D-2:1", "PR2-P:1", method="field_connector")
    b.circuit("PON-A", "CO-P1:6", "PR-P1:2", kind="pon")
    b.circuit("PON-B", "CO-P1:6", "PR2-P:1", kind="pon")
    return b


def test_a_feeder_cut_takes_every_leg_a_drop_cut_only_its_own(database: Database) -> None:
    _load(database, _pon())
    feeder = [c["label"] for c in _impact(database, span="S1")["circuits"]]
    assert {"PON-A", "PON-B"} <= set(feeder)
    assert [c["label"] for c in _impact(database, span="S5")["circuits"]] == ["PON-B"]


def test_a_structure_with_only_a_slack_coil_counts_the_cable(database: Database) -> None:
    _load(database, ashgrove())
    document = _impact(database, structure="AH-2")
    assert document["cables"] == ["F-1"]
    assert [c["label"] for c in document["circuits"]] == ["AG-1"]


def test_a_structure_counts_cables_passing_and_ending(database: Database) -> None:
    _load(database, ashgrove())
    document = _impact(database, structure="AH-1")
    # F-1 passes through AC-1 mid-span, D-1 ends there: both are at risk.
    assert document["cables"] == ["D-1", "F-1"]
    assert document["strands"] == 36
    assert [c["label"] for c in document["circuits"]] == ["AG-1", "AG-2"]
    assert set(document["spans"]) == {"S1", "S2", "S4"}


def test_impact_refuses_unknown_or_ambiguous_places(database: Database) -> None:
    _load(database, ashgrove())
    with pytest.raises(PlantError, match="no span"):
        _impact(database, span="S9")
    with pytest.raises(PlantError, match="exactly one"):
        _impact(database, span="S1", structure="AH-1")


def test_impact_with_no_place_or_two_places_is_a_usage_error(
    plant: PlantCli, tmp_path: Path
) -> None:
    """The interface's exit statuses: a request put together wrongly exits 2, in one line."""
    _load_cli(plant, tmp_path, ashgrove())
    for argv in (["impact"], ["impact", "--span", "S1", "--structure", "AH-1"]):
        result = plant(*argv)
        assert result.exit_code == 2, argv
        assert result.stderr.startswith("plantdb: give exactly one place"), argv
        assert "Traceback" not in result.output


# -- break location --------------------------------------------------------------------------


def test_otdr_time_to_distance_uses_the_group_index() -> None:
    # t = 10 us, n = 1.4677: c*t/(2n) = 1021.30 m (REFERENCES, arithmetic on FOA's formula).
    assert otdr_distance_m(10e-6, 1.4677) == pytest.approx(1021.30, abs=0.01)


def _line_bundle(marks: tuple[float, float], reverse_s2: bool = False) -> Bundle:
    """CO -S1 300 m- M1 -S2 400 m (three vertices)- M2 -S3 300 m- CAB, a 12 m coil at M2."""
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("CO", 0, kind="central_office").structure("M1", 300).structure("M2", 700)
    b.structure("CAB", 1000, kind="cabinet")
    b.span("S1", "CO", "M1", 300.0)
    if reverse_s2:
        b.span("S2", "M2", "M1", 400.0, via=[(500, 80)])
    else:
        b.span("S2", "M1", "M2", 400.0, via=[(500, 80)])
    b.span("S3", "M2", "CAB", 300.0)
    b.panel("P-CO", "CO").panel("P-CAB", "CAB")
    b.cable(
        "LN", ["S1", "S2", "S3"], [("P-CO", marks[0]), ("P-CAB", marks[1])], slack=[("M2", 12.0)]
    )
    b.terminate("LN:1", "P-CO:1").terminate("LN:1", "P-CAB:1")
    return b


def test_locate_with_a_remainder_shared_by_span_length(database: Database) -> None:
    # Marks 0 -> 1032: spans 1000 + coil 12 leave 20 m, shared 300:400:300 -> S1 306 m,
    # S2 408 m of fiber, coil 12 m, S3 306 m.
    _load(database, _line_bundle((0.0, 1032.0)))
    document = _locate(database, "P-CO:1", 500.0)
    assert document["cable"] == "LN" and document["sheath_mark_m"] == pytest.approx(500.0)
    assert document["between"] == ["M1", "M2"]
    # 500 - 306 = 194 fiber metres into S2's 408: 194/408 of its 400 street metres.
    assert document["from"]["distance_m"] == pytest.approx(194 / 408 * 400)
    assert document["in_slack_at"] is None


def test_locate_inside_a_coil_and_past_it(database: Database) -> None:
    _load(database, _line_bundle((0.0, 1032.0)))
    inside = _locate(database, "P-CO:1", 720.0)  # coil holds 714-726
    assert inside["in_slack_at"] == "M2"
    assert [inside["lon"], inside["lat"]] == pytest.approx(position(700))
    past = _locate(database, "P-CO:1", 750.0)
    assert past["between"] == ["M2", "CAB"]
    assert past["from"]["distance_m"] == pytest.approx(24 / 306 * 300)


def test_locate_with_descending_marks(database: Database) -> None:
    _load(database, _line_bundle((8032.0, 7000.0)))
    document = _locate(database, "P-CO:1", 500.0)
    assert document["sheath_mark_m"] == pytest.approx(7532.0)
    assert document["between"] == ["M1", "M2"]


def test_locate_from_the_far_end_walks_spans_backwards(database: Database) -> None:
    _load(database, _line_bundle((0.0, 1032.0)))
    document = _locate(database, "P-CAB:1", 500.0)
    # From the cabinet: S3 306, coil 12 (318), then 182 fiber metres into S2 from M2.
    assert document["between"] == ["M2", "M1"]
    assert document["from"]["distance_m"] == pytest.approx(182 / 408 * 400)
    assert document["sheath_mark_m"] == pytest.approx(1032.0 - 500.0)
    # Walking toward the cable's A end, S2's line is taken from M2: (700, 0) -> (500, 80) ->
    # (300, 0), two legs of sqrt(200^2 + 80^2) = 215.41 m. 182/408 of 430.81 m is 192.18 m,
    # on the first leg from M2. Taken the drawn way (from M1) it would land 46 m away.
    from_m2 = _along([(700, 0), (500, 80), (300, 0)], 182 / 408)
    assert geo.distance_m(_at(document), from_m2) < 0.5
    from_m1 = _along([(300, 0), (500, 80), (700, 0)], 182 / 408)
    assert geo.distance_m(from_m1, from_m2) > 40.0


def test_locate_on_a_span_drawn_against_the_cable_follows_the_cable(
    database: Database,
) -> None:
    _load(database, _line_bundle((0.0, 1032.0), reverse_s2=True))
    forward = _locate(database, "P-CO:1", 306.0 + 204.0)  # half-way along S2's fiber
    # Half-way along the three-vertex line is its middle vertex, whichever way it was drawn.
    assert geo.distance_m([forward["lon"], forward["lat"]], position(500, 80)) < 1.0
    near_m1 = _locate(database, "P-CO:1", 306.0 + 40.8)
    assert near_m1["between"] == ["M1", "M2"]
    # 40.8 of S2's 408 fiber metres: a tenth of the 430.81 m line, 43.08 m from M1 toward the
    # middle vertex, though the line was drawn from M2.
    expected = _along([(300, 0), (500, 80), (700, 0)], 40.8 / 408)
    assert geo.distance_m(_at(near_m1), expected) < 0.5


def test_locate_rescales_by_the_otdr_index(database: Database) -> None:
    _load(database, _line_bundle((0.0, 1032.0)))
    document = _locate(database, "P-CO:1", 500.0, otdr_index=1.4700)
    # d_true = 500 x 1.4700 / 1.4677 (the fiber's group index at 1310 nm).
    assert document["fiber_distance_m"] == pytest.approx(500.0 * 1.47 / 1.4677)
    at_1550 = _locate(database, "P-CO:1", 500.0, otdr_index=1.4700, wavelength=1550)
    assert at_1550["fiber_distance_m"] == pytest.approx(500.0 * 1.47 / 1.4682)


def test_locate_gives_a_range_and_a_caution(database: Database) -> None:
    _load(database, _line_bundle((0.0, 1032.0)))
    document = _locate(database, "P-CO:1", 500.0)
    low, high = document["range_m"]
    # The documented planning figures: OTDR 1 m + 0.01 % of D (memory), fiber up to 0.3 %
    # longer than its sheath (seen), 2 m for reading marks (trade): 1.05 + 3.5 = 4.55 m.
    assert document["uncertainty"]["total_m"] == pytest.approx(1.0 + 0.05 + 1.5 + 2.0)
    assert [low, high] == pytest.approx([495.45, 504.55])
    # The range line runs from the point at 495.45 m to the one at 504.55 m: 189.45 and
    # 198.55 fiber metres into S2's 408, both on its first leg (M1 -> (500, 80)).
    line = document["range_line"]
    s2 = [(300, 0), (500, 80), (700, 0)]
    assert geo.distance_m(line[0], _along(s2, 189.45 / 408)) < 0.5
    assert geo.distance_m(line[-1], _along(s2, 198.55 / 408)) < 0.5
    assert document["range_marks_m"] == pytest.approx([495.45, 504.55])
    assert "utility locates" in document["caution"]


def test_locate_past_the_far_end_is_refused_with_the_length(database: Database) -> None:
    _load(database, _line_bundle((0.0, 1032.0)))
    with pytest.raises(PlantError, match=r"1032\.0 m long"):
        _locate(database, "P-CO:1", 1100.0)
    with pytest.raises(PlantError, match="positive"):
        _locate(database, "P-CO:1", -3.0)


def _bent_span() -> Bundle:
    """One span B1 from office BO to manhole BM, surveyed 400 m and drawn with three legs of
    unequal length: (0, 0) -> (50, 0) -> (50, 250) -> (150, 250), that is 50, 250 and 100 m.
    Cable BL runs it with marks 0 -> 420: 20 m of remainder, all on B1's one span."""
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("BO", 0, kind="central_office").structure("BM", 150, 250)
    b.span("B1", "BO", "BM", 400.0, via=[(50, 0), (50, 250)])
    b.panel("P-BO", "BO").panel("P-BM", "BM")
    b.cable("BL", ["B1"], [("P-BO", 0.0), ("P-BM", 420.0)])
    return b.terminate("BL:1", "P-BO:1").terminate("BL:1", "P-BM:1")


def test_locate_on_a_multi_vertex_span_goes_by_length_not_vertex_count(
    database: Database,
) -> None:
    _load(database, _bent_span())
    document = _locate(database, "P-BO:1", 105.0)
    # 105 of B1's 420 fiber metres is a quarter: 100 of its 400 street metres, which is 50 m
    # into the 250 m leg, at (50, 50). Shared out by vertex count instead (a third of the
    # fraction per leg) a quarter would fall 3/4 along the first leg, at (37.5, 0): 51.5 m off.
    assert document["between"] == ["BO", "BM"]
    assert document["from"]["distance_m"] == pytest.approx(100.0)
    assert document["sheath_mark_m"] == pytest.approx(105.0)
    assert geo.distance_m(_at(document), position(50, 50)) < 0.5
    assert geo.distance_m(_at(document), position(37.5, 0)) > 50.0
    # Range: 1 m + 0.01 % (memory) + 0.3 % (seen) + 2 m (trade) of 105 m = 3.3255 m either
    # side, 101.6745-108.3255 fiber metres: 96.83 and 103.17 street metres, both on the
    # 250 m leg at (50, 46.83) and (50, 53.17), with no vertex between them.
    total = 1.0 + 0.0001 * 105 + 0.003 * 105 + 2.0
    assert document["range_m"] == pytest.approx([105.0 - total, 105.0 + total])
    line = document["range_line"]
    assert len(line) == 2
    assert geo.distance_m(line[0], position(50, (105.0 - total) * 400 / 420 - 50)) < 0.5
    assert geo.distance_m(line[1], position(50, (105.0 + total) * 400 / 420 - 50)) < 0.5


def test_a_range_across_a_vertex_bends_with_the_drawn_line(database: Database) -> None:
    _load(database, _bent_span())
    document = _locate(database, "P-BO:1", 54.6)
    # 54.6 fiber metres is 52 street metres: 2 m up the 250 m leg, at (50, 2). The range,
    # 3.16926 m either side, runs from 51.43074 fiber metres (48.98 street metres, on the
    # first leg at (48.98, 0)) round the corner (50, 0) to 57.76926 (55.02 street metres,
    # at (50, 5.02)).
    assert geo.distance_m(_at(document), position(50, 2)) < 0.5
    total = 1.0 + 0.0001 * 54.6 + 0.003 * 54.6 + 2.0
    low, high = ((54.6 - total) * 400 / 420, (54.6 + total) * 400 / 420)
    assert low == pytest.approx(48.98, abs=0.01) and high == pytest.approx(55.02, abs=0.01)
    start, corner, end = document["range_line"]
    assert geo.distance_m(start, position(low, 0)) < 0.5
    assert geo.distance_m(corner, position(50, 0)) < 0.01
    assert geo.distance_m(end, position(50, high - 50)) < 0.5


def _patched_line() -> Bundle:
    """Office JO -J1 200 m- cabinet JM -J2 300 m- cabinet JZ. Cable CA (marks 0 -> 200) ends
    on panel P-M at JM, cable CB (marks 0 -> 300) starts on panel P-N there, and port P-M:1 is
    patched to P-N:1 by a jumper recorded as 10 m long."""
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("JO", 0, kind="central_office").structure("JM", 200, kind="cabinet")
    b.structure("JZ", 500, kind="cabinet")
    b.span("J1", "JO", "JM", 200.0).span("J2", "JM", "JZ", 300.0)
    b.panel("P-A", "JO").panel("P-M", "JM").panel("P-N", "JM").panel("P-Z", "JZ")
    b.cable("CA", ["J1"], [("P-A", 0.0), ("P-M", 200.0)])
    b.cable("CB", ["J2"], [("P-N", 0.0), ("P-Z", 300.0)])
    b.terminate("CA:1", "P-A:1").terminate("CA:1", "P-M:1")
    b.terminate("CB:1", "P-N:1").terminate("CB:1", "P-Z:1")
    return b.jumper("P-M:1", "P-N:1", length_m=10.0)


def test_locate_counts_a_jumper_on_the_path_as_zero_length(database: Database) -> None:
    """The documented rule: only fiber in cables is laid on the street; a patch cord in a
    cabinet adds nothing, whatever length is recorded for it."""
    _load(database, _patched_line())
    document = _locate(database, "P-A:1", 250.0)
    # 200 m of CA, then 50 m into CB (not 40: the 10 m jumper is not counted).
    assert document["cable"] == "CB" and document["sheath_mark_m"] == pytest.approx(50.0)
    assert document["between"] == ["JM", "JZ"]
    assert document["from"]["distance_m"] == pytest.approx(50.0)
    assert document["path_length_m"] == pytest.approx(500.0)
    with pytest.raises(PlantError, match=r"500\.0 m long"):
        _locate(database, "P-A:1", 505.0)


def test_a_broken_circuit_still_shows_where_its_a_end_reaches(database: Database) -> None:
    """Safety: a circuit whose record no longer reaches Z is still named at a cut or an open
    closure on what its A end reaches, marked as incomplete."""
    bundle = ashgrove()
    bundle.data["terminations"] = [t for t in bundle.data["terminations"] if t["port"] != "PR-P1:1"]
    _load(database, bundle)
    circuits = _impact(database, span="S1")["circuits"]
    broken = next(c for c in circuits if c["label"] == "AG-2")
    assert broken["path_state"] == "incomplete"
    strand = next(s for s in _live(database, "AC-1")["strands"] if s["address"] == "F-1:5")
    assert strand["circuits"] == [{"label": "AG-2", "status": "active", "path_state": "incomplete"}]
    assert strand["live"]


# -- circuits the record does not carry from A to Z --------------------------------------------


def test_a_circuit_with_no_z_end_is_named_where_its_a_end_reaches(database: Database) -> None:
    """Safety: an active circuit whose Z end was never recorded still rides what its A end
    reaches (here F-1:2 from the office through AC-1 to the cabinet), so opening AC-1 or
    cutting S2 names it; the drop span S4, off its path, does not."""
    bundle = ashgrove().circuit("AG-3", "CO-P1:2", None)
    _load(database, bundle)
    strand = next(s for s in _live(database, "AC-1")["strands"] if s["address"] == "F-1:2")
    assert strand["state"] == "express"
    assert strand["circuits"] == [{"label": "AG-3", "status": "active", "path_state": "no_z"}]
    assert strand["live"]
    circuits = {c["label"]: c for c in _impact(database, span="S2")["circuits"]}
    assert set(circuits) == {"AG-1", "AG-3"}
    assert circuits["AG-3"]["path_state"] == "no_z" and circuits["AG-3"]["z"] is None
    assert circuits["AG-1"]["path_state"] == "complete"
    assert [c["label"] for c in _impact(database, span="S4")["circuits"]] == ["AG-2"]


def _with_a_loop(bundle: Bundle) -> Bundle:
    """Two one-strand cables from panel RING-P in the office to AC-1, spliced together there,
    with the panel's two ports patched to each other: light would go round for ever. Circuit
    AG-RING starts on that panel, so its walk is a records error."""
    bundle.panel("RING-P", "AG-CO", ports=2)
    for label in ("R-A", "R-B"):
        stations: list[tuple[str, float | None]] = [("RING-P", 0.0), ("AC-1", 303.0)]
        bundle.cable(label, ["S1"], stations, units=1, kind="central_core")
    bundle.terminate("R-A:1", "RING-P:1").terminate("R-B:1", "RING-P:2")
    bundle.jumper("RING-P:1", "RING-P:2")
    bundle.splice("AC-1", "R-A:1", "R-B:1", slot=7)
    return bundle.circuit("AG-RING", "RING-P:1", "RING-P:2")


def test_a_circuit_whose_walk_fails_is_named_as_untraced(database: Database) -> None:
    """No answer can place a circuit whose walk fails, so live and impact name it, with the
    records error, rather than leave it out silently."""
    _load(database, _with_a_loop(ashgrove()))
    for document in (
        _live(database, "AC-1"),
        _impact(database, span="S2"),
        _impact(database, structure="AH-2"),
    ):
        (untraced,) = document["untraced_circuits"]
        assert (untraced["label"], untraced["status"]) == ("AG-RING", "active")
        assert "loops" in untraced["note"] and "RING-P" in untraced["note"]
        assert "AG-RING" not in [c["label"] for c in document.get("circuits", [])]


def test_a_sound_record_names_no_untraced_circuit(database: Database) -> None:
    _load(database, ashgrove())
    assert _live(database, "AC-1")["untraced_circuits"] == []
    assert _impact(database, span="S1")["untraced_circuits"] == []


# -- the text forms ----------------------------------------------------------------------------


def _troubled_ashgrove() -> Bundle:
    """Ashgrove with AG-2 broken (its premises port no longer terminated), AG-3 recorded with
    no Z end on F-1:2, and AG-RING caught in a loop."""
    bundle = ashgrove()
    bundle.data["terminations"] = [t for t in bundle.data["terminations"] if t["port"] != "PR-P1:1"]
    bundle.circuit("AG-3", "CO-P1:2", None)
    return _with_a_loop(bundle)


def test_text_shows_path_states_and_warns_of_untraced_circuits(
    plant: PlantCli, tmp_path: Path
) -> None:
    _load_cli(plant, tmp_path, _troubled_ashgrove())
    warning = (
        "WARNING: 1 circuit(s) cannot be traced because of a records error and may run here:"
        " AG-RING (active)."
    )
    live = _text(plant, "live", "--closure", "AC-1")
    assert "AG-2 (active, path broken)" in live
    assert "AG-3 (active, no Z end)" in live
    assert "AG-1 (active)" in live  # a complete path adds nothing to the status
    assert warning in live and live.index(warning) < live.index("CAUTION:")
    assert _ends_with(live, CLOSURE_CAUTION)
    impact = _text(plant, "impact", "--span", "S1")
    rows = {
        line.split()[0]: re.split(r"\s{2,}", line.strip())
        for line in impact.splitlines()
        if line.startswith("AG-")
    }
    assert "active, path broken" in rows["AG-2"]
    assert "active, no Z end" in rows["AG-3"]
    assert "active" in rows["AG-1"]
    assert warning in impact and impact.index(warning) < impact.index("CAUTION:")
    assert _ends_with(impact, IMPACT_CAUTION)


def test_impact_and_locate_text_end_with_their_cautions(plant: PlantCli, tmp_path: Path) -> None:
    _load_cli(plant, tmp_path, ashgrove())
    for argv in (["impact", "--span", "S2"], ["impact", "--structure", "AH-2"]):
        text = _text(plant, *argv)
        assert _ends_with(text, IMPACT_CAUTION), argv
        assert "WARNING" not in text  # nothing in this record fails to trace
    text = _text(plant, "locate", "--port", "CO-P1:1", "--distance-m", "500")
    assert _ends_with(text, LOCATE_CAUTION)
    # Before digging: the locate caution calls for utility locates.
    assert "utility locates" in " ".join(text.split())
