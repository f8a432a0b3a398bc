"""The demo town's dispatcher answers, as README.md and docs/dispatch.md print them.

Counts (cables, strands, circuits) are the record's own and are pinned as the two documents
print them. Where a figure is arithmetic (locate), the test works it again from the demo
bundle's recorded span lengths, sheath marks, slack coils and fiber group index, by the
interface's break-location rule (spans by their lengths, slack coils standing still, the
remainder shared among the spans by length) and the re-scaling of an OTDR distance
d_true = d_reported x n_otdr / n_fiber (it follows from FOA's distance = c*t / (2*n_group),
seen). The demo's single-mode fiber records the group index 1.4677 at 1310 nm, a fiber
datasheet's value (seen). The range is the documented planning figure: OTDR 1 m + 0.01 % of
the distance (memory), fiber up to 0.3 % longer than its sheath (seen), 2 m for reading
marks (trade). Points are worked on the WGS 84 ellipsoid with pyproj, as the rule says
(the fraction reached is applied to the span's drawn line by geodesic length).
"""

from __future__ import annotations

import itertools
from typing import Any

import pytest
from pyproj import Geod

from plantdb.safety import CLOSURE_CAUTION, IMPACT_CAUTION, LOCATE_CAUTION
from seed_data.demo_town import build_demo_bundle
from tests.conftest import PlantCli

_GEOD = Geod(ellps="WGS84")


@pytest.fixture(scope="module")
def bundle() -> dict[str, Any]:
    return build_demo_bundle()


@pytest.fixture
def town(plant: PlantCli) -> PlantCli:
    """`plantdb` bound to a fresh database holding the demo town."""
    result = plant("demo")
    assert result.exit_code == 0, result.output
    return plant


def _text(town: PlantCli, *argv: str) -> str:
    result = town(*argv)
    assert result.exit_code == 0, result.output
    return result.stdout


def _words(text: str) -> str:
    """Text with every run of white space made one space (the text forms wrap and pad)."""
    return " ".join(text.split())


def _ends_with(text: str, caution: str) -> bool:
    return _words(text).endswith(_words(caution))


# -- the bundle's record of a cable, laid out by hand ---------------------------------------


def _by_label(items: list[dict[str, Any]]) -> dict[str, dict[str, Any]]:
    return {item["label"]: item for item in items}


def _structures_along(bundle: dict[str, Any], cable: dict[str, Any]) -> list[str]:
    """The structures the cable passes, from its A end, by chaining its spans."""
    spans = _by_label(bundle["spans"])
    places = {p["label"]: p["at"] for p in bundle["closures"] + bundle["panels"]}
    path = [places[cable["stations"][0]["at"]]]
    for label in cable["spans"]:
        span = spans[label]
        assert path[-1] in (span["from"], span["to"]), f"{label} does not join {path[-1]}"
        path.append(span["to"] if span["from"] == path[-1] else span["from"])
    return path


def _stretches(
    bundle: dict[str, Any], cable_label: str, first_at: str, last_at: str
) -> list[dict[str, Any]]:
    """The piece of a cable between two of its stations (walked toward its B end): each span
    with its street and fiber metres and its drawn line in walking order, each slack coil."""
    cable = _by_label(bundle["cables"])[cable_label]
    spans = _by_label(bundle["spans"])
    places = {p["label"]: p["at"] for p in bundle["closures"] + bundle["panels"]}
    path = _structures_along(bundle, cable)
    marks = {s["at"]: s["mark_m"] for s in cable["stations"]}
    lo, hi = path.index(places[first_at]), path.index(places[last_at])
    coils = {c["at"]: c["length_m"] for c in cable.get("slack", [])}
    # The pieces below have their coils strictly inside them, so each counts in full.
    assert not {path[lo], path[hi]} & set(coils)
    inside = {where: n for where, n in coils.items() if where in path[lo + 1 : hi]}
    street = [spans[label] for label in cable["spans"][lo:hi]]
    span_total = sum(s["length_m"] for s in street)
    remainder = abs(marks[last_at] - marks[first_at]) - span_total - sum(inside.values())
    out: list[dict[str, Any]] = []
    for k, span in enumerate(street):
        line = span["geometry"] if span["from"] == path[lo + k] else span["geometry"][::-1]
        share = remainder * span["length_m"] / span_total
        out.append(
            {
                "kind": "span",
                "label": span["label"],
                "from": path[lo + k],
                "to": path[lo + k + 1],
                "street_m": span["length_m"],
                "fiber_m": span["length_m"] + share,
                "line": line,
            }
        )
        if path[lo + k + 1] in inside:
            where = path[lo + k + 1]
            out.append({"kind": "coil", "at": where, "fiber_m": inside[where]})
    return out


