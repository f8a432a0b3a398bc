"""The JSON API: the same documents as the command line's --json, and clear refusals.

The demo town is read here; its expected answers come from the command line on the same
database, so the API and the CLI are checked against each other, not against numbers kept in
the test.
"""

from __future__ import annotations

from typing import Any

import pytest
from flask.testing import FlaskClient

from tests.conftest import PlantCli


def _json(client: FlaskClient, url: str, status: int = 200) -> Any:
    response = client.get(url)
    assert response.status_code == status, response.get_data(as_text=True)
    assert response.mimetype == "application/json"
    return response.get_json()


@pytest.mark.parametrize(
    ("query", "argv"),
    [
        ("trace?circuit=QM-CD-03", ["trace", "--circuit", "QM-CD-03"]),
        ("trace?port=QM-CO-ODF1:49", ["trace", "--port", "QM-CO-ODF1:49"]),
        ("trace?fiber=QM-F288:13", ["trace", "--fiber", "QM-F288:13"]),
        ("loss?circuit=QM-BB-04", ["loss", "--circuit", "QM-BB-04"]),
        ("loss?port=QM-OLT1:1/1", ["loss", "--port", "QM-OLT1:1/1"]),
        (
            "loss?circuit=QM-DF-01&wavelength=1310&wavelength=1550&margin_db=1.5",
            ["loss", "--circuit", "QM-DF-01", "--wavelength", "1310", "--wavelength", "1550",
             "--margin-db", "1.5"],
        ),
        ("loss?circuit=QM-DF-01&wavelength=1310,1625", ["loss", "--circuit", "QM-DF-01",
                                                       "--wavelength", "1310", "--wavelength",
                                                       "1625"]),
        ("live?closure=QM-SC-PL04", ["live", "--closure", "QM-SC-PL04"]),
        ("impact?span=QM-S12", ["impact", "--span", "QM-S12"]),
        ("impact?structure=QM-MH02", ["impact", "--structure", "QM-MH02"]),
        (
            "locate?port=QM-CO-ODF1:13&distance_m=800",
            ["locate", "--port", "QM-CO-ODF1:13", "--distance-m", "800"],
        ),
        (
            "locate?port=QM-CO-ODF1:13&distance_m=800&wavelength=1550&otdr_index=1.4700",
            ["locate", "--port", "QM-CO-ODF1:13", "--distance-m", "800", "--wavelength", "1550",
             "--otdr-index", "1.4700"],
        ),
    ],
)  # fmt: skip
def test_api_answers_match_the_command_line(
    client: FlaskClient, demo_url: str, query: str, argv: list[str]
) -> None:
    assert _json(client, f"/api/v1/{query}") == PlantCli(demo_url).json(*argv)


def test_bundle_is_the_dump(client: FlaskClient, demo_url: str) -> None:
    bundle = _json(client, "/api/v1/bundle")
    assert bundle == PlantCli(demo_url).json("dump")
    assert bundle["format"] == "plantdb-bundle"
    assert {s["label"] for s in bundle["closures"]} >= {"QM-SC-MH02", "QM-SC-CABN"}


def test_live_and_locate_carry_their_cautions(client: FlaskClient) -> None:
    live = _json(client, "/api/v1/live?closure=QM-SC-CABN")
    assert "Treat every fiber as live" in live["caution"]
    located = _json(client, "/api/v1/locate?port=QM-CO-ODF1:13&distance_m=800")
    assert "before digging" in located["caution"]
    assert located["between"] == ["QM-MH02", "QM-PED1"]
    low, high = located["range_m"]
    assert low < located["fiber_distance_m"] < high


@pytest.mark.parametrize(
    ("url", "words"),
    [
        ("trace?port=NOPE-P1:1", "NOPE-P1"),
        ("trace?circuit=NO-SUCH-CIRCUIT", "NO-SUCH-CIRCUIT"),
        ("trace?fiber=QM-F288:999", "QM-F288"),
        ("loss?circuit=NOPE", "NOPE"),
        ("live?closure=NO-CLOSURE", "NO-CLOSURE"),
        ("impact?span=NO-SPAN", "NO-SPAN"),
        ("impact?structure=NO-STRUCTURE", "NO-STRUCTURE"),
        ("locate?port=QM-CO-ODF1:999&distance_m=10", "999"),
        ("geometry?cable=NO-CABLE", "NO-CABLE"),
    ],
)
def test_unknown_labels_answer_404_naming_them(client: FlaskClient, url: str, words: str) -> None:
    body = _json(client, f"/api/v1/{url}", 404)
    assert words in body["error"]
    assert isinstance(body["details"], list)


