"""The map's data: viewport answers (RFC 7946), search, and the lines of cables and circuits."""

from __future__ import annotations

from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient

from tests.networks import Bundle
from webui.params import bbox

# The whole demo town lies inside this box (it is laid out around -101.852, 46.341).
TOWN = "-101.90,46.30,-101.80,46.40"


def _features(body: dict[str, Any], layer: str) -> dict[str, dict[str, Any]]:
    return {
        f["properties"]["label"]: f for f in body["features"] if f["properties"]["layer"] == layer
    }


def test_map_answers_an_rfc7946_feature_collection(client: FlaskClient, demo_url: str) -> None:
    body = client.get(f"/api/v1/map?bbox={TOWN}").get_json()
    assert body["type"] == "FeatureCollection"
    assert body["requested_bbox"] == [-101.9, 46.3, -101.8, 46.4]
    # RFC 7946 section 5: bbox is the range of the coordinates the collection holds.
    positions = [
        p
        for f in body["features"]
        for p in (
            [f["geometry"]["coordinates"]]
            if f["geometry"]["type"] == "Point"
            else f["geometry"]["coordinates"]
        )
    ]
    assert body["bbox"] == [
        min(p[0] for p in positions),
        min(p[1] for p in positions),
        max(p[0] for p in positions),
        max(p[1] for p in positions),
    ]
    assert body["truncated"] == []
    structures = _features(body, "structure")
    assert len(structures) == 35  # every structure of the demo town
    office = structures["QM-CO"]
    # RFC 7946 section 3.1.1: positions are [longitude, latitude].
    assert office["geometry"] == {"type": "Point", "coordinates": [-101.852, 46.341]}
    assert office["properties"] == {
        "layer": "structure",
        "label": "QM-CO",
        "kind": "central_office",
        "url": "/structures/QM-CO",
    }
    spans = _features(body, "span")
    assert len(spans) == 34
    assert spans["QM-S11"]["geometry"]["type"] == "LineString"
    assert spans["QM-S11"]["properties"]["kind"] == "aerial"
    assert spans["QM-S25"]["properties"]["kind"] == "buried"
    closures = _features(body, "closure")
    assert closures["QM-SC-MH02"]["properties"]["url"] == "/closures/QM-SC-MH02"
    assert closures["QM-SC-MH02"]["properties"]["structure"] == "QM-MH02"
    assert "QM-CO-ODF1" in _features(body, "panel")
    for feature in body["features"]:
        assert feature["type"] == "Feature"
        assert set(feature["properties"]) <= {
            "layer",
            "label",
            "kind",
            "url",
            "structure",
            "length_m",
        }


def test_map_answers_only_what_lies_in_the_box(client: FlaskClient) -> None:
    # A box around the central office only: spans leaving it reach in, far things do not.
    body = client.get("/api/v1/map?bbox=-101.8525,46.3405,-101.8515,46.3415").get_json()
    structures = set(_features(body, "structure"))
    assert structures == {"QM-CO"}
    spans = set(_features(body, "span"))
    assert spans == {"QM-S01", "QM-S07"}
    assert set(_features(body, "closure")) == set()
    assert {"QM-CO-ODF1", "QM-CO-ODF2"} == set(_features(body, "panel"))
    empty = client.get("/api/v1/map?bbox=10,10,11,11").get_json()
    assert empty["features"] == [] and "bbox" not in empty
    assert empty["requested_bbox"] == [10, 10, 11, 11]


def test_map_cuts_a_crowded_viewport_and_says_so(make_app: Any) -> None:
    b = Bundle()
    for n in range(12):
        b.structure(f"P-{n:02}", n * 10.0, kind="pole")
    app: Flask = make_app(b, MAP_FEATURE_LIMIT=5)
    body = app.test_client().get("/api/v1/map?bbox=-1,50,0,52").get_json()
    assert body["truncated"] == ["structure"]
    assert len(_features(body, "structure")) == 5