def _reach(stretches: list[dict[str, Any]], fiber_m: float) -> tuple[dict[str, Any], float]:
    """The stretch a fiber distance falls in, and the fiber metres into it."""
    for stretch in stretches:
        if fiber_m <= stretch["fiber_m"]:
            return stretch, fiber_m
        fiber_m -= stretch["fiber_m"]
    raise AssertionError("past the end of the piece")


def _point_along(line: list[list[float]], fraction: float) -> list[float]:
    """The point at `fraction` of a line's geodesic length (WGS 84), leg by leg."""
    legs = [_GEOD.inv(a[0], a[1], b[0], b[1])[2] for a, b in itertools.pairwise(line)]
    metres = fraction * sum(legs)
    for (a, b), leg in zip(itertools.pairwise(line), legs, strict=True):
        if metres <= leg:
            azimuth = _GEOD.inv(a[0], a[1], b[0], b[1])[0]
            lon, lat, _ = _GEOD.fwd(a[0], a[1], azimuth, metres)
            return [lon, lat]
        metres -= leg
    raise AssertionError("past the end of the line")


def _margin(distance: float) -> float:
    return (1.0 + 0.0001 * distance) + (0.003 * distance + 2.0)


# -- cut impact -------------------------------------------------------------------------------


def test_impact_figures_as_printed(town: PlantCli) -> None:
    # README.md and docs/dispatch.md: "cut at span QM-S09: 1 cable(s), 144 strands;
    # 8 circuit(s), 5 active", first row QM-CD-01 for Wickerbell Pottery.
    document = town.json("impact", "--span", "QM-S09")
    assert document["cables"] == ["QM-F144"] and document["strands"] == 144
    assert document["summary"]["circuits"] == 8 and document["summary"]["active"] == 5
    first = document["circuits"][0]
    assert (first["label"], first["status"], first["customer"]) == (
        "QM-CD-01",
        "active",
        "Wickerbell Pottery",
    )
    # docs/dispatch.md: the PON feeder circuit(s), every customer drop behind the cabinet's
    # splitter, and the dark fiber that expresses through the cabinet.
    kinds = sorted(c["kind"] for c in document["circuits"])
    assert kinds == ["customer_drop"] * 5 + ["dark_fiber"] + ["pon_feeder"] * 2
    assert all(c["path_state"] == "complete" for c in document["circuits"])
    assert document["untraced_circuits"] == []
    text = _text(town, "impact", "--span", "QM-S09")
    assert text.splitlines()[:2] == [
        "cut at span QM-S09: 1 cable(s), 144 strands; 8 circuit(s), 5 active",
        "cables: QM-F144",
    ]
    assert _words(
        "QM-CD-01   active          customer_drop  QM-OLT1:1/1    QM-PR01-P:1   Wickerbell Pottery"
    ) in _words(text)
    assert _ends_with(text, IMPACT_CAUTION)
    # docs/dispatch.md: a cut in QM-S14, further out on the distribution cable, takes only the
    # three drops served beyond it.
    further = town.json("impact", "--span", "QM-S14")
    assert further["cables"] == ["QM-D48W"]
    assert [(c["label"], c["kind"]) for c in further["circuits"]] == [
        ("QM-CD-03", "customer_drop"),
        ("QM-CD-05", "customer_drop"),
        ("QM-CD-04", "customer_drop"),
    ]
    assert {c["label"] for c in further["circuits"]} < {c["label"] for c in document["circuits"]}


# -- live through a closure ---------------------------------------------------------------------


