"""Records health (`plantdb check`): every rule of plantdb/trace/health.py, on SQLite and
PostgreSQL.

These are the rules the database's constraints cannot hold, so an out-of-band edit (SQL
typed at a console, a half-finished repair script) can break them. Each test loads a sound
record through the ordinary loader, breaks it with plain SQL the way such an edit would, and
checks that the report names the right thing and the right place. The rules are the
project's domain rules: a splice joins exactly two fiber ends inside one closure, where both
cables are worked; a strand has an end mid-span only where it is cut; a termination is on a
panel where its cable ends; a splitter's legs are spliced in the closure that holds it.
That single-mode fiber cannot usefully be spliced to multimode (an 8-9 um core against a
50 um one) is a common-practice fact.
"""

from __future__ import annotations

import json
from typing import Any

from sqlalchemy import text

from plantdb.db import Database, run_in_transaction
from plantdb.records.bundle import load_bundle
from plantdb.trace.health import check_record
from tests.conftest import PlantCli
from tests.networks import MULTIMODE, SINGLE_MODE, Bundle, ashgrove


def _closure_id(param: str = "closure") -> str:
    """SQL for the id of the closure whose label is bound as `:param`."""
    return f"(SELECT id FROM closure WHERE label = :{param})"


_CLOSURE = _closure_id()
_STRAND = (
    "(SELECT s.id FROM strand s JOIN cable k ON k.id = s.cable_id"
    " WHERE k.label = :cable AND s.number = :number)"
)
_PANEL_PORT = (
    "(SELECT p.id FROM port p JOIN panel o ON o.id = p.panel_id"
    " WHERE o.label = :{panel} AND p.name = :{port})"
)


def _record() -> Bundle:
    """Ashgrove (see tests/networks.py) with a spare closure AC-2 in handhole AH-2 and a 1x4
    splitter SP-1 in AC-1: F-1:6 cut there and spliced to its input, leg 1 spliced to drop
    D-1:2, field-connectorised on PR-P1:2 (circuit PON-1)."""
    b = ashgrove().fiber_type(MULTIMODE)
    b.closure("AC-2", "AH-2")
    b.splitter("SP-1", "AC-1", "1x4")
    b.cut("AC-1", "F-1:6")
    b.splice("AC-1", "F-1:6/A", "SP-1:in", slot=2)
    b.splice("AC-1", "SP-1:1", "D-1:2", slot=3)
    b.terminate("D-1:2", "PR-P1:2", method="field_connector")
    b.circuit("PON-1", "CO-P1:6", "PR-P1:2", kind="pon")
    return b


def _load(database: Database, bundle: Bundle) -> None:
    run_in_transaction(database, lambda s: load_bundle(s, bundle.data))


def _break(database: Database, statement: str, **params: Any) -> None:
    """An out-of-band edit: plain SQL straight to the database, no plantdb service."""
    with database.engine.begin() as connection:
        connection.execute(text(statement), params)


def _check(database: Database) -> dict[str, Any]:
    return run_in_transaction(database, check_record)


def _problems(report: dict[str, Any]) -> list[dict[str, Any]]:
    """The problems in a fixed order (the rules' queries do not sort the rows they find)."""
    return sorted(report["problems"], key=lambda p: (p["kind"], p["what"]))


def test_a_sound_record_gives_nothing(database: Database, plant: PlantCli) -> None:
    _load(database, _record())
    report = _check(database)
    assert report == {"ok": True, "circuits_checked": 3, "problems": [], "notices": []}
    result = plant("check")
    assert result.exit_code == 0, result.output
    assert "no records problems found" in result.output


def test_a_splice_moved_to_another_closure_names_both_strands(
    database: Database, plant: PlantCli
) -> None:
    """The AC-1 splice of F-1:5/A to D-1:1 re-pointed at AC-2 (tray 1 of AC-2), where
    neither cable is worked."""
    _load(database, _record())
    _break(
        database,
        f"UPDATE splice SET closure_id = {_closure_id('to')},"
        " tray_id = (SELECT t.id FROM tray t WHERE t.number = 1 AND t.closure_id ="
        f" {_closure_id('to')})"
        f" WHERE closure_id = {_CLOSURE} AND slot = 1",
        closure="AC-1",
        to="AC-2",
    )
    assert _problems(_check(database)) == [
        {
            "kind": "splice_outside_station",
            "what": strand,
            "where": "spliced in AC-2, but the fiber end it splices lies at AC-1",
        }
        for strand in ("D-1:1", "F-1:5")
    ]
    result = plant("check")
    assert result.exit_code == 1, result.output
    assert (
        "PROBLEM splice_outside_station: D-1:1 - spliced in AC-2, but the fiber end it splices"
        " lies at AC-1" in result.output
    )


