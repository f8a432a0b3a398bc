"""Hostile input over HTTP: any JSON body to the splice API, bodies over the size limit, and
labels that are markup. Every answer is a clean one (a result or a refusal with its reason),
never a 500; every label is shown as text, never run as markup."""

from __future__ import annotations

import csv
import io
import json
import re
from typing import Any
from urllib.parse import quote

import pytest
from flask import Flask
from flask.testing import FlaskClient
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from plantdb.records.sheet_files import COLUMNS
from tests.networks import SINGLE_MODE, Bundle
from tests.web.conftest import page_text
from webui.openapi import openapi_document

# Answers the API may give to a body sent from this machine with nobody defined: the
# OpenAPI description's answers for POST /api/v1/splices but 401 and 403 (no one to sign in,
# nothing refused by role) and 413 (these bodies are small). A test below holds them to it.
CLEAN_STATUSES = {200, 201, 400, 404, 409, 422}
FUZZ = settings(
    max_examples=80,
    derandomize=True,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)


def small_yard() -> Bundle:
    """Closure FZ-C (2 trays of 12) where FZ-A (office side) and FZ-B (premises side) end, FZ-T
    passes through mid-span, and splitter FZ-S (1x4) sits."""
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("FZ-CO", 0, kind="central_office").structure("FZ-MH", 200)
    b.structure("FZ-PR", 400, kind="customer_premises")
    b.span("FZ-1", "FZ-CO", "FZ-MH", 200.0).span("FZ-2", "FZ-MH", "FZ-PR", 200.0)
    b.closure("FZ-C", "FZ-MH", trays=2, slots=12)
    b.panel("FZ-P1", "FZ-CO").panel("FZ-P2", "FZ-PR")
    b.splitter("FZ-S", "FZ-C", "1x4")
    b.cable("FZ-A", ["FZ-1"], [("FZ-P1", 0.0), ("FZ-C", 205.0)], units=1)
    b.cable("FZ-B", ["FZ-2"], [("FZ-C", 0.0), ("FZ-P2", 205.0)], units=1)
    b.cable("FZ-T", ["FZ-1", "FZ-2"], [("FZ-P1", 0.0), ("FZ-C", 204.0), ("FZ-P2", 410.0)])
    return b


@pytest.fixture
def api(make_app: Any) -> FlaskClient:
    """A plain client (as a script calling the API sends no CSRF token) on the small yard."""
    app: Flask = make_app(small_yard())
    return FlaskClient(app, app.response_class, use_cookies=True)


def assert_clean(response: Any) -> None:
    event(f"HTTP {response.status_code}")
    assert response.status_code in CLEAN_STATUSES, (response.status_code, response.data[:500])
    body = response.get_json()
    assert isinstance(body, dict), response.data[:500]
    if response.status_code >= 400:
        assert isinstance(body.get("error"), str) and body["error"].strip(), body


def test_the_clean_answers_are_described_ones() -> None:
    described = openapi_document()["paths"]["/splices"]["post"]["responses"]
    assert {int(status) for status in described} - CLEAN_STATUSES == {401, 403, 413}


# -- any JSON to POST /api/v1/splices ------------------------------------------------------------

