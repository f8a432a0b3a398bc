"""Traces on hand-built networks, on SQLite and PostgreSQL."""

from __future__ import annotations

from typing import Any

import pytest

from plantdb.db import Database, run_in_transaction
from plantdb.errors import NotFound, PlantError, RecordsError
from plantdb.records.bundle import load_bundle
from plantdb.safety import TRACE_CAUTION
from plantdb.trace.loss import LossOptions
from plantdb.trace.service import loss_report, trace_document
from tests.networks import (
    SINGLE_MODE,
    Bundle,
    ashgrove,
    ashgrove_two_input_splitter,
    long_route,
)


def _load(database: Database, bundle: Bundle) -> None:
    run_in_transaction(database, lambda s: load_bundle(s, bundle.data))


def _trace(database: Database, kind: str, value: str) -> dict[str, Any]:
    with database.read() as session:
        return trace_document(session, kind, value)


def _labels(path: dict[str, Any]) -> list[str]:
    return [e["label"] for e in path["elements"]]


def test_an_express_strand_is_one_piece_through_the_closure(database: Database) -> None:
    _load(database, ashgrove())
    document = _trace(database, "port", "CO-P1:1")
    (path,) = document["paths"]
    assert _labels(path) == ["CO-P1:1", "F-1:1", "CAB-P1:1"]
    fiber = path["elements"][1]
    # Marks 0 and 1020 on the sheath: one piece of 1020 m, passing AC-1 uncut.
    assert fiber["length_m"] == 1020.0
    assert fiber["expresses_through"] == ["AC-1"]
    assert fiber["from_station"] == "CO-P1" and fiber["to_station"] == "CAB-P1"
    assert path["begin"] == {"kind": "open_port", "at": "CO-P1:1"}
    assert path["end"] == {"kind": "open_port", "at": "CAB-P1:1"}


def test_a_cut_strand_is_two_pieces(database: Database) -> None:
    _load(database, ashgrove())
    document = _trace(database, "fiber", "F-1:5")
    first, second = document["paths"]
    # The piece toward the office is spliced on to the drop and reaches the premises.
    assert _labels(first) == ["CO-P1:5", "F-1:5", "AC-1 tray 1 slot 1", "D-1:1", "PR-P1:1"]
    assert first["elements"][1]["length_m"] == 305.0
    assert first["elements"][2]["from_end"] == "F-1:5/A"
    # The piece toward the cabinet is cut off at AC-1 and was never landed at the cabinet.
    assert _labels(second) == ["F-1:5"]
    assert second["begin"] == {"kind": "dead_end", "at": "F-1:5/B"}
    assert second["end"] == {"kind": "dead_end", "at": "F-1:5"}
    assert second["elements"][0]["length_m"] == 1020.0 - 305.0


def test_descending_sheath_marks_give_positive_lengths(database: Database) -> None:
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("W", 0).structure("M", 400).structure("E", 900)
    b.span("W-M", "W", "M", 400.0).span("M-E", "M", "E", 500.0)
    b.panel("PW", "W").panel("PE", "E").closure("CM", "M")
    # The jacket was printed counting down from the drum's far end.
    b.cable("DN", ["W-M", "M-E"], [("PW", 5210.0), ("CM", 4800.0), ("PE", 4290.0)])
    b.terminate("DN:1", "PW:1").terminate("DN:1", "PE:1")
    _load(database, b)
    (path,) = _trace(database, "port", "PW:1")["paths"]
    assert path["elements"][1]["length_m"] == 5210.0 - 4290.0
    assert path["elements"][1]["length_source"] == "sheath marks"


def test_missing_marks_fall_back_to_spans_and_slack(database: Database) -> None:
    bundle = ashgrove()
    for station in bundle.data["cables"][0]["stations"]:
        station.pop("mark_m")
    _load(database, bundle)
    (path,) = _trace(database, "port", "CO-P1:1")["paths"]
    # Spans 300 + 400 + 300 m and the 12 m coil at AH-2.
    assert path["elements"][1]["length_m"] == 1012.0
    assert path["elements"][1]["length_source"] == "spans and slack"


def test_a_jumper_between_panels_is_followed(database: Database) -> None:
    bundle = ashgrove()
    bundle.panel("CO-P2", "AG-CO").jumper("CO-P2:1", "CO-P1:2", length_m=3.0)
    _load(database, bundle)
    (path,) = _trace(database, "port", "CO-P2:1")["paths"]
    assert _labels(path) == ["CO-P2:1", "CO-P2:1 - CO-P1:2", "CO-P1:2", "F-1:2", "CAB-P1:2"]
    assert path["elements"][1]["kind"] == "jumper"
    assert path["elements"][1]["length_m"] == 3.0
    # The jumper's own few metres are reported but not counted as the path's fiber.
    assert path["length_m"] == 1020.0


