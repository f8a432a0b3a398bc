"""What clerks and dispatchers change from the browser: splices by form, splice-sheet imports,
circuit status; and the splice rows of the API. Every change is all or nothing."""

from __future__ import annotations

import base64
import csv
import html
import io
from pathlib import Path
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient

from tests.conftest import PlantCli
from tests.networks import SINGLE_MODE, Bundle
from tests.web.conftest import page_text
from webui.access import is_writing_view


def splice_yard() -> Bundle:
    """Closure WC-1 (manhole WY-MH, 2 trays of 24) where cables meet.

    W-A (4 x 12) ends at WC-1 from panel WP-1; W-B (4 x 12) starts there toward WP-2; ribbons
    W-R1 and W-R2 (2 x 12) likewise; W-T (2 x 12) passes through WC-1 from WP-1 to WP-3
    (a mid-span access). Splitter WS-1 (1x4) sits in WC-1. Recorded: W-A:1 to W-B:1 in tray 1
    slot 1, both ends terminated on port 1 of their panels, and circuit W-CKT over them.
    """
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("WY-CO", 0, kind="central_office").structure("WY-MH", 300)
    b.structure("WY-PR", 300, 200, kind="customer_premises").structure("WY-BLD", 600)
    b.span("WY-1", "WY-CO", "WY-MH", 300.0).span("WY-2", "WY-MH", "WY-PR", 200.0)
    b.span("WY-3", "WY-MH", "WY-BLD", 300.0)
    b.closure("WC-1", "WY-MH", trays=2, slots=24)
    b.panel("WP-1", "WY-CO", ports=48).panel("WP-2", "WY-PR", ports=48).panel("WP-3", "WY-BLD")
    b.splitter("WS-1", "WC-1", "1x4")
    b.cable("W-A", ["WY-1"], [("WP-1", 0.0), ("WC-1", 305.0)], units=4)
    b.cable("W-B", ["WY-2"], [("WC-1", 0.0), ("WP-2", 205.0)], units=4)
    b.cable("W-R1", ["WY-1"], [("WP-1", 0.0), ("WC-1", 305.0)], kind="ribbon")
    b.cable("W-R2", ["WY-2"], [("WC-1", 0.0), ("WP-2", 205.0)], kind="ribbon")
    b.cable("W-T", ["WY-1", "WY-3"], [("WP-1", 0.0), ("WC-1", 304.0), ("WP-3", 610.0)])
    b.splice("WC-1", "W-A:1", "W-B:1", loss_db=0.04)
    b.terminate("W-A:1", "WP-1:1").terminate("W-B:1", "WP-2:1")
    b.circuit("W-CKT", "WP-1:1", "WP-2:1", customer="Saltmarsh Kite Club")
    return b


@pytest.fixture
def yard(make_app: Any) -> FlaskClient:
    app: Flask = make_app(splice_yard())
    return app.test_client()


def _splices(client: FlaskClient) -> list[dict[str, Any]]:
    return list(client.get("/api/v1/bundle").get_json().get("splices", []))


def _post_form(client: FlaskClient, **fields: str) -> Any:
    return client.post("/closures/WC-1/splices", data=fields)


def _states(client: FlaskClient, cable: str) -> dict[int, str]:
    live = client.get("/api/v1/live?closure=WC-1").get_json()
    return {s["strand"]: s["state"] for s in live["strands"] if s["cable"] == cable}


def test_one_splice_from_the_form(yard: FlaskClient) -> None:
    response = _post_form(
        yard,
        form="one",
        a_cable="W-A",
        a_strand="2",
        b_cable="W-B",
        b_strand="BL/OR",  # colours: unit blue, fiber orange is strand 2
        tray="1",
        slot="2",
        loss_db="0.03",
        spliced_on="2025-04-09",
        spliced_by="crew 7",
    )
    assert response.status_code == 303
    assert response.headers["Location"].endswith("/closures/WC-1#tray-1")
    page = page_text(yard.get("/closures/WC-1"))
    assert "Added 1 splice in tray 1." in page
    row = page[page.index('id="tray-1"') :].split("W-A:2", 1)[1].split("</tr>")[0]
    assert "W-B:2" in row and "0.03" in row and "2025-04-09" in row and "crew 7" in row
    trace = yard.get("/api/v1/trace?fiber=W-A:2").get_json()
    assert any(e["label"] == "W-B:2" for p in trace["paths"] for e in p["elements"])