_SCALARS = (
    st.none()
    | st.booleans()
    | st.integers(min_value=-(2**70), max_value=2**70)
    | st.floats()  # NaN and infinities included: Python's JSON reader accepts them
    | st.text(max_size=30)
)
_JSON = st.recursive(
    _SCALARS,
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=12), inner),
    max_leaves=15,
)
# Cells that often mean something in the yard, so rows reach the splicing rules too.
_LIKELY = st.sampled_from(
    ["FZ-C", "FZ-A", "FZ-B", "FZ-T", "FZ-S", "FZ-X", "1", "2", "12", "13", "0", "-1", "1-4",
     "4-1", "BL/OR", "tube 1", "in", "A", "B", "C", "fusion", "glue", "0.05", "NaN", "1e309",
     "2025-02-30", "2024-05-14", "x" * 1200, "=1+2", "\x00", "é", " "]
)  # fmt: skip
_CELL = _LIKELY | _SCALARS | st.lists(_SCALARS, max_size=2)
_ROW = st.dictionaries(
    st.sampled_from([*COLUMNS, "colour", ""]), _CELL, min_size=0, max_size=len(COLUMNS)
)
# Rows that are often right, so some bodies are recorded (201) and later ones meet them.
_PLAUSIBLE_ROW = st.fixed_dictionaries(
    {
        "closure": st.sampled_from(["FZ-C", "FZ-C", "FZ-X"]),
        "tray": st.sampled_from([1, 2, "1", 3, 0]),
        "slot": st.integers(0, 14),
        "a_cable": st.sampled_from(["FZ-A", "FZ-T", "FZ-S"]),
        "a_strand": st.sampled_from(["1", "2-3", "12", "13", "in", "BL/OR", 5, "tube 1"]),
        "b_cable": st.sampled_from(["FZ-B", "FZ-T", "FZ-S"]),
        "b_strand": st.sampled_from(["1", "2-3", "12", "1-4", "2", 7, "OR"]),
    },
    optional={
        "a_side": st.sampled_from(["", "A", "B", "c"]),
        "b_side": st.sampled_from(["", "A", "B"]),
        "method": st.sampled_from(["fusion", "mass_fusion", "glue", None]),
        "loss_db": st.sampled_from([0.03, "0.1", -1, 99, "1,5", None]),
        "spliced_on": st.sampled_from(["2024-05-14", "14/05/2024", 20240514]),
        "spliced_by": st.sampled_from(["crew 1", "x" * 101, ""]),
    },
)
_BODY = st.one_of(
    _JSON, st.lists(_ROW | _PLAUSIBLE_ROW, max_size=5), _ROW, st.lists(_PLAUSIBLE_ROW, max_size=2)
)


@FUZZ
@given(body=_BODY, dry_run=st.sampled_from(["", "?dry_run=true", "?dry_run=%00"]))
def test_any_json_body_gets_a_clean_answer(api: FlaskClient, body: Any, dry_run: str) -> None:
    response = api.post(
        "/api/v1/splices" + dry_run, data=json.dumps(body), content_type="application/json"
    )
    assert_clean(response)


@FUZZ
@given(data=st.binary(max_size=200), kind=st.sampled_from(["application/json", "text/csv", ""]))
def test_any_bytes_get_a_clean_answer(api: FlaskClient, data: bytes, kind: str) -> None:
    response = api.post("/api/v1/splices", data=data, content_type=kind or None)
    assert_clean(response)
    if kind != "application/json":
        assert response.status_code == 400


# -- size limits ---------------------------------------------------------------------------------


def test_bodies_over_the_limit_are_refused_with_413(make_app: Any) -> None:
    app: Flask = make_app(small_yard(), MAX_CONTENT_LENGTH=4096)
    client = app.test_client()
    rows = [{"closure": "FZ-C", "tray": 1, "slot": 1, "a_cable": "FZ-A", "a_strand": "1",
             "b_cable": "FZ-B", "b_strand": "1", "spliced_by": "x" * 90}] * 60  # fmt: skip
    refused = client.post("/api/v1/splices", json=rows)
    assert refused.status_code == 413
    message = refused.get_json()["error"]
    assert "4 KiB" in message and "split" in message, message
    upload = {"sheet": (io.BytesIO(b"closure,tray\n" + b"x" * 8000), "big.csv")}
    page = client.post("/import/", data=upload, content_type="multipart/form-data")
    assert page.status_code == 413
    assert "4 KiB" in page_text(page) and "plantdb import splices" in page_text(page)
    # Under the limit the same answer is a clean check, not a refusal of size.
    assert client.post("/api/v1/splices?dry_run=true", json=rows[:1]).status_code == 200


# -- labels that are markup ------------------------------------------------------------------------