def test_a_patched_port_is_walked_both_ways(database: Database) -> None:
    bundle = ashgrove()
    bundle.equipment("SW-1", "AG-CO", ["1", "2"]).jumper("SW-1:1", "CO-P1:1")
    _load(database, bundle)
    (path,) = _trace(database, "port", "CO-P1:1")["paths"]
    assert _labels(path) == ["SW-1:1", "CO-P1:1 - SW-1:1", "CO-P1:1", "F-1:1", "CAB-P1:1"]
    assert path["begin"] == {"kind": "equipment", "at": "SW-1:1"}
    assert path["elements"][1]["from_port"] == "SW-1:1"


def _pon(ratio: str = "1x4") -> Bundle:
    b = ashgrove()
    b.splitter("SP-1", "AC-1", ratio)
    b.cut("AC-1", "F-1:6")
    b.splice("AC-1", "F-1:6/A", "SP-1:in", slot=2)
    b.structure("AG-PR2", 330, 100, kind="customer_premises")
    b.span("S5", "AH-1", "AG-PR2", 110.0, kind="aerial")
    b.panel("PR2-P", "AG-PR2", ports=2)
    b.cable("D-2", ["S5"], [("AC-1", 0.0), ("PR2-P", 112.0)], units=1, kind="central_core")
    b.splice("AC-1", "SP-1:1", "D-1:2", slot=3).splice("AC-1", "SP-1:2", "D-2:1", slot=4)
    b.terminate("D-1:2", "PR-P1:2", method="field_connector")
    b.terminate("D-2:1", "PR2-P:1", method="field_connector")
    return b


def test_a_splitter_fans_out_downstream(database: Database) -> None:
    _load(database, _pon())
    document = _trace(database, "port", "CO-P1:6")
    ends = [p["end"] for p in document["paths"]]
    assert ends == [
        {"kind": "open_port", "at": "PR-P1:2"},
        {"kind": "open_port", "at": "PR2-P:1"},
        {"kind": "dead_end", "at": "SP-1:3"},
        {"kind": "dead_end", "at": "SP-1:4"},
    ]
    splitter = document["paths"][0]["elements"][3]
    assert (splitter["kind"], splitter["from_leg"], splitter["to_leg"]) == ("splitter", "in", "1")


def test_a_splitter_converges_upstream(database: Database) -> None:
    _load(database, _pon())
    (path,) = _trace(database, "port", "PR2-P:1")["paths"]
    assert path["end"] == {"kind": "open_port", "at": "CO-P1:6"}
    splitter = next(e for e in path["elements"] if e["kind"] == "splitter")
    assert (splitter["from_leg"], splitter["to_leg"]) == ("2", "in")


def test_a_loop_in_the_record_is_refused_naming_where(database: Database) -> None:
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("X", 0).structure("Y", 500)
    b.span("XY-1", "X", "Y", 500.0).span("XY-2", "X", "Y", 510.0)
    b.closure("CX", "X").closure("CY", "Y")
    b.cable("P", ["XY-1"], [("CX", 0.0), ("CY", 505.0)])
    b.cable("Q", ["XY-2"], [("CX", 0.0), ("CY", 515.0)])
    # P:1 and Q:1 joined at both ends: light would go round for ever.
    b.splice("CX", "P:1", "Q:1").splice("CY", "P:1", "Q:1")
    _load(database, b)
    with pytest.raises(RecordsError, match=r"loops.*(P:1|Q:1) at (CX|CY)"):
        _trace(database, "fiber", "P:1")


def test_a_dead_end_is_named(database: Database) -> None:
    _load(database, ashgrove())
    (path,) = _trace(database, "fiber", "F-1:20")["paths"]
    assert path["begin"] == {"kind": "dead_end", "at": "F-1:20"}
    assert path["end"] == {"kind": "dead_end", "at": "F-1:20"}
    assert path["elements"][0]["colours"] == "orange/black"


def test_strand_colours_follow_tia_598(database: Database) -> None:
    b = Bundle().fiber_type(SINGLE_MODE).structure("A", 0).structure("B", 100)
    b.span("AB", "A", "B", 100.0).closure("CA", "A").closure("CB", "B")
    b.cable("C-A", ["AB"], [("CA", 0.0), ("CB", 101.0)], units=4, per_unit=12)
    _load(database, b)
    (path,) = _trace(database, "fiber", "C-A:37")["paths"]
    # ANSI/TIA-598: tube 4 is brown, fiber 1 blue; strand 37 = (4 - 1) x 12 + 1.
    assert path["elements"][0]["colours"] == "brown/blue"


