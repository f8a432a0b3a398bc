"""Dispatcher answers on hand-built networks: live through a closure, cut impact, locate.

Sources: OTDR distance = c*t / (2*n_group) and re-scaling d_true = d_reported * n_otdr /
n_fiber (FOA, seen; the second follows from the first); group index of standard single-mode
fiber 1.4677 at 1310 nm and 1.4682 at 1550 nm (fiber datasheet, seen). The break-location
layout rule (spans by length, coils standing still, remainder shared by span length) is the
interface document's; positions are checked against lengths worked by hand below.
"""

from __future__ import annotations

from typing import Any

import pytest

from plantdb import geo
from plantdb.catalogue import otdr_distance_m
from plantdb.db import Database, run_in_transaction
from plantdb.errors import PlantError
from plantdb.records.bundle import load_bundle
from plantdb.trace.dispatch import impact_document, live_document, locate_document
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
    plant: Any, tmp_path: Any
) -> None:
    import json

    file = tmp_path / "b.json"
    file.write_text(json.dumps(ashgrove().data))
    assert plant("load", str(file)).exit_code == 0
    text = plant("live", "--closure", "AC-1").stdout
    assert text.index("LIVE STRANDS") < text.index("F-1, unit 1")
    assert "*** " in text and "F-1:1" in text
    assert text.rstrip().endswith("aerial-work rules apply.")


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


def test_locate_on_a_span_drawn_against_the_cable_follows_the_cable(
    database: Database,
) -> None:
    _load(database, _line_bundle((0.0, 1032.0), reverse_s2=True))
    forward = _locate(database, "P-CO:1", 306.0 + 204.0)  # half-way along S2's fiber
    # Half-way along the three-vertex line is its middle vertex, whichever way it was drawn.
    assert geo.distance_m([forward["lon"], forward["lat"]], position(500, 80)) < 1.0
    near_m1 = _locate(database, "P-CO:1", 306.0 + 40.8)
    assert near_m1["between"] == ["M1", "M2"]
    assert geo.distance_m([near_m1["lon"], near_m1["lat"]], position(300)) < 60.0


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
    assert low < 500.0 < high
    assert high - low == pytest.approx(2 * document["uncertainty"]["total_m"])
    assert len(document["range_line"]) >= 2
    assert "utility locates" in document["caution"]


def test_locate_past_the_far_end_is_refused_with_the_length(database: Database) -> None:
    _load(database, _line_bundle((0.0, 1032.0)))
    with pytest.raises(PlantError, match=r"1032\.0 m long"):
        _locate(database, "P-CO:1", 1100.0)
    with pytest.raises(PlantError, match="positive"):
        _locate(database, "P-CO:1", -3.0)


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