SCRIPT = "<script>alert(1)</script>"


def hostile(name: str) -> str:
    """A label that is markup, with both quotes and an ampersand: `NAME"'&<script>...`."""
    return f"{name}\"'&{SCRIPT}"


H = {
    name: hostile(name)
    for name in ("CO", "MH", "PR", "S1", "S2", "CL", "P1", "P2", "OLT", "SPL", "CA", "CB", "CT",
                 "CKT", "SM")
}  # fmt: skip


def hostile_plant() -> Bundle:
    """A small plant every label of which is markup: a circuit from OLT over CA, a splice in
    CL, CB to the premises panel P2; CT passes through CL mid-span."""
    b = Bundle().fiber_type({**SINGLE_MODE, "name": H["SM"]})
    b.structure(H["CO"], 0, kind="central_office").structure(H["MH"], 200)
    b.structure(H["PR"], 400, kind="customer_premises")
    b.span(H["S1"], H["CO"], H["MH"], 200.0).span(H["S2"], H["MH"], H["PR"], 200.0)
    b.closure(H["CL"], H["MH"]).panel(H["P1"], H["CO"]).panel(H["P2"], H["PR"])
    b.equipment(H["OLT"], H["CO"], ["1/1"])
    b.splitter(H["SPL"], H["CL"], "1x4")
    b.cable(H["CA"], [H["S1"]], [(H["P1"], 0.0), (H["CL"], 205.0)], units=1, fiber_type=H["SM"])
    b.cable(H["CB"], [H["S2"]], [(H["CL"], 0.0), (H["P2"], 205.0)], units=1, fiber_type=H["SM"])
    b.cable(
        H["CT"], [H["S1"], H["S2"]], [(H["P1"], 0.0), (H["CL"], 204.0), (H["P2"], 410.0)],
        units=1, fiber_type=H["SM"],
    )  # fmt: skip
    b.splice(H["CL"], f"{H['CA']}:1", f"{H['CB']}:1", loss_db=0.05)
    b.splice(H["CL"], f"{H['CT']}:2/A", f"{H['SPL']}:in", slot=2)
    b.terminate(f"{H['CA']}:1", f"{H['P1']}:1").terminate(f"{H['CB']}:1", f"{H['P2']}:1")
    b.jumper(f"{H['P1']}:1", f"{H['OLT']}:1/1", 2.0)
    b.circuit(H["CKT"], f"{H['OLT']}:1/1", f"{H['P2']}:1", customer=hostile("customer"))
    return b


def q(label: str) -> str:
    return quote(label, safe="")


def hostile_pages() -> list[str]:
    """A URL of every kind of page, each about a thing labelled with markup."""
    return [
        "/",
        f"/closures/{q(H['CL'])}",
        f"/closures/{q(H['CL'])}/print",
        f"/cables/{q(H['CA'])}",
        f"/cables/{q(H['CT'])}",
        f"/panels/{q(H['P1'])}",
        "/circuits/",
        "/circuits/?status=active",
        f"/circuits/{q(H['CKT'])}",
        f"/structures/{q(H['MH'])}",
        f"/spans/{q(H['S1'])}",
        f"/dispatch/?span={q(H['S1'])}",
        f"/dispatch/?structure={q(H['MH'])}",
        f"/dispatch/?port={q(H['P1'] + ':1')}&distance_m=150",
        f"/search?q={q(SCRIPT)}",
        "/search?q=CO",
        "/import/",
        f"/sign-in?next={q('/closures/' + H['CL'])}",
    ]


def assert_no_markup_from_labels(page: str, where: str) -> None:
    """Every <script> on the page is the app's own (loaded from a file), and no label's quotes
    or ampersand appear raw (they would end an attribute or start an entity)."""
    assert "<script>alert" not in page and "alert(1)</script>" not in page, where
    tags = re.findall(r"<script\b[^>]*>", page)
    assert all(" src=" in tag for tag in tags), (where, tags)
    assert "\"'&" not in page, where


