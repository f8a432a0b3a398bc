"""Bad bundles of every kind are refused whole: one clear line, every problem by path, no write.

Each case starts from the Ashgrove network (tests/networks.py), breaks it one way, and loads it
through `plantdb load` into a database that already holds a small record. The command must
exit 1, say `plantdb: bundle not loaded` on its first line, name the offending item by its path
(and label, where it has one) on a detail line, and leave the record exactly as it was.
"""

from __future__ import annotations

import copy
import json
import re
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

from plantdb.db import Database, run_in_transaction
from plantdb.records.bundle import BundleError, dump_bundle, load_bundle
from plantdb.records.summary import record_counts
from tests.conftest import PlantCli
from tests.networks import SINGLE_MODE, Bundle, ashgrove

Edit = Callable[[Bundle], object]
_STEP = re.compile(r"([^.\[\]]+)|\[(\d+)\]")


def _base_record() -> dict[str, Any]:
    """What the database holds before each refused load, so "as it was" is not just empty."""
    b = Bundle().fiber_type({**SINGLE_MODE, "name": "SM-BASE"})
    b.structure("BASE-1", -500, kind="central_office").structure("BASE-2", -800)
    b.span("BASE-S", "BASE-1", "BASE-2", 310.0)
    b.closure("BASE-C", "BASE-2").panel("BASE-P", "BASE-1", ports=4)
    b.equipment("BASE-OLT", "BASE-1", ["1/1", "1/2"])
    b.cable(
        "BASE-CBL",
        ["BASE-S"],
        [("BASE-P", 0.0), ("BASE-C", 312.0)],
        units=1,
        per_unit=4,
        fiber_type="SM-BASE",
    )
    b.terminate("BASE-CBL:1", "BASE-P:1").jumper("BASE-P:1", "BASE-OLT:1/1", 2.0)
    b.circuit("BASE-CKT", "BASE-OLT:1/1", "BASE-P:1", status="reserved")
    return b.data


def _walk(data: Any, path: str) -> tuple[Any, str | int]:
    """The container holding the last step of `path` (`cables[0].stations[1].mark_m`)."""
    steps: list[str | int] = [name if name else int(index) for name, index in _STEP.findall(path)]
    for step in steps[:-1]:
        data = data[step]
    return data, steps[-1]


def put(path: str, value: Any) -> Edit:
    def edit(b: Bundle) -> None:
        holder, last = _walk(b.data, path)
        holder[last] = value

    return edit


def drop(path: str) -> Edit:
    def edit(b: Bundle) -> None:
        holder, last = _walk(b.data, path)
        del holder[last]

    return edit


def append(section: str, item: dict[str, Any]) -> Edit:
    return lambda b: b.data.setdefault(section, []).append(copy.deepcopy(item))


def steps(*edits: Edit) -> Edit:
    def edit(b: Bundle) -> None:
        for one in edits:
            one(b)

    return edit


def rename_key(path: str, new: str) -> Edit:
    def edit(b: Bundle) -> None:
        holder, last = _walk(b.data, path)
        holder[new] = holder.pop(last)

    return edit


def _f1_stations(*places: tuple[str, float | None]) -> Edit:
    return put(
        "cables[0].stations",
        [{"at": at, "mark_m": mark} if mark is not None else {"at": at} for at, mark in places],
    )


_SPLICE = {"closure": "AC-1", "tray": 1, "method": "fusion"}


def _olt(b: Bundle) -> object:
    return b.equipment("AG-OLT", "AG-CO", ["1", "2"])