def test_a_circuit_path_runs_from_a_to_z_and_marks_lit(database: Database) -> None:
    _load(database, ashgrove())
    document = _trace(database, "circuit", "AG-2")
    (path,) = document["paths"]
    assert _labels(path)[0] == "CO-P1:5" and _labels(path)[-1] == "PR-P1:1"
    assert document["circuit"]["reaches_z"] is True
    assert all(e["lit"] for e in path["elements"] if e["kind"] == "fiber")
    assert path["elements"][1]["circuits"] == [{"label": "AG-2", "status": "active"}]


def test_a_strand_without_active_service_is_not_lit(database: Database) -> None:
    bundle = ashgrove()
    bundle.data["circuits"][0]["status"] = "planned"
    _load(database, bundle)
    (path,) = _trace(database, "port", "CO-P1:1")["paths"]
    fiber = path["elements"][1]
    assert fiber["lit"] is False
    assert fiber["circuits"] == [{"label": "AG-1", "status": "planned"}]


def test_a_broken_circuit_says_where_the_walk_stops(database: Database) -> None:
    bundle = ashgrove()
    bundle.data["splices"] = []
    _load(database, bundle)
    document = _trace(database, "circuit", "AG-2")
    assert document["circuit"]["reaches_z"] is False
    assert "F-1:5/A" in document["notes"][0] or "dead_end" in document["notes"][0]


def test_unknown_starts_are_refused(database: Database) -> None:
    _load(database, ashgrove())
    with pytest.raises(NotFound, match="NOPE"):
        _trace(database, "port", "NOPE:1")
    with pytest.raises(NotFound, match="strands 1-24"):
        _trace(database, "fiber", "F-1:99")
    with pytest.raises(NotFound, match="no circuit"):
        _trace(database, "circuit", "AG-99")
    with pytest.raises(PlantError, match="every piece"):
        _trace(database, "fiber", "F-1:5/A")


def test_an_amplifier_in_the_middle_passes_the_light_and_splits_the_sections(
    database: Database,
) -> None:
    """Optically amplified spans run 40-100 km, 60-80 km typical (seen): two 70 km spans
    either side of an amplifier (role "amplifier"), optics +2.0 / -18.0 dBm (20 dB)."""
    _load(database, long_route(70_000.0, 70_000.0, role="amplifier"))
    (path,) = _trace(database, "circuit", "LONG")["paths"]
    assert _labels(path) == [
        "TE:1",
        "TE:1 - PE:1",
        "PE:1",
        "LH-1:1",
        "PM1:1",
        "PM1:1 - AMP:west",
        "AMP:west",
        "AMP:east - PM2:1",
        "PM2:1",
        "LH-2:1",
        "PW:1",
        "PW:1 - TW:1",
        "TW:1",
    ]
    amplifier = path["elements"][6]
    # The gear appears once, under the port the light enters by, naming where it leaves.
    assert (amplifier["kind"], amplifier["role"], amplifier["passes_to"]) == (
        "equipment",
        "amplifier",
        "AMP:east",
    )
    assert path["begin"] == {"kind": "equipment", "at": "TE:1"}
    assert path["end"] == {"kind": "equipment", "at": "TW:1"}
    with database.read() as session:
        loss = loss_report(session, "circuit", "LONG", LossOptions())
    sections = loss["sections"]
    assert [(s["from"], s["to"], s["length_m"]) for s in sections] == [
        ("TE:1", "AMP:west", 70_000.0),
        ("AMP:west", "TW:1", 70_000.0),
    ]
    # Each: 70 km x 0.5 + 2 x 0.3 + 2 x 0.75 = 37.1 dB (ANSI/TIA-568.3-D maxima) > 20 dB.
    for section in sections:
        assert section["wavelengths"]["1310"]["max_db"] == pytest.approx(37.1)
        assert section["margin_db"]["1310"]["max"] == pytest.approx(20.0 - 37.1)
        assert section["over_budget"] is True
    assert "power_budget" not in loss


