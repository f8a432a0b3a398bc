"""The invented demo town's bundle, checked against the bundle rules without a database.

The helpers below re-walk the rules independently of the loader: span chains, station order and
sheath marks, one connection per fiber end, tray capacity, and light reaching each active
circuit's far end.
"""

from __future__ import annotations

import itertools
import json
from collections import Counter, deque
from collections.abc import Iterator
from typing import Any

import pytest
from pyproj import Geod

from seed_data.demo_town import build_demo_bundle, main

Bundle = dict[str, Any]
Node = tuple[Any, ...]

_GEOD = Geod(ellps="WGS84")


@pytest.fixture(scope="module")
def bundle() -> Bundle:
    return build_demo_bundle()


# --- helpers -------------------------------------------------------------------------------


def _by_label(items: list[Bundle]) -> dict[str, Bundle]:
    return {item["label"]: item for item in items}


def _geodesic_m(geometry: list[list[float]]) -> float:
    lons, lats = zip(*geometry, strict=True)
    return float(_GEOD.line_length(lons, lats))


def _span_length(span: Bundle) -> float:
    """The surveyed length where given, else the geodesic length (the loader's rule)."""
    return float(span.get("length_m") or _geodesic_m(span["geometry"]))


def _walk(span_labels: list[str], spans: dict[str, Bundle]) -> list[str]:
    """Structures met walking the spans in order, or an AssertionError where they do not join."""
    first = spans[span_labels[0]]
    starts = [first["from"], first["to"]]
    for start in starts:
        path = [start]
        for label in span_labels:
            ends = (spans[label]["from"], spans[label]["to"])
            if path[-1] not in ends:
                break
            path.append(ends[1] if ends[0] == path[-1] else ends[0])
        else:
            return path
    raise AssertionError(f"spans {span_labels} do not join end to end")


def _places(bundle: Bundle) -> dict[str, str]:
    """Closure and panel labels -> the structure each stands at."""
    return {item["label"]: item["at"] for item in bundle["closures"] + bundle["panels"]}


def _station_indices(cable: Bundle, spans: dict[str, Bundle], places: dict[str, str]) -> list[int]:
    """Where each station sits on the cable's walked path, checking they come in order."""
    stations = [places[s["at"]] for s in cable["stations"]]
    if not cable["spans"]:
        assert len(set(stations)) == 1, f"{cable['label']}: spanless stations in two places"
        return [0] * len(stations)
    path = _walk(cable["spans"], spans)
    indices = [0]
    assert stations[0] == path[0], f"{cable['label']}: first station not at the A end"
    for structure in stations[1:-1]:
        assert structure in path[indices[-1] + 1 : -1], f"{cable['label']}: {structure} misplaced"
        indices.append(path.index(structure, indices[-1] + 1))
    assert stations[-1] == path[-1], f"{cable['label']}: last station not at the B end"
    return [*indices, len(path) - 1]


def _fiber_count(cable: Bundle) -> int:
    construction = cable["construction"]
    return int(construction["units"] * construction["fibers_per_unit"])


def _fiber_end(bundle: Bundle, place: str, address: str) -> Node:
    """The physical fiber end an address names at a closure or panel: (cable, strand, i, side).

    `side` is "B" for a piece running on toward the cable's B end, "A" for one running back.
    """
    cables = _by_label(bundle["cables"])
    label, _, rest = address.partition(":")
    strand_text, _, side = rest.partition("/")
    cable = cables[label]
    strand = int(strand_text)
    assert 1 <= strand <= _fiber_count(cable), f"{address}: no such strand"
    at = [s["at"] for s in cable["stations"]]
    assert place in at, f"{address}: cable has no station at {place}"
    i = at.index(place)
    if 0 < i < len(at) - 1:
        assert side in ("A", "B"), f"{address}: mid-span end at {place} needs /A or /B"
        return (label, strand, i, side)
    assert side == "", f"{address}: a cable end at {place} takes the bare address"
    return (label, strand, i, "B" if i == 0 else "A")


def _splice_end(bundle: Bundle, closure: str, address: str) -> Node:
    """A splice end: a splitter leg in the same closure, or a fiber end."""
    splitters = _by_label(bundle["splitters"])
    label, _, leg = address.partition(":")
    if label in splitters:
        assert splitters[label]["at"] == closure, f"{address}: splitter not in {closure}"
        legs = int(splitters[label]["ratio"].split("x")[1])
        assert leg == "in" or 1 <= int(leg) <= legs, f"{address}: no such splitter leg"
        return ("leg", label, leg)
    return _fiber_end(bundle, closure, address)