CASES = [
    # -- the bundle's own shape ------------------------------------------------------
    pytest.param(
        put("format", "plantdb-bundel"), "format", "expected 'plantdb-bundle'", id="format"
    ),
    pytest.param(put("version", 2), "version", "expected 1, got 2", id="version-2"),
    pytest.param(put("version", True), "version", "expected 1, got True", id="version-true"),
    pytest.param(put("cabels", []), "cabels", "unknown key", id="unknown-top-key"),
    pytest.param(
        rename_key("cables[0].construction", "constuction"),
        "cables[0].constuction",
        "unknown key",
        id="unknown-item-key",
    ),
    pytest.param(drop("spans[1].from"), "spans[1].from", "missing", id="missing-key"),
    pytest.param(
        put("closures[0].trays", "2"),
        "closures[0].trays",
        "expected a whole number, got '2'",
        id="wrong-type",
    ),
    pytest.param(put("splices", {}), "splices", "expected a list, got dict", id="not-a-list"),
    pytest.param(
        put("jumpers", ["CO-P1:1"]), "jumpers[0]", "expected an object, got str", id="not-object"
    ),
    pytest.param(
        put("structures[1].label", "AH:1"),
        "structures[1].label",
        "may not contain ':'",
        id="label-with-colon",
    ),
    pytest.param(
        put("structures[0].lon", 200.0), "structures[0].lon", "-180 to 180", id="lon-range"
    ),
    pytest.param(
        put("spans[0].length_m", -5), "spans[0].length_m", "must be > 0", id="negative-length"
    ),
    pytest.param(
        put("panels[0].connector", "X" * 40),
        "panels[0].connector",
        "longer than 16 characters",
        id="text-too-long",
    ),
    pytest.param(
        put("closures[0].trays", 10**9), "closures[0].trays", "at most", id="absurd-tray-count"
    ),
    pytest.param(
        put("splices[0].spliced_on", "2024-02-30"),
        "splices[0].spliced_on",
        "not an ISO date",
        id="bad-date",
    ),
    pytest.param(
        put("circuits[0].status", "live"),
        "circuits[0].status",
        "'live' is not one of planned",
        id="bad-status",
    ),
    # -- references to nothing ---------------------------------------------------------
    pytest.param(
        put("spans[1].to", "AH-9"),
        "spans[1] (S2)",
        "to: no structure is labelled AH-9",
        id="unknown-structure",
    ),
    pytest.param(
        put("cables[0].spans[1]", "S9"),
        "cables[0] (F-1)",
        "spans: no span is labelled S9",
        id="unknown-span",
    ),
    pytest.param(
        put("splices[0].closure", "AC-9"),
        "splices[0]",
        "closure: no closure is labelled AC-9",
        id="unknown-closure",
    ),
    pytest.param(
        put("cables[0].stations[1].at", "AC-9"),
        "cables[0] (F-1)",
        "stations[1].at: no closure or panel is labelled AC-9",
        id="unknown-station",
    ),
    pytest.param(
        put("terminations[0].port", "XX-P1:1"),
        "terminations[0]",
        "XX-P1:1: no panel or equipment is labelled XX-P1",
        id="unknown-panel",
    ),
    pytest.param(
        put("cables[1].fiber_type", "SM-NONE"),
        "cables[1] (D-1)",
        "fiber_type: no fiber type is named SM-NONE",
        id="unknown-fiber-type",
    ),
    pytest.param(
        put("splices[0].b", "D-9:1"),
        "splices[0]",
        "D-9:1: no cable or splitter is labelled D-9",
        id="unknown-cable",
    ),
    pytest.param(
        put("circuits[0].z", "CAB-P1:99"),
        "circuits[0] (AG-1)",
        "CAB-P1:99: panel CAB-P1 has ports 1-24, no port 99",
        id="unknown-port",
    ),
    pytest.param(
        put("splices[0].b", "SPL-9:3"),
        "splices[0]",
        "SPL-9:3: no cable or splitter is labelled SPL-9",
        id="unknown-splitter",
    ),
    pytest.param(
        lambda b: b.splitter("SPL-1", "AC-9", "1x8"),
        "splitters[0] (SPL-1)",
        "at: no closure or panel is labelled AC-9",
        id="splitter-nowhere",
    ),
    pytest.param(
        append("loss_tests", {"circuit": "AG-9", "wavelength_nm": 1310, "measured_db": 1.2}),
        "loss_tests[0]",
        "circuit: no circuit is labelled AG-9",
        id="unknown-circuit",
    ),
    # -- labels -------------------------------------------------------------------------
    pytest.param(
        lambda b: b.structure("AH-1", 450),
        "structures[5]",
        "AH-1 is already used by structures[1]",
        id="duplicate-in-bundle",
    ),
    pytest.param(
        lambda b: b.structure("BASE-1", 450),
        "structures[5]",
        "BASE-1 already exists in the record",
        id="duplicate-in-record",
    ),
    pytest.param(
        lambda b: b.circuit("BASE-CKT", "CO-P1:2", "CAB-P1:2"),
        "circuits[2]",
        "BASE-CKT already exists in the record",
        id="duplicate-circuit-in-record",
    ),
    pytest.param(
        put("cables[1].label", "PR-P1"),
        "cables[1]",
        "PR-P1 is already used by panels[2]",
        id="cable-named-as-panel",
    ),
    pytest.param(
        lambda b: b.cable("BASE-P", ["S4"], [("AC-1", None), ("PR-P1", None)], units=1),
        "cables[2]",
        "BASE-P already exists in the record (a panel)",
        id="cable-named-as-panel-in-record",
    ),
    pytest.param(
        lambda b: b.splitter("AC-1", "AC-1", "1x4"),
        "splitters[0]",
        "AC-1 is already used by closures[0]",
        id="splitter-named-as-closure",
    ),
    # -- strands, ends, ports -----------------------------------------------------------
    pytest.param(
        put("terminations[0].fiber", "F-1:0"),
        "terminations[0]",
        "F-1:0: cable F-1 has strands 1-24, no strand 0",
        id="strand-zero",
    ),
    pytest.param(
        put("splices[0].b", "D-1:13"),
        "splices[0]",
        "D-1:13: cable D-1 has strands 1-12, no strand 13",
        id="strand-past-count",
    ),
    pytest.param(
        put("splices[0].a", "F-1:5/C"),
        "splices[0]",
        "give a strand number, optionally with /A or /B",
        id="unknown-side",
    ),
    pytest.param(
        lambda b: b.splice("AC-1", "F-1:5/A", "D-1:2", slot=2),
        "splices[1]",
        "F-1:5/A at AC-1 is already spliced (tray 1 slot 1)",
        id="end-spliced-twice",
    ),
    pytest.param(
        steps(
            lambda b: b.panel("AH-P1", "AH-1", ports=4),
            lambda b: b.splitter("SPL-1", "AC-1", "1x8"),
            lambda b: b.splice("AC-1", "F-1:6/A", "SPL-1:in", slot=2),
            lambda b: b.terminate("SPL-1:in", "AH-P1:1"),
        ),
        "terminations[16]",
        "SPL-1:in is already spliced",
        id="spliced-and-terminated",
    ),
    pytest.param(
        steps(
            lambda b: b.closure("AC-2", "AH-2"),
            lambda b: b.splice("AC-2", "F-1:7/A", "D-1:2"),
        ),
        "splices[1]",
        "cable F-1 has no station in closure AC-2",
        id="splice-where-a-cable-has-no-station",
    ),
    pytest.param(
        append("routes", {"label": "R-1", "spans": ["S1", "S3"]}),
        "routes[0] (R-1)",
        "its spans do not join end to end",
        id="route-spans-not-joined",
    ),
    pytest.param(
        append("routes", {"label": "R-1", "spans": ["S1", "S9"]}),
        "routes[0] (R-1)",
        "no span is labelled S9",
        id="route-unknown-span",
    ),
    pytest.param(
        lambda b: b.terminate("F-1:9", "CO-P1:1"),
        "terminations[16]",
        "CO-P1:1 is already terminated",
        id="port-back-twice",
    ),
    pytest.param(
        lambda b: b.terminate("F-1:1", "CO-P1:9"),
        "terminations[16]",
        "F-1:1 is already terminated on CO-P1:1",
        id="fiber-end-terminated-twice",
    ),
    pytest.param(
        steps(
            _olt,
            lambda b: b.jumper("CO-P1:1", "AG-OLT:1"),
            lambda b: b.jumper("CO-P1:1", "AG-OLT:2"),
        ),
        "jumpers[1]",
        "CO-P1:1 is already patched to AG-OLT:1",
        id="port-front-twice",
    ),
    pytest.param(
        lambda b: b.jumper("CO-P1:3", "CO-P1:3"),
        "jumpers[0]",
        "CO-P1:3 would be patched to itself",
        id="jumper-to-itself",
    ),
    pytest.param(
        lambda b: b.jumper("CO-P1:3", "BASE-P:1"),
        "jumpers[0]",
        "BASE-P:1 is already patched",
        id="port-front-patched-in-record",
    ),
    # -- trays and slots ----------------------------------------------------------------
    pytest.param(
        lambda b: b.splice("AC-1", "F-1:6/A", "D-1:2", slot=1),
        "splices[1]",
        "tray 1 slot 1 at AC-1 is taken",
        id="slot-taken",
    ),
    pytest.param(
        put("splices[0].slot", 25),
        "splices[0]",
        "tray 1 of AC-1 has 24 slots, no slot 25",
        id="slot-beyond-capacity",
    ),
    pytest.param(
        put("splices[0].tray", 3),
        "splices[0]",
        "closure AC-1 has 2 trays, no tray 3",
        id="no-such-tray",
    ),
    # -- placement along spans ----------------------------------------------------------
    pytest.param(
        put("cables[0].spans", ["S1", "S3"]),
        "cables[0] (F-1)",
        "span S3 (AH-2 - AG-CAB) does not continue from AH-1",
        id="spans-not-joined",
    ),
    pytest.param(
        put("cables[0].spans", ["S2", "S3"]),
        "cables[0] (F-1)",
        "does not continue from AG-CO, where the cable's first station is",
        id="spans-start-elsewhere",
    ),
    pytest.param(
        steps(
            lambda b: b.closure("AC-2", "AH-2"),
            _f1_stations(("CO-P1", 0.0), ("AC-2", None), ("AC-1", None), ("CAB-P1", 1020.0)),
        ),
        "cables[0] (F-1)",
        "station AC-1 at AH-1 is not on the cable's spans after the station before it",
        id="stations-out-of-order",
    ),
    pytest.param(
        steps(
            lambda b: b.closure("PR-C1", "AG-PR"),
            _f1_stations(("CO-P1", 0.0), ("PR-C1", None), ("CAB-P1", 1020.0)),
        ),
        "cables[0] (F-1)",
        "station PR-C1 at AG-PR is not on the cable's spans",
        id="station-off-path",
    ),
    pytest.param(
        _f1_stations(("CO-P1", 0.0), ("AC-1", 305.0), ("PR-P1", 1020.0)),
        "cables[0] (F-1)",
        "the last station, PR-P1 at AG-PR, is not where the cable's last span ends (AG-CAB)",
        id="last-station-elsewhere",
    ),
    pytest.param(
        steps(
            lambda b: b.panel("AH2-P", "AH-2"),
            _f1_stations(("CO-P1", 0.0), ("AC-1", 305.0), ("AH2-P", 710.0), ("CAB-P1", 1020.0)),
        ),
        "cables[0] (F-1)",
        "stations[2]: panel AH2-P can only be one of the cable's ends, not mid-span",
        id="panel-mid-span",
    ),
    pytest.param(
        put("cables[0].stations[1].mark_m", 1100.0),
        "cables[0] (F-1)",
        "sheath marks go both up and down: AC-1 at 1100 m, then CAB-P1 at 1020 m",
        id="marks-both-ways",
    ),
    pytest.param(
        put("cables[0].slack", [{"at": "AG-PR", "length_m": 10.0}]),
        "cables[0] (F-1)",
        "slack coil at AG-PR: the cable does not pass through AG-PR",
        id="slack-off-path",
    ),
    pytest.param(
        lambda b: b.data["spans"][1]["geometry"].reverse(),
        "spans[1] (S2)",
        'geometry\'s first position is 401 m from AH-1, its "from" structure',
        id="geometry-backwards",
    ),
    # -- cuts and the pieces of a cut strand --------------------------------------------
    pytest.param(
        lambda b: b.cut("AC-1", "D-1:2"),
        "cuts[0]",
        "cable D-1 starts at AC-1; strands are cut only at a mid-span access",
        id="cut-at-cable-end",
    ),
    pytest.param(
        lambda b: b.cut("AC-1", "F-1:6/A"),
        "cuts[0]",
        "a cut names the strand (F-1:6), not a piece",
        id="cut-names-piece",
    ),
    pytest.param(
        put("splices[0].a", "F-1:5"),
        "splices[0]",
        "F-1 passes through AC-1 mid-span; say which piece of the cut strand, F-1:5/A",
        id="mid-span-without-side",
    ),
    pytest.param(
        put("splices[0].b", "D-1:1/A"),
        "splices[0]",
        "cable D-1 starts at AC-1, so its strands have only one end there (D-1:1)",
        id="side-at-cable-end",
    ),
    pytest.param(
        lambda b: b.splice("AC-1", "F-1:6/A", "F-1:6/A", slot=2),
        "splices[1]",
        "F-1:6/A would be spliced to itself",
        id="end-spliced-to-itself",
    ),
    pytest.param(
        lambda b: b.splice("AC-1", "F-1:6/A", "F-1:6/B", slot=2),
        "splices[1]",
        "F-1:6/A and F-1:6/B are pieces of one strand; a strand is not spliced to itself",
        id="strand-spliced-to-itself",
    ),
    pytest.param(
        put("splices[0].loss_db", -0.1),
        "splices[0]",
        "loss_db -0.1 dB is not a splice loss (0 to 5)",
        id="loss-negative",
    ),
    pytest.param(
        put("splices[0].loss_db", 7.5),
        "splices[0]",
        "loss_db 7.5 dB is not a splice loss (0 to 5)",
        id="loss-absurd",
    ),
    # -- construction -------------------------------------------------------------------
    pytest.param(
        put("cables[1].construction.units", 2),
        "cables[1] (D-1)",
        "a central_core cable has one unit (no tubes), not 2",
        id="central-core-two-units",
    ),
    pytest.param(
        put("cables[0].construction", {"kind": "ribbon", "units": 3, "fibers_per_unit": 8}),
        "cables[0] (F-1)",
        "a ribbon cable's units are 12-fiber ribbons, not 8-fiber",
        id="ribbon-of-8",
    ),
    # -- splitters ------------------------------------------------------------------------
    pytest.param(
        lambda b: b.splitter("SPL-1", "AC-1", "3x4"),
        "splitters[0] (SPL-1)",
        "ratio '3x4' is not 1xN or 2xN",
        id="ratio-3x4",
    ),
    pytest.param(
        lambda b: b.splitter("SPL-1", "AC-1", "1x100000"),
        "splitters[0] (SPL-1)",
        "ratio '1x100000' is not 1xN or 2xN (N from 2 to 256)",
        id="ratio-1x100000",
    ),
    pytest.param(
        steps(
            lambda b: b.splitter("SPL-1", "AC-1", "1x8"),
            lambda b: b.splice("AC-1", "F-1:6/A", "SPL-1:9", slot=2),
        ),
        "splices[1]",
        "SPL-1:9: splitter SPL-1 (1x8) has legs in and 1-8, no leg 9",
        id="leg-9-of-1x8",
    ),
    pytest.param(
        steps(
            lambda b: b.closure("AC-2", "AH-2"),
            lambda b: b.splitter("SPL-1", "AC-2", "1x8"),
            lambda b: b.splice("AC-1", "F-1:6/A", "SPL-1:1", slot=2),
        ),
        "splices[1]",
        "SPL-1:1: splitter SPL-1 is not in closure AC-1",
        id="leg-in-another-closure",
    ),
    # -- terminations and circuits --------------------------------------------------------
    pytest.param(
        steps(_olt, lambda b: b.terminate("F-1:9", "AG-OLT:1")),
        "terminations[16]",
        "AG-OLT:1: fiber lands on a panel port, not on equipment",
        id="termination-on-equipment",
    ),
    pytest.param(
        lambda b: b.terminate("F-1:9", "PR-P1:2"),
        "terminations[16]",
        "F-1:9: cable F-1 does not end at panel PR-P1",
        id="termination-where-cable-does-not-end",
    ),
    pytest.param(
        put("circuits[0].z", "CO-P1:1"),
        "circuits[0] (AG-1)",
        "a and z are the same port",
        id="circuit-a-is-z",
    ),
]