@pytest.fixture
def hostile_client(make_app: Any) -> FlaskClient:
    app: Flask = make_app(hostile_plant())
    return app.test_client()


def test_every_page_shows_markup_labels_as_text(hostile_client: FlaskClient) -> None:
    for url in hostile_pages():
        response = hostile_client.get(url)
        assert response.status_code == 200, url
        page = page_text(response)
        assert_no_markup_from_labels(page, url)
    closure = page_text(hostile_client.get(f"/closures/{q(H['CL'])}"))
    assert "CL&#34;&#39;&amp;&lt;script&gt;alert(1)&lt;/script&gt;" in closure  # shown, escaped
    # The sheet download holds the labels as they are: it is a CSV file, never a page.
    sheet = hostile_client.get(f"/closures/{q(H['CL'])}/sheet.csv")
    assert sheet.status_code == 200 and sheet.mimetype == "text/csv"
    assert sheet.headers["Content-Disposition"].startswith("attachment")


def test_refusals_and_unknown_labels_show_markup_as_text(hostile_client: FlaskClient) -> None:
    unknown = hostile("nothing")
    for url in (
        f"/closures/{q(unknown)}",
        f"/cables/{q(unknown)}",
        f"/circuits/{q(unknown)}",
        f"/dispatch/?span={q(unknown)}",
        f"/dispatch/?port={q(unknown + ':1')}&distance_m=10",
    ):
        response = hostile_client.get(url)
        assert response.status_code in (404, 422), url
        assert_no_markup_from_labels(page_text(response), url)
    form = {"form": "one", "a_cable": H["CA"], "a_strand": SCRIPT, "b_cable": unknown,
            "b_strand": "1", "tray": "1", "slot": "3"}  # fmt: skip
    refused = hostile_client.post(f"/closures/{q(H['CL'])}/splices", data=form)
    assert refused.status_code == 422
    assert_no_markup_from_labels(page_text(refused), "splice form refusal")


def test_an_imported_sheet_of_markup_is_reported_as_text(hostile_client: FlaskClient) -> None:
    cells = [H["CL"], "1", "5", H["CA"], "2", "", hostile("cable"), SCRIPT, "", "", "", "",
             hostile("crew")]  # fmt: skip
    sheet = io.StringIO()
    csv.writer(sheet).writerows([COLUMNS, cells])
    upload = {"sheet": (io.BytesIO(sheet.getvalue().encode()), f"{SCRIPT}.csv")}
    report = hostile_client.post("/import/", data=upload, content_type="multipart/form-data")
    assert report.status_code in (200, 422)
    page = page_text(report)
    assert "line 2" in page
    assert_no_markup_from_labels(page, "import report")


# -- NUL characters (PostgreSQL cannot even compare text holding one) ---------------------------


@pytest.mark.parametrize(
    "url",
    [
        "/api/v1/live?closure=FZ%00C",
        "/api/v1/trace?circuit=%00",
        "/api/v1/impact?span=FZ-1%00",
        "/api/v1/search?q=%00",
        "/closures/FZ-C%00",
        "/cables/%00/",
        "/dispatch/?span=%00",
    ],
)
def test_a_nul_character_anywhere_is_refused_with_400(api: FlaskClient, url: str) -> None:
    response = api.get(url)
    assert response.status_code == 400, url
    body = response.get_json(silent=True)
    message = body["error"] if body else page_text(response)
    assert "a NUL character is not allowed" in message


def test_a_nul_character_in_splice_rows_is_a_problem(api: FlaskClient) -> None:
    row = {"closure": "FZ-C\u0000", "tray": 1, "slot": 1, "a_cable": "FZ-A", "a_strand": "1",
           "b_cable": "FZ-B", "b_strand": "1"}  # fmt: skip
    response = api.post("/api/v1/splices", json=[row])
    assert response.status_code == 422
    assert response.get_json()["details"] == ["splices[0]: closure holds a NUL character"]