def test_live_figures_as_printed(town: PlantCli) -> None:
    # README.md: "closure QM-SC-PL04 at QM-PL04: 52 strands, 2 LIVE", both on QM-CD-03.
    document = town.json("live", "--closure", "QM-SC-PL04")
    assert document["summary"]["strands"] == 52 and document["summary"]["live"] == 2
    live = [
        (s["address"], s["colours"], s["state"], s["circuits"])
        for s in document["strands"]
        if s["live"]
    ]
    on_cd03 = [{"label": "QM-CD-03", "status": "active"}]
    assert live == [
        ("QM-D48W:3", "blue/green", "spliced", on_cd03),
        ("QM-DR03:1", "blue", "spliced", on_cd03),
    ]
    text = _text(town, "live", "--closure", "QM-SC-PL04")
    assert text.splitlines()[0] == (
        "closure QM-SC-PL04 at QM-PL04: 52 strands, 2 LIVE (carrying active circuits)"
    )
    assert _words(
        "***  QM-D48W:3  blue/green  spliced  /A tray 1 slot 1 to QM-DR03:1  QM-CD-03 (active)"
    ) in _words(text)
    assert _ends_with(text, CLOSURE_CAUTION)
    # docs/dispatch.md: QM-SC-MH03 holds 300 strands, 4 live; two of them only pass through.
    mh03 = town.json("live", "--closure", "QM-SC-MH03")
    assert mh03["summary"]["strands"] == 300 and mh03["summary"]["live"] == 4
    states = {s["address"]: s["state"] for s in mh03["strands"] if s["live"]}
    assert states == {
        "QM-F12O:1": "spliced",
        "QM-F288:1": "express",
        "QM-F288:2": "express",
        "QM-F288:73": "spliced",
    }


# -- break location ------------------------------------------------------------------------------


def test_locate_on_the_first_span_and_in_the_coil_worked_from_the_record(
    town: PlantCli, bundle: dict[str, Any]
) -> None:
    # QM-F288:1 is neither cut nor spliced anywhere between its panels: one piece of fiber
    # from QM-CO-ODF1 (mark 1000) to QM-HUTE-ODF1 (mark 2912).
    assert not [c for c in bundle["cuts"] if c["fiber"] == "QM-F288:1"]
    assert not [s for s in bundle["splices"] if "QM-F288:1/" in s["a"] + s["b"]]
    stretches = _stretches(bundle, "QM-F288", "QM-CO-ODF1", "QM-HUTE-ODF1")
    spans = [s for s in stretches if s["kind"] == "span"]
    # docs/dispatch.md: six spans totalling 1839.7 m, coils of 15 m and 20 m, remainder 37.3 m,
    # QM-S01 holding 253.54 m of fiber, the coil at QM-MH01 the next 15 m.
    assert len(spans) == 6
    assert sum(s["street_m"] for s in spans) == pytest.approx(1839.7, abs=0.05)
    assert [(s["at"], s["fiber_m"]) for s in stretches if s["kind"] == "coil"] == [
        ("QM-MH01", 15.0),
        ("QM-MH04", 20.0),
    ]
    first = stretches[0]
    assert first["label"] == "QM-S01" and first["fiber_m"] == pytest.approx(253.54, abs=0.005)

    document = town.json("locate", "--port", "QM-CO-ODF1:1", "--distance-m", "252")
    span, into = _reach(stretches, 252.0)
    assert span is first
    assert document["between"] == ["QM-CO", "QM-MH01"] and document["in_slack_at"] is None
    assert document["from"]["distance_m"] == pytest.approx(
        into / span["fiber_m"] * span["street_m"]
    )
    assert document["from"]["distance_m"] == pytest.approx(247.0, abs=0.05)  # as printed
    assert document["sheath_mark_m"] == pytest.approx(1000.0 + 252.0)
    expected = _point_along(span["line"], into / span["fiber_m"])
    assert [document["lon"], document["lat"]] == pytest.approx(expected, abs=1e-7)
    # docs/dispatch.md prints "position 46.341270, -101.848892" and a range of 3.78 m either
    # side, 248.2-255.8 m.
    assert (document["lat"], document["lon"]) == pytest.approx((46.341270, -101.848892), abs=6e-7)
    assert _margin(252.0) == pytest.approx(3.78, abs=0.005)
    assert document["range_m"] == pytest.approx([252.0 - _margin(252.0), 252.0 + _margin(252.0)])
    text = _text(town, "locate", "--port", "QM-CO-ODF1:1", "--distance-m", "252")
    assert text.splitlines()[:5] == [
        "OTDR at QM-CO-ODF1:1: 252.0 m at 1310 nm",
        "cable QM-F288 strand 1, sheath mark 1,252.0",
        "between QM-CO and QM-MH01, 247.0 m from QM-CO",
        "position 46.341270, -101.848892 (lat, lon)",
        "range 248.2-255.8 m from the port (sheath marks 1,248.2-1,255.8)",
    ]
    assert _ends_with(text, LOCATE_CAUTION) and "utility locates" in _words(text)

    # 260 m lies between 253.54 and 268.54: inside the coil at QM-MH01, which stands still at
    # the manhole. README.md prints its position and a range of 256.2-263.8 m.
    coil, _into = _reach(stretches, 260.0)
    assert coil["kind"] == "coil" and coil["at"] == "QM-MH01"
    document = town.json("locate", "--port", "QM-CO-ODF1:1", "--distance-m", "260")
    manhole = _by_label(bundle["structures"])["QM-MH01"]
    assert document["in_slack_at"] == "QM-MH01"
    assert [document["lon"], document["lat"]] == pytest.approx([manhole["lon"], manhole["lat"]])
    assert (document["lat"], document["lon"]) == pytest.approx((46.341270, -101.848873), abs=6e-7)
    assert document["sheath_mark_m"] == pytest.approx(1260.0)
    assert document["range_m"] == pytest.approx([256.194, 263.806], abs=0.001)
    text = _text(town, "locate", "--port", "QM-CO-ODF1:1", "--distance-m", "260")
    assert "inside the slack coil at QM-MH01" in text.splitlines()
    assert "range 256.2-263.8 m from the port (sheath marks 1,256.2-1,263.8)" in text