@pytest.fixture
def attempt(plant: PlantCli, database: Database, tmp_path: Path) -> Callable[[Any], list[str]]:
    """Load content that must be refused; returns every line it printed on standard error."""
    run_in_transaction(database, lambda session: load_bundle(session, _base_record()))
    before = plant("dump").stdout
    assert "BASE-CBL" in before

    def run(content: Any) -> list[str]:
        file = tmp_path / "bundle.json"
        if isinstance(content, bytes):
            file.write_bytes(content)
        else:
            file.write_text(json.dumps(content), encoding="utf-8")
        result = plant("load", str(file))
        assert "Traceback" not in result.output
        assert result.exit_code == 1, result.output
        assert result.stdout == ""
        lines = result.stderr.splitlines()
        assert lines[0].startswith("plantdb: bundle not loaded"), lines[0]
        assert plant("dump").stdout == before
        return lines

    return run


def _line_for(lines: list[str], path: str) -> str:
    """The problem line for `path` among the lines after the first."""
    found = [line.strip() for line in lines[1:] if line.strip().startswith(f"{path}: ")]
    assert found, f"no problem reported for {path}: {lines}"
    return found[0]


def test_the_unbroken_network_loads(plant: PlantCli, tmp_path: Path) -> None:
    """The cases below break a network that is itself good."""
    file = tmp_path / "good.json"
    file.write_text(json.dumps(ashgrove().data), encoding="utf-8")
    result = plant("load", str(file))
    assert result.exit_code == 0, result.output
    assert "splices: 1" in result.stdout