def test_a_range_from_the_form(yard: FlaskClient) -> None:
    response = _post_form(
        yard,
        form="range",
        a_cable="W-A",
        a_first="13",
        a_last="24",
        b_cable="W-B",
        b_first="13",
        b_last="24",
        tray="2",
        slot="1",
    )
    assert response.status_code == 303
    assert response.headers["Location"].endswith("#tray-2")
    states = _states(yard, "W-A")
    assert all(states[n] == "spliced" for n in range(13, 25))
    assert states[12] == "open" and states[25] == "open"
    recorded = {(s["a"], s["b"], s["tray"], s["slot"]) for s in _splices(yard)}
    assert ("W-A:24", "W-B:24", 2, 12) in recorded


def test_a_unit_to_a_unit_from_the_form(yard: FlaskClient) -> None:
    tubes = _post_form(
        yard,
        form="unit",
        a_cable="W-A",
        a_unit="GR",
        b_cable="W-B",
        b_unit="3",
        tray="2",
        slot="13",
    )
    assert tubes.status_code == 303
    assert all(_states(yard, "W-B")[n] == "spliced" for n in range(25, 37))
    ribbons = _post_form(
        yard,
        form="unit",
        a_cable="W-R1",
        a_unit="1",
        b_cable="W-R2",
        b_unit="1",
        tray="1",
        slot="3",
    )
    assert ribbons.status_code == 303
    methods = {s["method"] for s in _splices(yard) if s["a"].startswith("W-R1")}
    assert methods == {"mass_fusion"}  # a ribbon to a ribbon is mass fusion by default


def test_a_mid_span_piece_and_a_splitter_leg(yard: FlaskClient) -> None:
    response = _post_form(
        yard, form="one", a_cable="W-T", a_strand="5", a_side="A", b_cable="W-B", b_strand="7",
        tray="1", slot="20",
    )  # fmt: skip
    assert response.status_code == 303
    page = page_text(yard.get("/closures/WC-1"))
    assert "1 strands cut" in page
    assert "W-T:5/A" in page and "toward WP-1" in page
    leg = _post_form(
        yard, form="one", a_cable="WS-1", a_strand="in", b_cable="W-A", b_strand="5",
        tray="1", slot="21",
    )  # fmt: skip
    assert leg.status_code == 303
    assert ("WS-1:in", "W-A:5") in {(s["a"], s["b"]) for s in _splices(yard)} | {
        (s["b"], s["a"]) for s in _splices(yard)
    }


def test_the_side_choice_names_where_each_piece_runs(yard: FlaskClient) -> None:
    # W-T passes through WC-1 from WP-1 (its A end) to WP-3 (its B end); the other cables
    # end at WC-1, so only W-T's ends name the sides.
    page = page_text(yard.get("/closures/WC-1"))
    choice = page.split('id="one-a_side"', 1)[1].split("</select>", 1)[0]
    options = [html.unescape(" ".join(o.split("</option>")[0].split(">", 1)[1].split()))
               for o in choice.split("<option")[1:]]  # fmt: skip
    assert options == ["cable ends here", "A: toward WP-1 (W-T)", "B: toward WP-3 (W-T)"]
    assert page.count("A: toward WP-1 (W-T)") == 6  # both sides of each of the three forms


def test_a_refused_form_writes_nothing_and_says_why(yard: FlaskClient) -> None:
    before = _splices(yard)
    # Slot 1 of tray 1 holds W-A:1 already, and W-B has no strand 49.
    response = _post_form(
        yard, form="range", a_cable="W-A", a_first="2", a_last="3", b_cable="W-B",
        b_first="48", b_last="49", tray="1", slot="1",
    )  # fmt: skip
    assert response.status_code == 422
    page = html.unescape(page_text(response))
    assert "Nothing was recorded" in page
    assert "the form:" in page
    assert "49" in page
    assert 'value="W-A"' in page and 'value="48"' in page  # what was typed is kept
    assert _splices(yard) == before


