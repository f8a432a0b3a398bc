"""Access control route by route: every route that can change something names the roles that
may use it, each role is allowed or refused as the interface says, and no GET changes the
record. A new route fails these tests until it is added to the tables below."""

from __future__ import annotations

import io
import logging
from collections.abc import Callable
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import select

from plantdb.db import Database
from plantdb.model import Base
from seed_data.demo_town import build_demo_bundle
from tests.web.conftest import add_person_to, sign_in, token_for
from tests.web.test_forms import ROWS, splice_yard
from webui.access import OWN_SESSION, ROLES, SAFE_METHODS, roles_of

SHEET = (
    b"closure,tray,slot,a_cable,a_strand,a_side,b_cable,b_strand,b_side,method,loss_db\n"
    b"WC-1,1,5,W-A,5,,W-B,5,,fusion,\n"
)


def _sheet() -> dict[str, Any]:
    return {"action": "check", "sheet": (io.BytesIO(SHEET), "yard.csv")}


def _unseen() -> dict[str, str]:
    return {"tray": "1", "slot": "20", "splice": "999999", "version": "1"}


# Each write route: who may use it (admin always may, by the interface), and a request to it.
WRITE_ROUTES: dict[str, tuple[set[str], Callable[[FlaskClient, dict[str, str]], Any]]] = {
    "api.splices": (
        {"clerk", "admin"},
        lambda c, h: c.post("/api/v1/splices?dry_run=true", json=ROWS, headers=h),
    ),
    "closures.add_splices": (
        {"clerk", "admin"},
        lambda c, h: c.post(
            "/closures/WC-1/splices",
            data={
                "form": "one",
                "a_cable": "W-A",
                "a_strand": "9",
                "b_cable": "W-B",
                "b_strand": "9",
                "tray": "2",
                "slot": "1",
            },
            headers=h,
        ),
    ),
    "circuits.change_status": (
        {"dispatcher", "engineer", "admin"},
        lambda c, h: c.post("/circuits/W-CKT/status", data={"status": "active"}, headers=h),
    ),
    "imports.check_or_commit": (
        {"clerk", "admin"},
        lambda c, h: c.post("/import/", data=_sheet(), headers=h),
    ),
    # A splice the page never showed: allowed roles get past the gate to a refusal of it.
    "splice_edits.remove": (
        {"clerk", "admin"},
        lambda c, h: c.post("/closures/WC-1/splices/remove", data=_unseen(), headers=h),
    ),
    "splice_edits.move": (
        {"clerk", "admin"},
        lambda c, h: c.post(
            "/closures/WC-1/splices/move",
            data={**_unseen(), "to_tray": "2", "to_slot": "9"},
            headers=h,
        ),
    ),
}
# Routes that change only the visitor's own session, open to anyone.
OWN_SESSION_ROUTES = {"auth.sign_in_post", "auth.sign_out"}


def _write_rules(app: Flask) -> dict[str, frozenset[str] | None]:
    found = {}
    for rule in app.url_map.iter_rules():
        if rule.methods and rule.methods - SAFE_METHODS:
            found[rule.endpoint] = roles_of(app.view_functions[rule.endpoint])
    return found


def test_every_route_that_writes_names_its_roles(client: FlaskClient) -> None:
    rules = _write_rules(client.application)
    unmarked = sorted(endpoint for endpoint, roles in rules.items() if roles is None)
    assert not unmarked, f"write routes without a role check (@writes(...)): {unmarked}"
    untested = set(rules) - set(WRITE_ROUTES) - OWN_SESSION_ROUTES
    assert not untested, f"add these write routes to WRITE_ROUTES: {sorted(untested)}"
    for endpoint, (allowed, _request) in WRITE_ROUTES.items():
        assert rules[endpoint] == allowed, endpoint
    for endpoint in OWN_SESSION_ROUTES:
        assert rules[endpoint] == OWN_SESSION


@pytest.fixture
def staffed(make_app: Callable[..., Flask], db_url: str) -> tuple[Flask, dict[str, str]]:
    """The splice yard with one person of each role, and an API token for each."""
    app = make_app(splice_yard())
    tokens = {}
    for role in ROLES:
        add_person_to(db_url, f"{role}-1", role)
        tokens[role] = token_for(db_url, f"{role}-1")
    return app, tokens


@pytest.mark.parametrize("how", ["session", "token"])
def test_each_write_route_with_each_role(
    staffed: tuple[Flask, dict[str, str]], how: str, caplog: pytest.LogCaptureFixture
) -> None:
    app, tokens = staffed
    for role in ROLES:
        client = app.test_client()
        headers = {}
        if how == "session":
            assert sign_in(client, f"{role}-1").status_code == 303
        else:
            headers = {"Authorization": f"Bearer {tokens[role]}"}
        for endpoint, (allowed, send) in WRITE_ROUTES.items():
            with caplog.at_level(logging.WARNING, logger="plantdb.security"):
                caplog.clear()
                answer = send(client, headers)
            if role in allowed:
                # Past the gate: done, or refused by the record's own rules, never by role.
                assert answer.status_code not in (401, 403), (role, endpoint)
                assert answer.status_code < 500, (role, endpoint, answer.status_code)
                assert not caplog.records
            else:
                assert answer.status_code == 403, (role, endpoint, answer.status_code)
                (record,) = caplog.records
                assert f'who="{role}-1"' in record.getMessage()
                assert "needs" in record.getMessage()