@pytest.mark.parametrize(("edit", "path", "message"), CASES)
def test_a_broken_bundle_is_refused(
    attempt: Callable[[Any], list[str]], edit: Edit, path: str, message: str
) -> None:
    bundle = ashgrove()
    edit(bundle)
    line = _line_for(attempt(bundle.data), path)
    assert message in line


@pytest.mark.parametrize(
    ("content", "message"),
    [
        pytest.param(b'{"format": "plantdb-bundle",', "is not JSON (line 1", id="not-json"),
        pytest.param(b"", "is not JSON (line 1, column 1", id="empty-file"),
        pytest.param(
            '{"format": "plantdb-bundle", "version": 1, "structures": [{"label": "Café"}]}'.encode(
                "latin-1"
            ),
            "is not UTF-8 text",
            id="latin-1",
        ),
        pytest.param(
            '{"format": "plantdb-bundle", "version": 1}'.encode("utf-16"),
            "is not UTF-8 text",
            id="utf-16",
        ),
        pytest.param(b"[" * 100_000 + b"]" * 100_000, "nested too deeply", id="too-deep"),
        pytest.param(b"[]", "the bundle must be a JSON object, not list", id="a-list"),
        pytest.param(b'"plantdb-bundle"', "the bundle must be a JSON object, not str", id="text"),
    ],
)
def test_a_file_that_is_not_a_bundle_is_refused(
    attempt: Callable[[Any], list[str]], content: bytes, message: str
) -> None:
    lines = attempt(content)
    assert any(message in line for line in lines), lines