def test_map_box_may_cross_the_antimeridian(make_app: Any) -> None:
    b = Bundle()
    b.data["structures"] = [
        {"label": "EAST-EDGE", "kind": "pole", "lon": 179.9, "lat": -17.0},
        {"label": "WEST-EDGE", "kind": "pole", "lon": -179.9, "lat": -17.0},
        {"label": "FAR-AWAY", "kind": "pole", "lon": 0.0, "lat": -17.0},
    ]
    app: Flask = make_app(b)
    body = app.test_client().get("/api/v1/map?bbox=179.5,-18,-179.5,-16").get_json()
    assert set(_features(body, "structure")) == {"EAST-EDGE", "WEST-EDGE"}
    # The extent crosses the antimeridian too, written west > east (RFC 7946 section 5.2).
    assert body["bbox"] == [179.9, -17.0, -179.9, -17.0]


def test_bbox_parameter_rules() -> None:
    assert bbox(" -1.5, 2 ,3,4") == (-1.5, 2.0, 3.0, 4.0)
    assert bbox("170,0,-170,1") == (170.0, 0.0, -170.0, 1.0)  # crosses the antimeridian
    for bad in ("", "1,2,3,4,5", "1,2,x,4", "0,-91,1,0", "0,0,181,1", "0,5,1,4"):
        with pytest.raises(Exception, match="bbox"):
            bbox(bad)


def test_search_finds_labels_exact_first(client: FlaskClient) -> None:
    body = client.get("/api/v1/search?q=qm-mh02").get_json()
    results = body["results"]
    assert results[0]["label"] == "QM-MH02"
    assert results[0]["kind"] == "structure"
    assert results[0]["url"] == "/structures/QM-MH02"
    recorded = next(
        s for s in client.get("/api/v1/bundle").get_json()["structures"] if s["label"] == "QM-MH02"
    )
    assert [results[0]["lon"], results[0]["lat"]] == [recorded["lon"], recorded["lat"]]
    kinds = {r["kind"] for r in client.get("/api/v1/search?q=SC-CABN").get_json()["results"]}
    assert kinds == {"closure"}
    customer = client.get("/api/v1/search?q=otterbank").get_json()["results"]
    assert [(r["kind"], r["label"]) for r in customer] == [("circuit", "QM-CD-03")]
    # Wildcards typed by a person are taken literally.
    assert client.get("/api/v1/search?q=%25").get_json()["results"] == []
    assert client.get("/api/v1/search?q=QM_MH").get_json()["results"] == []


def test_geometry_of_a_cable_follows_its_spans(client: FlaskClient) -> None:
    body = client.get("/api/v1/geometry?cable=QM-D48W").get_json()
    spans = [
        f["properties"]["label"] for f in body["features"] if f["properties"]["layer"] == "span"
    ]
    assert spans == ["QM-S11", "QM-S12", "QM-S13", "QM-S14", "QM-S15", "QM-S16"]
    stations = {
        f["properties"]["label"]: f["properties"]["mark_m"]
        for f in body["features"]
        if f["properties"]["layer"] == "station"
    }
    assert set(stations) == {"QM-SC-CABN", "QM-SC-PL02", "QM-SC-PL04", "QM-SC-PL06"}
    west, south, east, north = body["bbox"]
    assert west < east and south < north


def test_geometry_of_a_circuit_is_its_path(client: FlaskClient) -> None:
    body = client.get("/api/v1/geometry?circuit=QM-CD-03").get_json()
    spans = [
        f["properties"]["label"] for f in body["features"] if f["properties"]["layer"] == "span"
    ]
    # OLT at the office, the Heron Lane feeder to the cabinet, the pole line to PL04, the drop.
    assert spans == [
        "QM-S07", "QM-S08", "QM-S09", "QM-S11", "QM-S12", "QM-S13", "QM-S14", "QM-S19"
    ]  # fmt: skip
    stops = {
        f["properties"]["label"] for f in body["features"] if f["properties"]["layer"] == "stop"
    }
    assert stops == {"QM-CO", "QM-CAB-N", "QM-PL04", "QM-PR03"}


def test_search_page_lists_links(client: FlaskClient) -> None:
    page = client.get("/search?q=PL0").get_data(as_text=True)
    assert '<a href="/structures/QM-PL01">QM-PL01</a>' in page
    assert '<a href="/closures/QM-SC-PL02">QM-SC-PL02</a>' in page
    assert "Nothing holds that text" in client.get("/search?q=zzzz").get_data(as_text=True)