def test_locate_with_an_otdr_index_setting_worked_from_the_record(
    town: PlantCli, bundle: dict[str, Any]
) -> None:
    # QM-F288:49 is spliced at QM-SC-VLT1 (mark 1891) as QM-F288:49/A: its piece from the
    # office runs 1000 -> 1891 over QM-S01..QM-S03 with the 15 m coil at QM-MH01 inside.
    assert [s["closure"] for s in bundle["splices"] if "QM-F288:49/" in s["a"] + s["b"]] == [
        "QM-SC-VLT1"
    ]
    stretches = _stretches(bundle, "QM-F288", "QM-CO-ODF1", "QM-SC-VLT1")
    fiber = next(f for f in bundle["fiber_types"] if f["name"] == "SM-G652D")
    n_fiber = fiber["group_index"]["1310"]
    assert n_fiber == 1.4677  # the fiber datasheet's 1310 nm group index (seen)
    # d_true = d_reported x n_otdr / n_fiber: 700 x 1.4700 / 1.4677 = 701.1 m of fiber.
    true_m = 700.0 * 1.4700 / n_fiber
    assert true_m == pytest.approx(701.1, abs=0.05)  # docs/dispatch.md
    document = town.json(
        "locate", "--port", "QM-CO-ODF1:49", "--distance-m", "700", "--otdr-index", "1.4700"
    )
    assert document["fiber_distance_m"] == pytest.approx(true_m)
    assert document["sheath_mark_m"] == pytest.approx(1000.0 + true_m)
    span, into = _reach(stretches, true_m)
    assert (span["label"], span["from"], span["to"]) == ("QM-S03", "QM-MH02", "QM-VLT1")
    assert document["between"] == ["QM-MH02", "QM-VLT1"]
    assert document["from"]["distance_m"] == pytest.approx(
        into / span["fiber_m"] * span["street_m"]
    )
    expected = _point_along(span["line"], into / span["fiber_m"])
    assert [document["lon"], document["lat"]] == pytest.approx(expected, abs=1e-7)
    # The range stays in the OTDR's metres: 694.8-705.2 m (docs/dispatch.md); its marks are
    # re-scaled like the distance.
    low, high = 700.0 - _margin(700.0), 700.0 + _margin(700.0)
    assert document["range_m"] == pytest.approx([low, high])
    assert (round(low, 1), round(high, 1)) == (694.8, 705.2)
    assert document["range_marks_m"] == pytest.approx(
        [1000.0 + low * 1.47 / n_fiber, 1000.0 + high * 1.47 / n_fiber]
    )
    text = _text(
        town, "locate", "--port", "QM-CO-ODF1:49", "--distance-m", "700", "--otdr-index", "1.4700"
    )
    assert "cable QM-F288 strand 49, sheath mark 1,701.1" in text.splitlines()
    assert "range 694.8-705.2 m from the port" in text