@pytest.mark.parametrize(
    ("url", "words"),
    [
        ("trace", "exactly one of the parameters port, fiber or circuit"),
        ("trace?port=QM-CO-ODF1:1&circuit=QM-BB-01", "exactly one"),
        ("loss", "circuit or port"),
        ("loss?circuit=QM-BB-01&wavelength=red", "'red' is not a wavelength"),
        ("loss?circuit=QM-BB-01&margin_db=lots", "margin_db"),
        ("live", "parameter closure is required"),
        ("impact", "span or structure"),
        ("locate?port=QM-CO-ODF1:13", "parameter distance_m is required"),
        ("locate?port=QM-CO-ODF1:13&distance_m=far", "'far' is not a number"),
        ("locate?port=QM-CO-ODF1:13&distance_m=inf", "not a finite number"),
        ("locate?port=QM-CO-ODF1:13&distance_m=10&wavelength=13.1", "whole number"),
        ("map", "parameter bbox is required"),
        ("map?bbox=1,2,3", "four numbers"),
        ("map?bbox=a,b,c,d", "not a number"),
        ("map?bbox=-200,0,0,1", "west -200 is outside"),
        ("map?bbox=0,10,1,5", "south 10 is north of north 5"),
        ("geometry", "cable=LABEL or circuit=LABEL"),
        ("search", "parameter q is required"),
    ],
)
def test_bad_input_answers_400_naming_what(client: FlaskClient, url: str, words: str) -> None:
    body = _json(client, f"/api/v1/{url}", 400)
    assert words in body["error"]


@pytest.mark.parametrize(
    ("url", "words"),
    [
        ("trace?port=QM-CO-ODF1", "LABEL:POINT"),
        ("loss?circuit=QM-BB-01&wavelength=850", "850 nm is not a single-mode test wavelength"),
        ("locate?port=QM-CO-ODF1:13&distance_m=-5", "must be positive"),
        ("locate?port=QM-CO-ODF1:13&distance_m=10&otdr_index=9", "group index"),
        ("locate?port=QM-SW-CO1:8&distance_m=10", "no fiber is terminated"),
    ],
)
def test_refusals_answer_422_naming_what(client: FlaskClient, url: str, words: str) -> None:
    body = _json(client, f"/api/v1/{url}", 422)
    assert words in body["error"]


def test_unknown_api_route_and_wrong_method_answer_json(client: FlaskClient) -> None:
    assert "error" in _json(client, "/api/v1/no-such-thing", 404)
    response = client.post("/api/v1/trace?circuit=QM-BB-01")
    assert response.status_code == 405
    assert response.get_json()["error"]
    response = client.get("/api/v1/splices")
    assert response.status_code == 405
    assert "POST" in response.headers["Allow"]


def test_openapi_describes_every_api_route(client: FlaskClient, demo_app: Any) -> None:
    document = _json(client, "/api/v1/openapi.json")
    assert document["openapi"].startswith("3.1")
    described = {(path, method) for path, item in document["paths"].items() for method in item}
    served = set()
    for rule in demo_app.url_map.iter_rules():
        path = rule.rule
        if not path.startswith("/api/v1/") or path in ("/api/v1/", "/api/v1/openapi.json"):
            continue
        for method in rule.methods - {"HEAD", "OPTIONS"}:
            served.add((path.removeprefix("/api/v1"), method.lower()))
    assert described == served
    # Every $ref points at a schema that exists.
    schemas = document["components"]["schemas"]
    text = str(document)
    for name in {part.split("'")[0] for part in text.split("#/components/schemas/")[1:]}:
        assert name in schemas, name
    trace_parameters = {p["name"] for p in document["paths"]["/trace"]["get"]["parameters"]}
    assert trace_parameters == {"port", "fiber", "circuit"}


def test_openapi_describes_how_to_authenticate_and_each_refusal(client: FlaskClient) -> None:
    document = _json(client, "/api/v1/openapi.json")
    (name, scheme), *others = document["components"]["securitySchemes"].items()
    assert not others
    assert (scheme["type"], scheme["scheme"]) == ("http", "bearer")
    assert "plantdb token add" in scheme["description"]
    assert "session cookie" in scheme["description"]
    # A token, or (with nobody defined, from this machine) nothing at all.
    assert document["security"] == [{name: []}, {}]
    for path, item in document["paths"].items():
        for method, operation in item.items():
            answers = operation["responses"]
            assert {"200", "400", "401", "403", "422"} <= set(answers), (path, method)
            assert "WWW-Authenticate" in answers["401"]["headers"]
            for status, answer in answers.items():
                assert answer["description"], (path, method, status)
    splices = document["paths"]["/splices"]["post"]["responses"]
    assert {"201", "409", "413"} <= set(splices)
    assert "role" in splices["403"]["description"]
    assert "nothing was written" in splices["409"]["description"]
    assert "larger" in splices["413"]["description"]
    # Only the route that reads a body can be refused for its size or lose a race.
    reads = document["paths"]["/trace"]["get"]["responses"]
    assert "409" not in reads and "413" not in reads


def test_api_index_points_at_the_description(client: FlaskClient) -> None:
    assert _json(client, "/api/v1/")["openapi"] == "/api/v1/openapi.json"