def test_a_missing_file_is_refused(plant: PlantCli, tmp_path: Path) -> None:
    result = plant("load", str(tmp_path / "missing.json"))
    assert result.exit_code == 1
    assert result.stderr.startswith("plantdb: bundle not loaded: cannot read")
    assert "missing.json" in result.stderr and "Traceback" not in result.output


def test_every_problem_is_reported_not_just_the_first(
    attempt: Callable[[Any], list[str]],
) -> None:
    bundle = ashgrove()
    put("splices[0].slot", 25)(bundle)
    put("terminations[3].fiber", "F-1:0")(bundle)
    put("circuits[1].z", "CO-P1:5")(bundle)
    bundle.jumper("CO-P1:3", "CO-P1:3")
    bundle.cable("F-2", ["S1"], [("CO-P1", 0.0), ("AC-1", 301.0)], kind="ribbon", per_unit=8)
    lines = attempt(bundle.data)
    assert lines[0] == "plantdb: bundle not loaded, nothing was written: 5 problems"
    for path in ("cables[2] (F-2)", "splices[0]", "terminations[3]", "jumpers[0]"):
        _line_for(lines, path)
    _line_for(lines, "circuits[1] (AG-2)")


def test_items_naming_a_refused_item_are_listed_once(
    attempt: Callable[[Any], list[str]],
) -> None:
    """A broken cable is one problem, not one more for every splice and termination on it."""
    bundle = ashgrove()
    put("spans[0].to", "AH-2")(bundle)
    lines = attempt(bundle.data)
    assert [line.strip() for line in lines[1:]] == [
        'spans[0] (S1): geometry\'s last position is 401 m from AH-2, its "to" structure'
        " (allowed 50 m; is the line drawn backwards?)",
        "cables[0] (F-1): name S1, which is refused (spans[0])",
        "splices[0], terminations[0], terminations[1] and 13 more: name F-1, which is refused"
        " (cables[0])",
    ]


