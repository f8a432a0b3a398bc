"""History in the browser: the recent-changes panel of closure, cable, circuit, panel,
structure and span pages, the full history, a closure's sheet as recorded on a day, and
corrections made from a page that is no longer current refused with 409 instead of
overwriting someone else's change."""

from __future__ import annotations

import datetime as dt
import html
import re
from typing import Any

import pytest
from flask.testing import FlaskClient
from sqlalchemy import create_engine, update

from plantdb.audit import acting_as
from plantdb.db import Database, run_in_transaction
from plantdb.model import Change
from plantdb.records.splice_edits import move_splices
from tests.web.conftest import add_person_to, page_text, sign_in
from tests.web.test_forms import splice_yard

_HIDDEN = re.compile(r'<input type="hidden" name="(\w+)" value="([^"]*)">')


@pytest.fixture
def yard(make_app: Any) -> FlaskClient:
    client: FlaskClient = make_app(splice_yard()).test_client()
    return client


def text_of(response: Any) -> str:
    return html.unescape(page_text(response))


def shown_edit(client: FlaskClient, form: str, slot: int) -> dict[str, str]:
    """The hidden fields of a splice's move or remove form as the closure page shows them."""
    page = page_text(client.get("/closures/WC-1"))
    for found in re.finditer(r'<form method="post" action="[^"]+" id="edit-\d+-(\w+)">', page):
        if found.group(1) != form:
            continue
        block = page[found.end() : page.index("</form>", found.end())]
        fields = dict(_HIDDEN.findall(block))
        if fields["slot"] == str(slot):
            fields.pop("csrf_token", None)
            return fields
    raise AssertionError(f"no {form} form for slot {slot}")


def date_changes(url: str, at: dt.datetime) -> None:
    """Set the time of every change recorded so far (the test's clock)."""
    engine = create_engine(url)
    with engine.begin() as connection:
        connection.execute(update(Change).values(at=at))
    engine.dispose()


def test_pages_show_their_recent_changes(yard: FlaskClient) -> None:
    closure = text_of(yard.get("/closures/WC-1"))
    panel = closure[closure.index('<section id="history"') :]
    assert "Recent changes" in panel
    assert "WC-1 tray 1 slot 1" in panel and "W-A:1 to W-B:1" in panel
    assert "splitter WS-1" in panel and "closure WC-1" in panel
    assert 'href="/history/closure/WC-1"' in panel
    cable = text_of(yard.get("/cables/W-T"))
    assert "cable W-T" in cable[cable.index('<section id="history"') :]
    circuit = text_of(yard.get("/circuits/W-CKT"))
    assert "circuit W-CKT" in circuit[circuit.index('<section id="history"') :]


def recent(page: str) -> str:
    """The recent-changes panel of a page."""
    return page[page.index('<section id="history"') :].split("</section>")[0]


def test_panel_structure_and_span_pages_show_their_recent_changes(make_app: Any) -> None:
    """A panel's history holds it, its terminations, its splitters and the jumpers on its
    ports (either end); a structure's, it and what stands in it; a span's, itself."""
    yard = splice_yard().panel("WP-4", "WY-CO").splitter("WS-2", "WP-4", "1x2")
    yard.jumper("WP-1:5", "WP-4:5")
    client: FlaskClient = make_app(yard).test_client()
    panel = recent(text_of(client.get("/panels/WP-1")))
    assert "panel WP-1" in panel and "W-A:1 on WP-1:1" in panel
    assert "jumper WP-1:5 to WP-4:5" in panel and "WP-1:5 to WP-4:5" in panel  # its details
    assert "WS-2" not in panel and "W-B:1 on WP-2:1" not in panel
    assert 'href="/history/panel/WP-1"' in panel
    other = recent(text_of(client.get("/panels/WP-4")))
    assert "jumper WP-1:5 to WP-4:5" in other and "splitter WS-2" in other
    office = recent(text_of(client.get("/structures/WY-CO")))
    assert "structure WY-CO" in office and "panel WP-1" in office and "panel WP-4" in office
    assert "closure WC-1" not in office  # it stands in the manhole
    span = recent(text_of(client.get("/spans/WY-1")))
    assert "span WY-1" in span and "cable" not in span
    full = text_of(client.get("/history/panel/WP-4"))
    assert '<h1>History of panel <a href="/panels/WP-4">WP-4</a></h1>' in full
    assert '"a": "WP-1:5"' in full  # the jumper's values as it was added
    assert "plantdb history --panel WP-4" in full
    for url in ("/history/structure/WY-MH", "/history/span/WY-3"):
        assert client.get(url).status_code == 200, url
    for url in ("/history/panel/NO-P", "/history/structure/NO-S", "/history/span/NO-SPAN"):
        assert client.get(url).status_code == 404, url


def test_the_full_history_page(yard: FlaskClient, db_url: str) -> None:
    date_changes(db_url, dt.datetime(2026, 4, 1, 8, 15))
    yard.post("/circuits/W-CKT/status", data={"status": "reserved", "version": "1"})
    page = text_of(yard.get("/history/circuit/W-CKT"))
    rows = page[page.index("<tbody>") :]
    assert rows.index("status active -> reserved") < rows.index("2026-04-01 08:15 UTC")
    assert '"customer": "Saltmarsh Kite Club"' in page  # the values it was added with
    recent = text_of(yard.get("/history/circuit/W-CKT?since=2026-04-02"))
    assert "status active -> reserved" in recent and "2026-04-01" not in recent
    assert yard.get("/history/circuit/NO-CKT").status_code == 404
    assert yard.get("/history/circuit/W-CKT?since=April").status_code == 400
    assert yard.get("/history/route/WY-1").status_code == 404  # routes keep no history page