def _port_node(bundle: Bundle, address: str, face: str) -> Node:
    """A panel port's front or back face, or an equipment port; checks the port exists."""
    label, _, port = address.rpartition(":")
    panels, equipment = _by_label(bundle["panels"]), _by_label(bundle["equipment"])
    if label in equipment:
        assert port in equipment[label]["ports"], f"{address}: no such equipment port"
        return ("equipment", address)
    assert label in panels, f"{address}: no such panel or equipment"
    assert 1 <= int(port) <= panels[label]["ports"], f"{address}: no such panel port"
    return (face, address)


def _cut_points(bundle: Bundle) -> dict[tuple[str, int], set[int]]:
    """Station indices where each strand is cut, from splices on /A or /B ends and cuts."""
    cut: dict[tuple[str, int], set[int]] = {}
    for splice in bundle["splices"]:
        for address in (splice["a"], splice["b"]):
            end = _splice_end(bundle, splice["closure"], address)
            if end[0] != "leg" and "/" in address:
                cut.setdefault((end[0], end[1]), set()).add(end[2])
    for entry in bundle["cuts"]:
        end = _fiber_end(bundle, entry["closure"], entry["fiber"] + "/A")
        cut.setdefault((end[0], end[1]), set()).add(end[2])
    return cut


def _connections(bundle: Bundle) -> Iterator[tuple[Node, Node]]:
    """Every splice, termination and jumper as a pair of nodes."""
    for splice in bundle["splices"]:
        closure = splice["closure"]
        yield _splice_end(bundle, closure, splice["a"]), _splice_end(bundle, closure, splice["b"])
    for term in bundle["terminations"]:
        panel = term["port"].rpartition(":")[0]
        yield _port_node(bundle, term["port"], "back"), _fiber_end(bundle, panel, term["fiber"])
    for jumper in bundle["jumpers"]:
        yield _port_node(bundle, jumper["a"], "front"), _port_node(bundle, jumper["b"], "front")


def _through_edges(bundle: Bundle) -> dict[Node, list[Node]]:
    """Glass along each strand between its ends, port faces, and splitter input <-> legs."""
    edges: dict[Node, list[Node]] = {}

    def join(a: Node, b: Node) -> None:
        edges.setdefault(a, []).append(b)
        edges.setdefault(b, []).append(a)

    cut = _cut_points(bundle)
    for cable in bundle["cables"]:
        last = len(cable["stations"]) - 1
        for strand in range(1, _fiber_count(cable) + 1):
            points = [0, *sorted(cut.get((cable["label"], strand), ())), last]
            for here, there in itertools.pairwise(points):
                join((cable["label"], strand, here, "B"), (cable["label"], strand, there, "A"))
    for panel in bundle["panels"]:
        for port in range(1, panel["ports"] + 1):
            join(("front", f"{panel['label']}:{port}"), ("back", f"{panel['label']}:{port}"))
    for splitter in bundle["splitters"]:
        for leg in range(1, int(splitter["ratio"].split("x")[1]) + 1):
            join(("leg", splitter["label"], "in"), ("leg", splitter["label"], str(leg)))
    return edges


def _reaches(bundle: Bundle, a: str, z: str) -> bool:
    """Whether light from port `a` reaches port `z`, alternating connections and glass."""
    linked: dict[Node, list[Node]] = {}
    for one, other in _connections(bundle):
        linked.setdefault(one, []).append(other)
        linked.setdefault(other, []).append(one)
    through = _through_edges(bundle)
    targets = {_port_node(bundle, z, "front"), _port_node(bundle, z, "back")}
    # A state is (node, whether we arrived over glass/through the port); the next step must be
    # the other kind, so a splitter never passes light from one leg to another.
    queue = deque([(_port_node(bundle, a, face), True) for face in ("front", "back")])
    seen = set(queue)
    while queue:
        node, arrived_through = queue.popleft()
        if node in targets:
            return True
        for nxt in (linked if arrived_through else through).get(node, []):
            state = (nxt, not arrived_through)
            if state not in seen:
                seen.add(state)
                queue.append(state)
    return False


def _mode_of_cable(bundle: Bundle) -> dict[str, str]:
    modes = {t["name"]: t["mode"] for t in bundle["fiber_types"]}
    return {c["label"]: modes[c["fiber_type"]] for c in bundle["cables"]}