@pytest.mark.parametrize(
    ("fields", "words"),
    [
        ({"tray": "x"}, "tray 'x' is not a whole number"),
        ({"loss_db": "0,04"}, "use a point for decimals"),
        ({"spliced_on": "9 April"}, "is not an ISO date"),
        ({"a_cable": "NO-CABLE"}, "NO-CABLE"),
        ({"method": "glue"}, "method 'glue' is not one of"),
    ],
)
def test_each_bad_cell_is_named(yard: FlaskClient, fields: dict[str, str], words: str) -> None:
    good = {
        "form": "one",
        "a_cable": "W-A",
        "a_strand": "3",
        "b_cable": "W-B",
        "b_strand": "3",
        "tray": "1",
        "slot": "4",
    }
    response = _post_form(yard, **(good | fields))
    assert response.status_code == 422
    assert words in html.unescape(page_text(response))


def test_a_dispatcher_changes_a_circuit_status(yard: FlaskClient) -> None:
    assert yard.get("/api/v1/trace?circuit=W-CKT").get_json()["paths"][0]["elements"][0]["lit"]
    response = yard.post("/circuits/W-CKT/status", data={"status": "out_of_service"})
    assert response.status_code == 303
    page = page_text(yard.get("/circuits/W-CKT"))
    assert "status changed from active to out_of_service" in page
    assert 'class="status status-out_of_service"' in page
    trace = yard.get("/api/v1/trace?circuit=W-CKT").get_json()
    assert trace["circuit"]["status"] == "out_of_service"
    assert not trace["paths"][0]["elements"][0]["lit"]  # no longer counted as live
    refused = yard.post("/circuits/W-CKT/status", data={"status": "broken"})
    assert refused.status_code == 422
    assert "'broken' is not one of" in html.unescape(page_text(refused))
    assert yard.post("/circuits/NO-CKT/status", data={"status": "active"}).status_code == 404
    assert yard.post("/circuits/W-CKT/status", data={}).status_code == 400


SHEET_HEADER = "closure,tray,slot,a_cable,a_strand,a_side,b_cable,b_strand,b_side,method,loss_db"


def _upload(client: FlaskClient, name: str, data: bytes) -> Any:
    return client.post(
        "/import/",
        data={"action": "check", "sheet": (io.BytesIO(data), name)},
        content_type="multipart/form-data",
    )


def test_import_shows_every_problem_by_line_and_offers_no_commit(yard: FlaskClient) -> None:
    sheet = "\n".join(
        [
            SHEET_HEADER,
            "WC-1,1,5,W-A,6,,W-B,6,,fusion,0.02",
            "WC-1,1,1,W-A,7,,W-B,7,,fusion,",  # slot 1 is taken
            "WC-1,one,6,W-A,8,,W-B,8,,fusion,",  # not a tray number
        ]
    ).encode()
    response = _upload(yard, "field-sheet.csv", sheet)
    assert response.status_code == 422
    page = html.unescape(page_text(response))
    assert "Check of field-sheet.csv (dry run: nothing written)" in page
    assert "line 3:" in page and "line 4: tray 'one' is not a whole number" in page
    assert 'id="commit-form"' not in page
    assert len(_splices(yard)) == 1


def test_import_then_commit_a_clean_sheet(yard: FlaskClient) -> None:
    sheet = (SHEET_HEADER + "\nWC-1,1,5,W-A,6-8,,W-B,6-8,,fusion,\n").encode()
    checked = _upload(yard, "clean.csv", sheet)
    assert checked.status_code == 200
    page = page_text(checked)
    assert "No problems: 3 splices would be added" in page
    assert 'id="commit-form"' in page
    assert len(_splices(yard)) == 1  # the check wrote nothing
    carried = base64.b64encode(sheet).decode()
    assert f'name="data" value="{carried}"' in page
    committed = yard.post(
        "/import/", data={"action": "commit", "name": "clean.csv", "data": carried}
    )
    assert committed.status_code == 200
    assert "Added 3 splices" in page_text(committed)
    assert len(_splices(yard)) == 4
    again = yard.post("/import/", data={"action": "commit", "name": "clean.csv", "data": carried})
    assert "3 were already recorded identically" in page_text(again)