def test_a_refusal_names_who_and_what_is_needed(staffed: tuple[Flask, dict[str, str]]) -> None:
    app, tokens = staffed
    bearer = {"Authorization": f"Bearer {tokens['viewer']}"}
    refused = app.test_client().post("/api/v1/splices", json=ROWS, headers=bearer)
    assert refused.status_code == 403
    assert (
        refused.get_json()["error"] == "viewer-1 (viewer) may not do this: it needs admin or clerk"
    )
    client = app.test_client()
    sign_in(client, "clerk-1")
    page = client.post("/circuits/W-CKT/status", data={"status": "retired"})
    assert page.status_code == 403 and "<h1>Not allowed</h1>" in page.get_data(as_text=True)


# A request for each GET route taking a label or a query, on the demo town.
GET_SAMPLES = {
    "cables.cable": ["/cables/QM-D48W"],
    "circuits.circuit": ["/circuits/QM-CD-03"],
    "closures.closure": ["/closures/QM-SC-CABN"],
    "closures.print_sheet": ["/closures/QM-SC-CABN/print"],
    "closures.download_sheet": [
        "/closures/QM-SC-CABN/sheet.csv",
        "/closures/QM-SC-HH01/sheet.xlsx",
    ],
    "panels.panel": ["/panels/QM-CO-ODF2"],
    "places.span": ["/spans/QM-S12"],
    "places.structure": ["/structures/QM-MH02"],
    "static": ["/static/css/plantdb.css"],
    "assets.leaflet": ["/static/leaflet/leaflet.js"],
    "api.trace": ["/api/v1/trace?circuit=QM-CD-03", "/api/v1/trace?port=QM-CO-ODF1:13"],
    "api.loss": ["/api/v1/loss?circuit=QM-CD-03"],
    "api.live": ["/api/v1/live?closure=QM-SC-CABN"],
    "api.impact": ["/api/v1/impact?span=QM-S12", "/api/v1/impact?structure=QM-MH02"],
    "api.locate": ["/api/v1/locate?port=QM-CO-ODF1:13&distance_m=800"],
    "map.viewport": ["/api/v1/map?bbox=-180,-90,180,90"],
    "map.search_api": ["/api/v1/search?q=QM"],
    "map.lines": ["/api/v1/geometry?circuit=QM-CD-03", "/api/v1/geometry?cable=QM-D48W"],
    "map.search_page": ["/search?q=QM-SC"],
    "dispatch.dispatch": ["/dispatch/?span=QM-S12", "/dispatch/?port=QM-CO-ODF1:13&distance_m=800"],
    "circuits.circuits": ["/circuits/?status=active"],
    "history.history": [
        "/history/closure/QM-SC-CABN",
        "/history/cable/QM-D48W",
        "/history/circuit/QM-CD-03",
    ],
}
# Bookkeeping of who is signed in, not the record: a GET may mark a session seen.
NOT_THE_RECORD = {"person", "api_token", "web_session", "sign_in_attempt"}


def _every_table(url: str) -> dict[str, list[tuple[Any, ...]]]:
    database = Database(url)
    try:
        with database.read() as session:
            return {
                table.name: sorted((tuple(row) for row in session.execute(select(table))), key=repr)
                for table in Base.metadata.sorted_tables
                if table.name not in NOT_THE_RECORD
            }
    finally:
        database.dispose()


def _get_urls(app: Flask) -> list[str]:
    urls = []
    for rule in app.url_map.iter_rules():
        if "GET" not in (rule.methods or set()):
            continue
        if rule.endpoint in GET_SAMPLES:
            urls.extend(GET_SAMPLES[rule.endpoint])
        else:
            assert not rule.arguments, f"add a sample request for {rule.endpoint} to GET_SAMPLES"
            urls.append(rule.rule)
    return urls


def test_no_get_changes_the_record(make_app: Callable[..., Flask], db_url: str) -> None:
    app = make_app(build_demo_bundle())
    add_person_to(db_url, "root", "admin")
    client = app.test_client()
    assert sign_in(client, "root").status_code == 303
    before = _every_table(db_url)
    urls = _get_urls(app)
    assert len(urls) >= 30
    for url in urls:
        with client.get(url) as answer:
            assert answer.status_code < 400, (url, answer.status_code)
    assert _every_table(db_url) == before