# --- the scale the demo promises -----------------------------------------------------------


def test_the_town_has_the_promised_scale(bundle: Bundle) -> None:
    assert bundle["format"] == "plantdb-bundle" and bundle["version"] == 1
    assert len(bundle["structures"]) >= 30
    assert len({s["kind"] for s in bundle["structures"]}) >= 8
    assert len(bundle["spans"]) >= 30
    assert {"underground", "aerial", "buried"} <= {s["kind"] for s in bundle["spans"]}
    assert len(bundle["routes"]) >= 3
    assert len(bundle["cables"]) >= 8
    assert len(bundle["closures"]) >= 6
    assert len(bundle["panels"]) >= 3
    assert len(bundle["splices"]) >= 100
    assert len(bundle["circuits"]) >= 15
    assert len({c["status"] for c in bundle["circuits"]}) >= 3
    assert {"backbone", "dark_fiber", "pon_feeder", "customer_drop"} <= {
        c["kind"] for c in bundle["circuits"]
    }
    assert sum(len(c.get("slack", [])) for c in bundle["cables"]) >= 2
    assert bundle["jumpers"] and bundle["terminations"] and bundle["cuts"]


def test_cables_cover_the_promised_constructions(bundle: Bundle) -> None:
    constructions = [c["construction"] for c in bundle["cables"]]
    counts = {_fiber_count(c) for c in bundle["cables"]}
    assert {288, 144, 48, 12} <= counts
    assert {"kind": "loose_tube", "units": 24, "fibers_per_unit": 12} in constructions
    assert {"kind": "loose_tube", "units": 12, "fibers_per_unit": 12} in constructions
    assert any(c["kind"] == "ribbon" and c["fibers_per_unit"] == 12 for c in constructions)
    assert any(
        (c["kind"] == "central_core" and c["units"] == 1) or c["kind"] == "tight_buffered"
        for c in constructions
    )


def test_fiber_types_carry_the_published_values(bundle: Bundle) -> None:
    types = {t["standard"]: t for t in bundle["fiber_types"]}
    for standard in ("ITU-T G.652.D", "ITU-T G.657.A2"):
        single = types[standard]
        # ANSI/TIA-568.3-D outside-plant maximum 0.5 dB/km (seen); typical 0.35/0.22 (trade);
        # group index 1.4677/1.4682 from a fiber datasheet (seen).
        assert single["attenuation_db_per_km"]["1310"] == {"max": 0.5, "typical": 0.35}
        assert single["attenuation_db_per_km"]["1550"] == {"max": 0.5, "typical": 0.22}
        assert single["group_index"] == {"1310": 1.4677, "1550": 1.4682}
    multi = next(t for t in bundle["fiber_types"] if "OM4" in t["standard"])
    # ANSI/TIA-568.3-D multimode 3.5/1.5 dB/km (memory); 50/125 group index (seen).
    assert multi["mode"] == "multimode"
    assert multi["attenuation_db_per_km"]["850"]["max"] == 3.5
    assert multi["attenuation_db_per_km"]["1300"]["max"] == 1.5
    assert multi["group_index"] == {"850": 1.481, "1300": 1.476}
    riser_types = {c["fiber_type"] for c in bundle["cables"] if c["label"] == "QM-M12R"}
    assert riser_types == {multi["name"]}


def test_a_pon_splitter_serves_premises(bundle: Bundle) -> None:
    ratios = {s["ratio"] for s in bundle["splitters"]}
    assert ratios & {"1x8", "1x32"}
    premises = {s["label"] for s in bundle["structures"] if s["kind"] == "customer_premises"}
    panels = _by_label(bundle["panels"])
    drops = [c for c in bundle["circuits"] if c["kind"] == "customer_drop" and "OLT" in c["a"]]
    assert len(drops) >= 3
    for circuit in drops:
        assert panels[circuit["z"].rpartition(":")[0]]["at"] in premises


# --- determinism and serialisation ---------------------------------------------------------


def test_every_call_builds_the_same_bundle() -> None:
    assert build_demo_bundle() == build_demo_bundle()


def test_the_bundle_survives_json_unchanged(bundle: Bundle) -> None:
    assert json.loads(json.dumps(bundle)) == bundle


def test_main_prints_the_bundle_as_json(capsys: pytest.CaptureFixture[str]) -> None:
    main()
    assert json.loads(capsys.readouterr().out) == build_demo_bundle()