def test_a_connected_end_mid_span_without_a_cut(database: Database, plant: PlantCli) -> None:
    """The cut of F-1:5 at AC-1 deleted while its /A end stays spliced: the strand now runs
    unbroken to the cabinet, where it was never landed, so AG-2 is broken too."""
    _load(database, _record())
    _break(
        database,
        f"DELETE FROM cut WHERE strand_id = {_STRAND}",
        cable="F-1",
        number=5,
    )
    report = _check(database)
    assert report["problems"] == [
        {
            "kind": "circuit_incomplete",
            "what": "AG-2",
            "status": "active",
            "where": "the walk from A stops at dead_end at F-1:5",
        },
        {
            "kind": "uncut_mid_span_end",
            "what": "F-1:5",
            "where": "connected mid-span at AC-1 without a cut",
        },
    ]
    result = plant("check", "--json")
    assert result.exit_code == 1
    assert json.loads(result.stdout)["problems"] == report["problems"]


def test_a_termination_moved_to_a_panel_its_cable_does_not_reach(database: Database) -> None:
    """D-1:1's premises end re-pointed from PR-P1:1 to the cabinet panel's spare CAB-P1:20:
    D-1 runs from AC-1 to the premises and never reaches the cabinet."""
    _load(database, _record())
    _break(
        database,
        "UPDATE fiber_end SET port_id = "
        + _PANEL_PORT.format(panel="to_panel", port="to_port")
        + " WHERE port_id = "
        + _PANEL_PORT.format(panel="from_panel", port="from_port"),
        from_panel="PR-P1",
        from_port="1",
        to_panel="CAB-P1",
        to_port="20",
    )
    report = _check(database)
    assert report["problems"] == [
        {
            "kind": "circuit_incomplete",
            "what": "AG-2",
            "status": "active",
            "where": "the walk from A stops at open_port at CAB-P1:20",
        },
        {
            "kind": "termination_off_panel",
            "what": "D-1:1",
            "where": "terminated on CAB-P1:20, but the fiber end lies at PR-P1, not CAB-P1",
        },
    ]


def test_splitter_legs_spliced_outside_the_splitters_closure(database: Database) -> None:
    """SP-1 re-pointed at AC-2 while its input and leg 1 stay spliced in AC-1."""
    _load(database, _record())
    _break(database, f"UPDATE splitter SET closure_id = {_CLOSURE}", closure="AC-2")
    assert _problems(_check(database)) == [
        {
            "kind": "leg_outside_closure",
            "what": leg,
            "where": "spliced in AC-1, not where the splitter is",
        }
        for leg in ("SP-1:1", "SP-1:in")
    ]


def test_a_splice_joining_no_ends(database: Database) -> None:
    """A splice row written into AC-1 tray 1 slot 7 with no fiber ends pointing at it."""
    _load(database, _record())
    _break(
        database,
        "INSERT INTO splice (closure_id, tray_id, tray_capacity, slot, method)"
        " SELECT t.closure_id, t.id, t.capacity, 7, 'fusion' FROM tray t"
        f" WHERE t.closure_id = {_CLOSURE} AND t.number = 1",
        closure="AC-1",
    )
    with database.engine.connect() as connection:
        splice_id = connection.execute(text("SELECT id FROM splice WHERE slot = 7")).scalar_one()
    report = _check(database)
    assert report["problems"] == [
        {
            "kind": "splice_not_two_ends",
            "what": f"splice #{splice_id}",
            "where": "in AC-1 joins 0 end(s)",
        }
    ]


def test_a_splice_left_with_one_end(database: Database) -> None:
    """D-1:1's end deleted from the AC-1 splice (half of a removal): F-1:5/A is still spliced
    there, to nothing. The check must name the splice, and circuit AG-2 whose walk reaches
    it, rather than fail."""
    _load(database, _record())
    _break(
        database,
        f"DELETE FROM fiber_end WHERE strand_id = {_STRAND} AND splice_id IS NOT NULL",
        cable="D-1",
        number=1,
    )
    with database.engine.connect() as connection:
        splice_id = connection.execute(
            text(f"SELECT id FROM splice WHERE closure_id = {_CLOSURE} AND slot = 1"),
            {"closure": "AC-1"},
        ).scalar_one()
    report = _check(database)
    assert {
        "kind": "splice_not_two_ends",
        "what": f"splice #{splice_id}",
        "where": "in AC-1 joins 1 end(s)",
    } in report["problems"]
    (circuit,) = [p for p in report["problems"] if p["what"] == "AG-2"]
    assert circuit["kind"].startswith("circuit_")
    assert "the splice in AC-1 tray 1 slot 1 joins only one end" in circuit["where"]
    assert report["ok"] is False