def test_the_sheet_as_recorded_on_a_day(yard: FlaskClient, db_url: str) -> None:
    date_changes(db_url, dt.datetime(2026, 4, 1, 9))
    database = Database(db_url)
    try:
        run_in_transaction(database, lambda s: move_splices(s, "WC-1", 1, [1], 2, 7))
    finally:
        database.dispose()
    then = text_of(yard.get("/closures/WC-1?as_of=2026-04-01"))
    assert "This is the sheet as it was recorded on 2026-04-01, not the record now." in then
    assert "verify in the field" in then
    tray_1 = then[then.index('id="tray-1"') : then.index('id="tray-2"')]
    assert "W-A:1" in tray_1 and "W-B:1" in tray_1
    now = text_of(yard.get("/closures/WC-1"))
    assert "W-A:1" in now[now.index('id="tray-2"') :]
    before = text_of(yard.get("/closures/WC-1?as_of=2026-03-31"))
    assert "0 splices recorded on 2026-03-31" in before
    assert "The history of this record begins on 2026-04-01" in before
    assert yard.get("/closures/WC-1?as_of=31/03/2026").status_code == 400
    assert yard.get("/closures/NO-C?as_of=2026-03-31").status_code == 404


def test_a_splice_moved_and_removed_from_its_page(yard: FlaskClient) -> None:
    seen = shown_edit(yard, "move", 1)
    moved = yard.post("/closures/WC-1/splices/move", data={**seen, "to_tray": "2", "to_slot": "3"})
    assert moved.status_code == 303 and moved.headers["Location"].endswith("#tray-2")
    page = text_of(yard.get("/closures/WC-1"))
    assert "Moved W-A:1 to W-B:1 from tray 1 slot 1 to tray 2 slot 3." in page
    seen = shown_edit(yard, "remove", 3)
    assert seen["version"] == "2"
    removed = yard.post("/closures/WC-1/splices/remove", data=seen)
    assert removed.status_code == 303
    page = text_of(yard.get("/closures/WC-1"))
    assert "Removed W-A:1 to W-B:1 from tray 2 slot 3." in page
    assert "No splices recorded in this tray." in page
    history = text_of(yard.get("/history/closure/WC-1"))
    assert "removed" in history and "slot 1 -> 3, tray 1 -> 2" in history


def test_a_correction_from_a_stale_page_is_refused(yard: FlaskClient, db_url: str) -> None:
    seen = shown_edit(yard, "remove", 1)
    database = Database(db_url)
    try:
        with acting_as("Clerk Fenwick"):
            run_in_transaction(database, lambda s: move_splices(s, "WC-1", 1, [1], 1, 1))
            run_in_transaction(database, lambda s: move_splices(s, "WC-1", 1, [1], 1, 9))
    finally:
        database.dispose()
    stale = yard.post("/closures/WC-1/splices/remove", data={**seen, "slot": "9"})
    assert stale.status_code == 409
    message = text_of(stale)
    assert "the splice in WC-1 tray 1 slot 9 was changed by someone else since you opened it" in (
        message
    )
    assert "changed by Clerk Fenwick" in message
    moved = yard.post("/closures/WC-1/splices/move", data={**seen, "to_tray": "2", "to_slot": "1"})
    assert moved.status_code == 409
    assert [s["slot"] for s in yard.get("/api/v1/bundle").get_json()["splices"]] == [9]
    assert yard.post("/closures/WC-1/splices/remove", data={"tray": "1"}).status_code == 400


def test_a_status_set_on_a_stale_page_is_refused(yard: FlaskClient) -> None:
    page = page_text(yard.get("/circuits/W-CKT"))
    shown = re.search(r'name="version" value="(\d+)"', page)
    assert shown and shown.group(1) == "1"
    first = yard.post("/circuits/W-CKT/status", data={"status": "reserved", "version": "1"})
    assert first.status_code == 303
    second = yard.post("/circuits/W-CKT/status", data={"status": "retired", "version": "1"})
    assert second.status_code == 409
    assert "circuit W-CKT was changed by someone else since you opened it" in text_of(second)
    assert yard.get("/api/v1/trace?circuit=W-CKT").get_json()["circuit"]["status"] == "reserved"


def test_changes_are_recorded_as_the_signed_in_person(make_app: Any, db_url: str) -> None:
    client: FlaskClient = make_app(splice_yard()).test_client()
    add_person_to(db_url, "ashby", "clerk")
    assert sign_in(client, "ashby").status_code == 303
    seen = shown_edit(client, "move", 1)
    client.post("/closures/WC-1/splices/move", data={**seen, "to_tray": "1", "to_slot": "2"})
    page = text_of(client.get("/closures/WC-1"))
    panel = page[page.index('<section id="history"') :]
    assert re.search(r"<td>ashby</td><td>changed</td><td>WC-1 tray 1 slot 1, moved", panel)