def test_every_shape_problem_is_reported_and_counted(
    attempt: Callable[[Any], list[str]],
) -> None:
    bundle = ashgrove()
    rename_key("cables[0].construction", "constuction")(bundle)
    put("closures[0].trays", "two")(bundle)
    drop("spans[2].to")(bundle)
    put("version", 3)(bundle)
    lines = attempt(bundle.data)
    for path in ("cables[0].constuction", "closures[0].trays", "spans[2].to", "version"):
        _line_for(lines, path)
    assert lines[0] == f"plantdb: bundle not loaded, nothing was written: {len(lines) - 1} problems"


def test_hundreds_of_problems_are_capped_with_a_count(
    attempt: Callable[[Any], list[str]],
) -> None:
    bundle = ashgrove()
    for n in range(300):
        bundle.data["terminations"].append({"fiber": f"F-1:{100 + n}", "port": "CO-P1:20"})
    lines = attempt(bundle.data)
    assert lines[-1].strip() == "... and 100 more"
    assert len(lines) == 1 + 200 + 1


def test_a_partly_valid_bundle_writes_nothing(database: Database) -> None:
    """Everything but the last circuit is good; not one row of it may stay."""
    run_in_transaction(database, lambda session: load_bundle(session, _base_record()))
    with database.read() as session:
        before, counts = dump_bundle(session), record_counts(session)
    bundle = ashgrove()
    put("circuits[1].z", "CO-P1:5")(bundle)
    with pytest.raises(BundleError) as refused:
        run_in_transaction(database, lambda session: load_bundle(session, bundle.data))
    assert refused.value.details == ["circuits[1] (AG-2): a and z are the same port"]
    with database.read() as session:
        assert dump_bundle(session) == before
        assert record_counts(session) == counts
    # Nothing stale lingers either: the corrected bundle loads whole.
    put("circuits[1].z", "PR-P1:1")(bundle)
    loaded = run_in_transaction(database, lambda session: load_bundle(session, bundle.data))
    assert loaded["cables"] == 2 and loaded["circuits"] == 2