def test_import_reads_xlsx(yard: FlaskClient) -> None:
    from openpyxl import Workbook

    workbook = Workbook()
    sheet = workbook.active
    assert sheet is not None
    sheet.append(SHEET_HEADER.split(","))
    sheet.append(["WC-1", 1, 9, "W-A", "BL/WH", None, "W-B", "6", None, "fusion", 0.05])
    buffer = io.BytesIO()
    workbook.save(buffer)
    response = _upload(yard, "sheet.xlsx", buffer.getvalue())
    assert response.status_code == 200, page_text(response)
    assert "1 splices would be added" in page_text(response)


@pytest.mark.parametrize(
    ("name", "data", "status", "words"),
    [
        ("notes.txt", b"hello", 422, "give a .csv or .xlsx"),
        ("bad.csv", b"\xff\xfe\x00junk", 422, "NUL byte"),
        ("fake.xlsx", b"not a zip", 422, "not an XLSX workbook"),
    ],
)
def test_import_refuses_unreadable_files(
    yard: FlaskClient, name: str, data: bytes, status: int, words: str
) -> None:
    response = _upload(yard, name, data)
    assert response.status_code == status
    assert words in html.unescape(page_text(response))


def test_import_needs_a_file_and_an_intact_carried_sheet(yard: FlaskClient) -> None:
    assert yard.post("/import/", data={"action": "check"}).status_code == 400
    damaged = yard.post("/import/", data={"action": "commit", "name": "x.csv", "data": "@@@"})
    assert damaged.status_code == 400
    assert "upload the file again" in page_text(damaged)


ROWS = [
    {"closure": "WC-1", "tray": 1, "slot": 2, "a_cable": "W-A", "a_strand": "2",
     "b_cable": "W-B", "b_strand": "2", "method": "fusion", "loss_db": 0.02},
    {"closure": "WC-1", "tray": 1, "slot": 3, "a_cable": "W-A", "a_strand": "3-4",
     "b_cable": "W-B", "b_strand": "3-4", "spliced_on": "2025-04-10", "spliced_by": "crew 2"},
]  # fmt: skip


def test_api_records_splice_rows(yard: FlaskClient) -> None:
    dry = yard.post("/api/v1/splices?dry_run=true", json=ROWS)
    assert dry.status_code == 200
    assert dry.get_json()["dry_run"] is True
    assert len(dry.get_json()["splices"]) == 3
    assert len(_splices(yard)) == 1
    response = yard.post("/api/v1/splices", json=ROWS)
    assert response.status_code == 201
    body = response.get_json()
    assert body["added"] == 3 and body["problems"] == []
    assert len(_splices(yard)) == 4
    again = yard.post("/api/v1/splices", json=ROWS)
    assert again.status_code == 200
    assert again.get_json()["already_recorded"] == 3


def test_api_splice_rows_answer_as_the_import_command_does(
    make_app: Any, db_url: str, tmp_path: Path
) -> None:
    """The same rows through `POST /api/v1/splices` and `plantdb import splices --json`: the
    same report (the command adds only the file's name and its row count)."""
    client = make_app(splice_yard()).test_client()
    api = client.post("/api/v1/splices?dry_run=true", json=ROWS).get_json()
    sheet = tmp_path / "rows.csv"
    columns = ["closure", "tray", "slot", "a_cable", "a_strand", "b_cable", "b_strand"]
    columns += ["method", "loss_db", "spliced_on", "spliced_by"]
    with sheet.open("w", newline="", encoding="utf-8") as out:
        writer = csv.DictWriter(out, columns)
        writer.writeheader()
        writer.writerows(ROWS)
    command = PlantCli(db_url).json("import", "splices", str(sheet), "--dry-run")
    assert command.pop("file") == str(sheet) and command.pop("rows") == len(ROWS)
    assert command == api