# --- geography -----------------------------------------------------------------------------


def test_span_geometry_runs_from_structure_to_structure(bundle: Bundle) -> None:
    structures = {s["label"]: [s["lon"], s["lat"]] for s in bundle["structures"]}
    for span in bundle["spans"]:
        geometry = span["geometry"]
        assert len(geometry) >= 2, span["label"]
        assert geometry[0] == structures[span["from"]], span["label"]
        assert geometry[-1] == structures[span["to"]], span["label"]
    curving = [s for s in bundle["spans"] if len(s["geometry"]) >= 3]
    assert len(curving) >= len(bundle["spans"]) // 2


def test_surveyed_lengths_are_close_to_the_geodesic_length(bundle: Bundle) -> None:
    surveyed = [s for s in bundle["spans"] if "length_m" in s]
    assert len(bundle["spans"]) > len(surveyed) > len(bundle["spans"]) // 2
    for span in surveyed:
        geodesic = _geodesic_m(span["geometry"])
        # A tape or wheel survey agrees with a well-drawn line to a few percent (trade).
        assert abs(span["length_m"] - geodesic) <= 0.05 * geodesic, span["label"]


def test_routes_join_end_to_end(bundle: Bundle) -> None:
    spans = _by_label(bundle["spans"])
    for route in bundle["routes"]:
        assert len(_walk(route["spans"], spans)) == len(route["spans"]) + 1
        assert route["name"]


# --- labels --------------------------------------------------------------------------------


def test_labels_are_unique_within_and_across_kinds(bundle: Bundle) -> None:
    sections = ("structures", "spans", "routes", "closures", "panels", "equipment")
    for section in (*sections, "splitters", "cables", "circuits"):
        labels = [item["label"] for item in bundle[section]]
        assert len(labels) == len(set(labels)), section
    addressable = [
        item["label"]
        for section in ("cables", "panels", "equipment", "splitters")
        for item in bundle[section]
    ]
    assert len(addressable) == len(set(addressable))
    closures = {c["label"] for c in bundle["closures"]}
    assert not closures & {p["label"] for p in bundle["panels"]}
    assert len({t["name"] for t in bundle["fiber_types"]}) == len(bundle["fiber_types"])


def test_everything_stands_at_a_known_place(bundle: Bundle) -> None:
    structures = {s["label"] for s in bundle["structures"]}
    closures = {c["label"] for c in bundle["closures"]}
    for section in ("closures", "panels", "equipment"):
        for item in bundle[section]:
            assert item["at"] in structures, item["label"]
    for splitter in bundle["splitters"]:
        assert splitter["at"] in closures, splitter["label"]
    types = {t["name"] for t in bundle["fiber_types"]}
    for cable in bundle["cables"]:
        assert cable["fiber_type"] in types, cable["label"]


# --- cable placement -----------------------------------------------------------------------


def test_cables_follow_joined_spans_with_stations_in_order(bundle: Bundle) -> None:
    spans, places = _by_label(bundle["spans"]), _places(bundle)
    panels = {p["label"] for p in bundle["panels"]}
    for cable in bundle["cables"]:
        indices = _station_indices(cable, spans, places)
        assert indices == sorted(indices), cable["label"]
        for station in cable["stations"][1:-1]:
            assert station["at"] not in panels, f"{cable['label']}: panel mid-span"
        path = _walk(cable["spans"], spans) if cable["spans"] else []
        for coil in cable.get("slack", []):
            assert coil["at"] in path, f"{cable['label']}: slack off the path"


def test_sheath_marks_are_monotonic_and_cover_the_spans(bundle: Bundle) -> None:
    spans, places = _by_label(bundle["spans"]), _places(bundle)
    directions = set()
    for cable in bundle["cables"]:
        marks = [s["mark_m"] for s in cable["stations"]]
        steps = [b - a for a, b in itertools.pairwise(marks)]
        assert all(step > 0 for step in steps) or all(step < 0 for step in steps), cable["label"]
        directions.add(steps[0] > 0)
        indices = _station_indices(cable, spans, places)
        path = _walk(cable["spans"], spans) if cable["spans"] else []
        slack = {coil["at"]: coil["length_m"] for coil in cable.get("slack", [])}
        for (here, there), step in zip(itertools.pairwise(indices), steps, strict=True):
            run = sum(_span_length(spans[s]) for s in cable["spans"][here:there])
            run += sum(slack.get(s, 0.0) for s in path[here + 1 : there])
            # Sheath never runs shorter than the street; a little longer is normal (trade).
            assert run <= abs(step) <= run * 1.05 + 10, f"{cable['label']} {here}->{there}"
    assert directions == {True, False}  # marks counting up and counting down both appear