def test_a_two_input_splitter_converges_to_both_inputs_upstream(database: Database) -> None:
    """From a leg of a 2xN splitter the light goes back to each of its two inputs: two paths,
    one to each feeder strand's office port."""
    _load(database, ashgrove_two_input_splitter())
    paths = _trace(database, "port", "PR-P1:2")["paths"]
    assert sorted(p["end"]["at"] for p in paths) == ["CO-P1:6", "CO-P1:7"]
    assert all(p["end"]["kind"] == "open_port" for p in paths)
    by_end = {p["end"]["at"]: p for p in paths}
    for at, leg, feeder in (("CO-P1:6", "in", "F-1:6"), ("CO-P1:7", "in2", "F-1:7")):
        splitter = next(e for e in by_end[at]["elements"] if e["kind"] == "splitter")
        assert (splitter["ratio"], splitter["from_leg"], splitter["to_leg"]) == ("2x4", "1", leg)
        assert feeder in _labels(by_end[at])
    # Downstream from one input the splitter fans out to its four outputs only, never back
    # up the other input.
    ends = [p["end"] for p in _trace(database, "port", "CO-P1:6")["paths"]]
    assert ends == [
        {"kind": "open_port", "at": "PR-P1:2"},
        {"kind": "dead_end", "at": "SP-2:2"},
        {"kind": "dead_end", "at": "SP-2:3"},
        {"kind": "dead_end", "at": "SP-2:4"},
    ]


def _patched_ashgrove() -> Bundle:
    """Ashgrove with switch SW-1 at the office patched to CO-P1:1 and switch SW-2 at the
    cabinet patched to CAB-P1:1; circuit AG-1 still runs CO-P1:1 -> CAB-P1:1 (panel ports
    with more beyond), AG-SW runs SW-1:2 -> CAB-P1:2 (an equipment A, an open Z)."""
    b = ashgrove()
    b.equipment("SW-1", "AG-CO", ["1", "2"]).equipment("SW-2", "AG-CAB", ["1"])
    b.jumper("SW-1:1", "CO-P1:1").jumper("CAB-P1:1", "SW-2:1").jumper("SW-1:2", "CO-P1:2")
    b.circuit("AG-SW", "SW-1:2", "CAB-P1:2")
    return b


def test_a_circuit_between_patched_ports_begins_and_ends_at_circuit_ends(
    database: Database,
) -> None:
    """docs/interface.md: `circuit_end` where the circuit's path is stopped at its own end
    although more is connected beyond it; the walk's own end kind where nothing lies beyond."""
    _load(database, _patched_ashgrove())
    document = _trace(database, "circuit", "AG-1")
    (path,) = document["paths"]
    assert _labels(path) == ["CO-P1:1", "F-1:1", "CAB-P1:1"]
    assert path["begin"] == {"kind": "circuit_end", "at": "CO-P1:1"}
    assert path["end"] == {"kind": "circuit_end", "at": "CAB-P1:1"}
    # The port trace from the same A still walks on to both switches.
    (whole,) = _trace(database, "port", "CO-P1:1")["paths"]
    assert whole["begin"] == {"kind": "equipment", "at": "SW-1:1"}
    assert whole["end"] == {"kind": "equipment", "at": "SW-2:1"}
    # The answer says to verify in the field, whatever the lit marks say.
    assert document["caution"] == TRACE_CAUTION
    assert "fiber identifier or optical power meter" in document["caution"]


def test_a_circuit_from_equipment_to_an_open_port_keeps_those_kinds(database: Database) -> None:
    _load(database, _patched_ashgrove())
    (path,) = _trace(database, "circuit", "AG-SW")["paths"]
    assert _labels(path) == ["SW-1:2", "SW-1:2 - CO-P1:2", "CO-P1:2", "F-1:2", "CAB-P1:2"]
    assert path["begin"] == {"kind": "equipment", "at": "SW-1:2"}
    assert path["end"] == {"kind": "open_port", "at": "CAB-P1:2"}


def test_a_circuit_with_an_open_a_and_a_patched_z(database: Database) -> None:
    """Only the end with more beyond it is a circuit end."""
    bundle = ashgrove()
    bundle.equipment("SW-2", "AG-CAB", ["1"]).jumper("CAB-P1:1", "SW-2:1")
    _load(database, bundle)
    (path,) = _trace(database, "circuit", "AG-1")["paths"]
    assert path["begin"] == {"kind": "open_port", "at": "CO-P1:1"}
    assert path["end"] == {"kind": "circuit_end", "at": "CAB-P1:1"}
    with database.read() as session:
        loss = loss_report(session, "circuit", "AG-1", LossOptions())
    # The loss document names the same ends as the trace.
    assert loss["begin"] == {"kind": "open_port", "at": "CO-P1:1"}
    assert loss["end"] == {"kind": "circuit_end", "at": "CAB-P1:1"}