def test_a_splice_mixing_single_mode_and_multimode(database: Database, plant: PlantCli) -> None:
    """Drop D-1's fiber type changed to the multimode MM-TEST by hand: the AC-1 splice of
    F-1:5/A to D-1:1 now joins single-mode to multimode (common practice: they cannot be
    usefully spliced)."""
    _load(database, _record())
    _break(
        database,
        "UPDATE cable SET fiber_type_id = (SELECT id FROM fiber_type WHERE name = :name)"
        " WHERE label = :cable",
        name="MM-TEST",
        cable="D-1",
    )
    report = _check(database)
    assert report["problems"] == [
        {
            "kind": "mode_mix",
            "what": "F-1:5 to D-1:1",
            "where": "single-mode spliced to multimode in AC-1",
        }
    ]
    result = plant("check")
    assert result.exit_code == 1
    assert (
        "PROBLEM mode_mix: F-1:5 to D-1:1 - single-mode spliced to multimode in AC-1"
        in result.output
    )


def _with_circuits(bundle: Bundle) -> Bundle:
    """Circuits of every status on CO-P1 -> CAB-P1 strands 2, 3, 4 and 7."""
    bundle.circuit("AG-P", "CO-P1:2", "CAB-P1:2", status="planned")
    bundle.circuit("AG-R", "CO-P1:3", "CAB-P1:3", status="retired")
    bundle.circuit("AG-O", "CO-P1:4", "CAB-P1:4", status="out_of_service")
    bundle.circuit("AG-V", "CO-P1:7", "CAB-P1:7", status="reserved")
    return bundle


def _unland(database: Database, *ports: str) -> None:
    """Remove the terminations of these CAB-P1 ports by hand."""
    for port in ports:
        _break(
            database,
            "DELETE FROM fiber_end WHERE port_id = " + _PANEL_PORT.format(panel="p", port="n"),
            p="CAB-P1",
            n=port,
        )


def test_planned_and_retired_circuits_that_no_longer_reach_z_are_notices(
    database: Database, plant: PlantCli
) -> None:
    """A planned circuit may not be built yet, a retired one may be taken apart: listed, but
    the check passes."""
    _load(database, _with_circuits(_record()))
    _unland(database, "2", "3")
    report = _check(database)
    assert report["ok"] is True and report["problems"] == []
    assert report["notices"] == [
        {
            "kind": "circuit_incomplete",
            "what": label,
            "status": status,
            "where": f"the walk from A stops at dead_end at F-1:{n}",
        }
        for label, status, n in (("AG-P", "planned", 2), ("AG-R", "retired", 3))
    ]
    result = plant("check")
    assert result.exit_code == 0, result.output
    assert "note (planned) AG-P: the walk from A stops at dead_end at F-1:2" in result.output


def test_active_reserved_and_out_of_service_circuits_that_no_longer_reach_z_fail(
    database: Database, plant: PlantCli
) -> None:
    _load(database, _with_circuits(_record()))
    _unland(database, "1", "4", "7")
    report = _check(database)
    assert report["problems"] == [
        {
            "kind": "circuit_incomplete",
            "what": label,
            "status": status,
            "where": f"the walk from A stops at dead_end at F-1:{n}",
        }
        for label, status, n in (
            ("AG-1", "active", 1),
            ("AG-O", "out_of_service", 4),
            ("AG-V", "reserved", 7),
        )
    ]
    assert report["notices"] == []
    result = plant("check")
    assert result.exit_code == 1
    assert (
        "PROBLEM circuit_incomplete: AG-1 - the walk from A stops at dead_end at F-1:1"
        in result.output
    )


def test_an_active_circuit_without_a_z_end_fails(database: Database) -> None:
    bundle = _record()
    bundle.circuit("AG-NZ", "CO-P1:7", None)
    _load(database, bundle)
    assert _check(database)["problems"] == [
        {"kind": "circuit_no_z", "what": "AG-NZ", "status": "active", "where": "no Z end recorded"}
    ]


def _patched_loop() -> Bundle:
    """Stub cable K (no spans) from panel PA to panel PB in one room, strand 1 terminated on
    PA:1 and PB:1, and the two ports patched to each other: the light goes round for ever."""
    b = Bundle().fiber_type(SINGLE_MODE).structure("RM", 0, kind="central_office")
    b.panel("PA", "RM").panel("PB", "RM")
    b.cable("K", [], [("PA", 0.0), ("PB", 4.0)], units=1, kind="central_core")
    b.terminate("K:1", "PA:1").terminate("K:1", "PB:1")
    b.jumper("PA:1", "PB:1")
    b.circuit("LOOP-1", "PA:1", "PB:1")
    return b


def test_a_circuit_whose_record_loops_is_a_records_error(
    database: Database, plant: PlantCli
) -> None:
    _load(database, _patched_loop())
    (problem,) = _check(database)["problems"]
    assert (problem["kind"], problem["what"], problem["status"]) == (
        "circuit_records_error",
        "LOOP-1",
        "active",
    )
    assert problem["where"].startswith("the record loops: the walk comes back to port P")
    assert plant("check").exit_code == 1