def test_mid_span_accesses_cut_some_strands_and_express_the_rest(bundle: Bundle) -> None:
    cut = _cut_points(bundle)
    accessed = 0
    for cable in bundle["cables"]:
        for i in range(1, len(cable["stations"]) - 1):
            count = sum(
                1 for (label, _), points in cut.items() if label == cable["label"] and i in points
            )
            assert 0 < count < _fiber_count(cable), f"{cable['label']} station {i}"
            accessed += 1
    assert accessed >= 5


# --- connections ---------------------------------------------------------------------------


def test_each_fiber_end_leg_and_port_face_is_connected_once(bundle: Bundle) -> None:
    uses = Counter(node for pair in _connections(bundle) for node in pair)
    assert [node for node, n in uses.items() if n > 1] == []


def test_terminations_land_on_a_cable_end_at_that_panel(bundle: Bundle) -> None:
    for term in bundle["terminations"]:
        assert "/" not in term["fiber"], term
        panel = term["port"].rpartition(":")[0]
        end = _fiber_end(bundle, panel, term["fiber"])
        cable = _by_label(bundle["cables"])[end[0]]
        assert end[2] in (0, len(cable["stations"]) - 1), term
        assert term.get("method", "pigtail_splice") in ("pigtail_splice", "field_connector")


def test_splice_slots_are_unique_and_within_the_trays(bundle: Bundle) -> None:
    closures = _by_label(bundle["closures"])
    slots = Counter((s["closure"], s["tray"], s["slot"]) for s in bundle["splices"])
    assert max(slots.values()) == 1
    for closure, tray, slot in slots:
        assert 1 <= tray <= closures[closure]["trays"], (closure, tray)
        assert 1 <= slot <= closures[closure]["slots_per_tray"], (closure, slot)
    methods = Counter(s["method"] for s in bundle["splices"])
    assert set(methods) <= {"fusion", "mechanical", "mass_fusion"}
    # A 12-fiber ribbon joined at once fills 12 consecutive slots, one splice row per fiber.
    assert methods["mass_fusion"] % 12 == 0 and methods["mass_fusion"] > 0
    measured = [s for s in bundle["splices"] if "loss_db" in s]
    assert 0 < len(measured) < len(bundle["splices"])


def test_single_mode_glass_never_meets_multimode(bundle: Bundle) -> None:
    mode = _mode_of_cable(bundle)
    for splice in bundle["splices"]:
        ends = [_splice_end(bundle, splice["closure"], x) for x in (splice["a"], splice["b"])]
        assert len({mode[end[0]] for end in ends if end[0] != "leg"}) == 1, splice
    back = {t["port"]: mode[t["fiber"].partition(":")[0]] for t in bundle["terminations"]}
    for jumper in bundle["jumpers"]:
        modes = {back[p] for p in (jumper["a"], jumper["b"]) if p in back}
        assert len(modes) <= 1, jumper


# --- circuits ------------------------------------------------------------------------------


def test_circuit_ends_are_real_ports(bundle: Bundle) -> None:
    for circuit in bundle["circuits"]:
        for end in (circuit["a"], circuit["z"]):
            _port_node(bundle, end, "front")
        assert circuit["status"] in {"planned", "reserved", "active", "out_of_service", "retired"}


def test_every_active_circuit_has_light_from_a_to_z(bundle: Bundle) -> None:
    active = [c for c in bundle["circuits"] if c["status"] == "active"]
    assert len(active) >= 10
    for circuit in active:
        assert _reaches(bundle, circuit["a"], circuit["z"]), circuit["label"]


def test_the_walk_does_not_cross_between_splitter_legs(bundle: Bundle) -> None:
    # Two drops on the same splitter share no light path from one premises to the other.
    assert not _reaches(bundle, "QM-PR01-P:1", "QM-PR02-P:1")
    assert _reaches(bundle, "QM-PR01-P:1", "QM-OLT1:1/1")
    # A strand left uncut at a mid-span closure does not reach the drop spliced there.
    assert not _reaches(bundle, "QM-CO-ODF1:1", "QM-PR06-P:1")