def test_api_splice_rows_are_all_or_none(yard: FlaskClient) -> None:
    rows = [*ROWS, {**ROWS[0], "slot": 1, "a_strand": "9", "b_strand": "9"}]
    response = yard.post("/api/v1/splices", json=rows)
    assert response.status_code == 422
    body = response.get_json()
    assert body["error"].startswith("splice rows refused, nothing was written: 1 problem")
    assert body["details"][0].startswith("splices[2]:")
    assert body["report"]["problems"] == body["details"][:1]
    assert len(_splices(yard)) == 1


@pytest.mark.parametrize(
    ("body", "status", "words"),
    [
        ({"closure": "WC-1"}, 422, "expected a list of splice rows"),
        ([{"closure": "WC-1", "colour": "blue"}], 422, "splices[0]: unknown keys colour"),
        ([{"closure": "WC-1", "tray": 1}], 422, "splices[0]: slot is empty"),
        ([7], 422, "splices[0]: expected an object"),
    ],
)
def test_api_splice_rows_refusals_name_where(
    yard: FlaskClient, body: Any, status: int, words: str
) -> None:
    response = yard.post("/api/v1/splices", json=body)
    assert response.status_code == status
    answer = response.get_json()
    assert any(words in line for line in [answer["error"], *answer["details"]]), answer


def test_api_splice_rows_need_a_json_body(yard: FlaskClient) -> None:
    response = yard.post("/api/v1/splices", data="closure,tray", content_type="text/csv")
    assert response.status_code == 400
    assert "the body must be JSON" in response.get_json()["error"]


def test_every_state_change_goes_through_the_write_gate(yard: FlaskClient) -> None:
    app = yard.application
    writing = set()
    for rule in app.url_map.iter_rules():
        if rule.methods and rule.methods - {"GET", "HEAD", "OPTIONS"}:
            assert is_writing_view(app.view_functions[rule.endpoint]), rule.rule
            writing.add(rule.endpoint)
    assert writing == {
        "api.splices",
        "closures.add_splices",
        "circuits.change_status",
        "imports.check_or_commit",
        "splice_edits.remove",
        "splice_edits.move",
        "auth.sign_in_post",  # these two change only the visitor's own session
        "auth.sign_out",
    }


def test_a_read_only_server_refuses_every_change(make_app: Any) -> None:
    client = make_app(splice_yard(), READ_ONLY=True).test_client()
    refused = client.post("/api/v1/splices", json=ROWS)
    assert refused.status_code == 403
    assert "read-only" in refused.get_json()["error"]
    form = _post_form(client, form="one", a_cable="W-A", a_strand="2", b_cable="W-B",
                      b_strand="2", tray="1", slot="2")  # fmt: skip
    assert form.status_code == 403
    assert client.post("/circuits/W-CKT/status", data={"status": "retired"}).status_code == 403
    page = page_text(client.get("/closures/WC-1"))
    assert "This server is read-only" in page and 'id="form-one"' not in page
    assert len(_splices(client)) == 1


def test_labels_are_escaped_everywhere(make_app: Any) -> None:
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("<b>MH</b>", 0).structure("X-2", 200)
    b.span("S&<1>", "<b>MH</b>", "X-2", 200.0)
    b.closure("C<script>alert(1)</script>", "<b>MH</b>")
    client = make_app(b).test_client()
    page = page_text(client.get("/closures/C%3Cscript%3Ealert(1)%3C/script%3E"))
    assert "<script>alert(1)</script>" not in page
    assert "C&lt;script&gt;alert(1)&lt;/script&gt;" in page
    assert "&lt;b&gt;MH&lt;/b&gt;" in page
    span = page_text(client.get("/spans/S%26%3C1%3E"))
    assert "S&amp;&lt;1&gt;" in span and "<1>" not in span
    found = page_text(client.get("/search?q=%3Cb%3E"))
    assert "<b>MH</b>" not in found
