"""The pages people read, on the demo town: content, links, colours with names, cautions.

Sources named beside the checks: strand and unit colours are the ANSI/TIA-598 colour order
(seen; the sequence itself is checked against the standard in tests/unit/test_colours.py),
a strand's unit and place in it are arithmetic; the cautions are plantdb.safety's own text,
compared by its constants.
"""

from __future__ import annotations

import csv
import html
import io
import json
import re

import pytest
from flask.testing import FlaskClient

from plantdb.safety import (
    CLOSURE_CAUTION,
    FIELD_VERIFY,
    IMPACT_CAUTION,
    LOCATE_CAUTION,
    TRACE_CAUTION,
)
from tests.web.conftest import new_app, page_text

PAGES = [
    "/",
    "/closures/QM-SC-MH02",
    "/closures/QM-SC-CABN/print",
    "/cables/QM-F288",
    "/cables/QM-DR11",
    "/panels/QM-CO-ODF1",
    "/circuits/",
    "/circuits/QM-CD-03",
    "/dispatch/",
    "/dispatch/?span=QM-S12",
    "/dispatch/?port=QM-CO-ODF1:13&distance_m=800",
    "/import/",
    "/structures/QM-CAB-N",
    "/spans/QM-S25",
    "/search?q=QM",
    "/history/closure/QM-SC-MH02",
    "/history/cable/QM-F288",
    "/history/circuit/QM-CD-03",
    "/history/panel/QM-CO-ODF1",
    "/history/structure/QM-CAB-N",
    "/history/span/QM-S25",
    "/sign-in",
]

_CAUTION = re.compile(r'<div class="caution"[^>]*>(.*?)</div>', re.DOTALL)
_TAG = re.compile(r"<[^>]+>")


def _get(client: FlaskClient, url: str, status: int = 200) -> str:
    response = client.get(url)
    assert response.status_code == status, url
    return page_text(response)


def cautions(page: str) -> list[str]:
    """The text of each caution box of a page (or part of one), as a reader sees it."""
    return [html.unescape(_TAG.sub("", box)) for box in _CAUTION.findall(page)]


def settings_of(page: str) -> dict[str, object]:
    """The data-settings of a page's plant map."""
    found = re.search(r'data-map="plant" data-settings=\'([^\']*)\'', page)
    assert found is not None, "the page has no plant map"
    settings: dict[str, object] = json.loads(html.unescape(found.group(1)))
    return settings


@pytest.mark.parametrize("url", PAGES)
def test_pages_carry_no_inline_script_or_handlers(client: FlaskClient, url: str) -> None:
    # A strict Content-Security-Policy comes later: scripts only from files, data in data-*.
    page = _get(client, url)
    assert not re.search(r"<script(?![^>]*\bsrc=)[^>]*>", page), "inline <script> block"
    assert not re.search(r"\son[a-z]+\s*=", page), "inline event handler"
    assert "javascript:" not in page
    for href in re.findall(r'(?:src|href)="([^"]+)"', page):
        assert not href.startswith(("http:", "https:", "//")), f"{url} loads {href} from outside"


def test_map_page_loads_leaflet_from_the_server(client: FlaskClient) -> None:
    page = _get(client, "/")
    assert '<script src="/static/leaflet/leaflet.js">' in page
    assert 'href="/static/leaflet/leaflet.css"' in page
    assert 'data-map="plant"' in page
    settings = re.search(r"data-settings='([^']*)'", page)
    assert settings is not None
    assert '"tile_url": ""' in settings.group(1)  # no base map unless configured
    assert '"map_url": "/api/v1/map"' in settings.group(1)
    with client.get("/static/leaflet/leaflet.js") as leaflet:
        assert leaflet.status_code == 200
        assert b"Leaflet" in leaflet.data[:500]
    for url in (
        "/static/leaflet/images/layers.png",
        "/static/js/plantdb.js",
        "/static/favicon.svg",
    ):
        with client.get(url) as response:
            assert response.status_code == 200, url


def test_a_configured_base_map_reaches_the_pages_maps(demo_url: str) -> None:
    tiles = "https://tiles.invalid/{z}/{x}/{y}.png"
    app = new_app(demo_url, TILE_URL=tiles, TILE_ATTRIBUTION="© Tile Makers' Guild <t>")
    try:
        client = app.test_client()
        for url in ("/", "/dispatch/"):
            settings = settings_of(_get(client, url))
            assert settings["tile_url"] == tiles, url
            assert settings["tile_attribution"] == "© Tile Makers' Guild <t>", url
    finally:
        app.extensions["plantdb.database"].dispose()


def test_favicon_is_served_from_the_server(client: FlaskClient) -> None:
    response = client.get("/favicon.ico")
    assert response.status_code == 301
    assert response.headers["Location"] == "/static/favicon.svg"


def test_colour_classes_come_from_the_colour_code(client: FlaskClient) -> None:
    css = _get(client, "/assets/colours.css")
    assert ".tia-1 { --swatch: #1f5fbf;" in css  # blue, as plantdb.colours draws it
    assert ".tia-12 { --swatch: #2ec4c9;" in css  # aqua
    assert ".stripe-black { --stripe: #1c1c1c; }" in css


def test_closure_page(client: FlaskClient) -> None:
    page = _get(client, "/closures/QM-SC-MH02")
    assert "<h1>Closure QM-SC-MH02</h1>" in page
    assert '<a href="/structures/QM-MH02">QM-MH02</a>' in page
    # Cables: the trunk passes through (mid-span access), the Millrace feeder starts here.
    assert re.search(r"QM-F288</a></td>\s*<td>mid-span access", page)
    assert re.search(r"QM-F48M</a></td>\s*<td>cable ends here", page)
    # The splice sheet, tray by tray, with swatches and colour names (tube / fiber).
    for tray in (1, 2, 3):
        assert f'id="tray-{tray}"' in page
    assert "Tray 1 <small>(12 of 12 slots used)</small>" in page
    assert "Tray 3 <small>(0 of 12 slots used)</small>" in page
    # ANSI/TIA-598 colour order (seen): strand 13 of a 12-per-tube cable is tube 2, fiber 1
    # (arithmetic), so orange / blue; F48M:1 is tube 1 fiber 1, blue / blue.
    sheet = page[page.index('id="tray-1"') :]
    row = sheet[sheet.index("QM-F288:13/A") :].split("</tr>")[0]
    assert 'class="swatch tia-2"' in row and "orange / " in row
    assert "(OR/BL)" in row and "(BL/BL)" in row
    assert "toward QM-CO-ODF1" in row
    # What is live, and its caution: plantdb.safety's text, the field check included.
    live = page[page.index('<section id="live"') :].split("</section>")[0]
    assert "Caution before opening" in live
    (caution,) = cautions(live)
    assert CLOSURE_CAUTION in caution and FIELD_VERIFY in caution
    assert "QM-BB-01" in page and "status-active" in page
    # Entry forms: one splice, a range, a unit to a unit.
    for form in ("form-one", "form-range", "form-unit"):
        assert f'id="{form}"' in page
    assert 'action="/closures/QM-SC-MH02/splices"' in page
    assert '<option value="QM-F48M">' in page  # the cables here, offered while typing


def test_closure_print_sheet_and_downloads(client: FlaskClient) -> None:
    printed = _get(client, "/closures/QM-SC-HH01/print")
    assert "Splice sheet QM-SC-HH01" in printed
    assert "mass fusion" in printed
    response = client.get("/closures/QM-SC-HH01/sheet.csv")
    assert response.mimetype == "text/csv"
    assert 'filename="QM-SC-HH01-splices.csv"' in response.headers["Content-Disposition"]
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True))))
    assert len(rows) == 36
    assert rows[0]["a_cable"] == "QM-R72A" and rows[0]["b_cable"] == "QM-R72B"
    xlsx = client.get("/closures/QM-SC-HH01/sheet.xlsx")
    assert xlsx.data[:2] == b"PK"  # a zip archive, as XLSX is
    assert client.get("/closures/QM-SC-HH01/sheet.pdf").status_code == 404


def test_cable_page(client: FlaskClient) -> None:
    page = _get(client, "/cables/QM-D48W")
    assert "4 × 12 loose tube, 48 fibers" in page
    assert "SM-G652D (single-mode, ITU-T G.652.D)" in page
    assert 'data-geometry-url="/api/v1/geometry?cable=QM-D48W"' in page
    # Stations with their sheath marks, and the slack coil.
    assert re.search(r"QM-SC-PL04</a></td>\s*<td><a[^>]*>QM-PL04</a></td>\s*<td>mid-span", page)
    assert "15.0 m at <a" in page
    # Every unit with its colour, every strand with its states and circuits.
    assert 'id="unit-4"' in page and 'id="strand-48"' in page
    strand3 = page[page.index('id="strand-3"') :].split("</tr>")[0]
    # ANSI/TIA-598 colour order (seen): tube 1 is blue, fiber 3 green.
    assert "blue / " in strand3 and "green" in strand3
    assert "state-express" in strand3  # passes QM-SC-PL02 uncut
    assert "state-spliced" in strand3  # spliced to the drop at QM-SC-PL04
    assert "QM-CD-03" in strand3
    strand8 = page[page.index('id="strand-8"') :].split("</tr>")[0]
    assert "state-open" in strand8
    # An open strand with no circuit reads as dark: the table says to verify in the field.
    strands = page[page.index('aria-labelledby="strands-h"') :].split("</section>")[0]
    assert strands.index('id="strand-caution"') < strands.index('<table class="strands">')
    (caution,) = cautions(strands)
    assert FIELD_VERIFY in caution
    assert "open in the record, not proven dark" in caution


def test_cable_page_of_a_drop_ending_on_a_panel(client: FlaskClient) -> None:
    page = _get(client, "/cables/QM-DR11")
    assert "4 fibers, central core (no units)" in page
    strand1 = page[page.index('id="strand-1"') :].split("</tr>")[0]
    assert "state-terminated" in strand1
    assert '<a href="/panels/QM-PR11-P">QM-PR11-P:1</a>' in strand1
    assert "QM-DF-05" in strand1


def test_panel_page(client: FlaskClient) -> None:
    page = _get(client, "/panels/QM-CO-ODF1")
    assert "96 ports" in page and "LC/UPC" in page
    port49 = page[page.index('id="port-49"') :].split("</tr>")[0]
    assert '<a href="/cables/QM-F288">QM-F288:49</a>' in port49
    assert "pigtail splice" in port49
    assert "QM-SW-CO1:4" in port49 and "equipment" in port49
    assert "QM-BB-04" in port49
    # ANSI/TIA-598 colour order (seen): strand 49 of a 12-per-tube cable is tube 5, fiber 1
    # (arithmetic), so slate / blue.
    assert "slate / " in port49 and "(SL/BL)" in port49
    # A port with nothing on it reads as dark: the table says to verify in the field.
    assert page.index('id="port-caution"') < page.index('<table class="ports">')
    (caution,) = cautions(page)
    assert FIELD_VERIFY in caution
    assert "empty in the record, not proven dark" in caution


def test_circuit_page(client: FlaskClient) -> None:
    page = _get(client, "/circuits/QM-CD-03")
    assert "Otterbank Animal Clinic" in page
    assert 'class="status status-active"' in page
    assert 'id="status-form"' in page and 'action="/circuits/QM-CD-03/status"' in page
    # The loss budget per wavelength on both bases, as the loss document counts it.
    loss = client.get("/api/v1/loss?circuit=QM-CD-03").get_json()
    for nm, w in loss["paths"][0]["wavelengths"].items():
        assert f'<th scope="row">{nm} nm</th>' in page
        assert f"{w['max_db']:.2f}" in page and f"{w['typical_db']:.2f}" in page
    # The trace as a table, linking strands to their cables and splices to their trays.
    assert '<a href="/cables/QM-F144#strand-1">QM-F144:1</a>' in page
    assert '<a href="/closures/QM-SC-CABN#tray-1">QM-SC-CABN tray 1 slot 1</a>' in page
    assert 'data-geometry-url="/api/v1/geometry?circuit=QM-CD-03"' in page
    # The trace marks strands lit: one not marked is not proven dark, and the page says so.
    trace = page.split('id="trace-h"')[1].split("</section>")[0]
    (caution,) = cautions(trace)
    assert caution == "Caution" + TRACE_CAUTION


def test_circuit_page_asks_other_wavelengths(client: FlaskClient) -> None:
    page = _get(client, "/circuits/QM-DF-01?wavelength=1625")
    assert '<th scope="row">1625 nm</th>' in page
    assert '<th scope="row">1310 nm</th>' not in page
    refused = _get(client, "/circuits/QM-DF-01?wavelength=850")
    assert "850 nm is not a single-mode test wavelength" in refused


def test_circuit_list_filters_by_status(client: FlaskClient) -> None:
    page = _get(client, "/circuits/")
    assert page.count('<a href="/circuits/QM-') == 21
    planned = _get(client, "/circuits/?status=planned")
    assert sorted(re.findall(r'<a href="/circuits/(QM-[^"]+)"', planned)) == [
        "QM-CD-04",
        "QM-PON-N2",
    ]


def test_dispatch_cut_impact(client: FlaskClient) -> None:
    page = _get(client, "/dispatch/?span=QM-S12")
    impact = client.get("/api/v1/impact?span=QM-S12").get_json()
    answer = page[page.index('id="impact-answer"') :]
    for circuit in impact["circuits"]:
        assert f">{circuit['label']}</a>" in answer
    assert f"{impact['summary']['active']} active circuits down" in answer
    assert "Finchmoss Books" in answer
    (caution,) = cautions(answer.split('id="locate-h"')[0])
    assert IMPACT_CAUTION in caution and FIELD_VERIFY in caution
    assert "&#34;cables_url&#34;: &#34;/api/v1/geometry?cable=QM-D48W&#34;" in page or (
        '"cables_url": "/api/v1/geometry?cable=QM-D48W"' in page
    )


def test_dispatch_locate(client: FlaskClient) -> None:
    page = _get(client, "/dispatch/?port=QM-CO-ODF1:13&distance_m=800")
    answer = page[page.index('id="locate-answer"') :]
    assert '<a href="/cables/QM-F48M">QM-F48M</a> strand 1' in answer
    assert '<a href="/structures/QM-MH02">QM-MH02</a> and <a href="/structures/QM-PED1">' in answer
    (caution,) = cautions(answer)
    assert LOCATE_CAUTION in caution and FIELD_VERIFY in caution
    assert '"locate": {' in page.replace("&#34;", '"')


@pytest.mark.parametrize(
    ("url", "status", "words"),
    [
        ("/dispatch/?span=NO-SPAN", 404, "NO-SPAN"),
        ("/dispatch/?span=QM-S12&structure=QM-MH02", 400, "not both"),
        ("/dispatch/?port=QM-CO-ODF1:13&distance_m=nine", 400, "'nine' is not a number"),
        ("/dispatch/?port=QM-CO-ODF1:13", 400, "distance_m is required"),
        ("/dispatch/?port=QM-CO-ODF1:13&distance_m=-1", 422, "must be positive"),
    ],
)
def test_dispatch_refusals_show_on_the_page(
    client: FlaskClient, url: str, status: int, words: str
) -> None:
    page = _get(client, url, status)
    assert words in html.unescape(page)
    assert 'role="alert"' in page


def test_structure_and_span_pages(client: FlaskClient) -> None:
    cabinet = _get(client, "/structures/QM-CAB-N")
    assert "Cabinet QM-CAB-N" in cabinet
    assert '<a href="/closures/QM-SC-CABN">QM-SC-CABN</a>' in cabinet
    assert '<a href="/panels/QM-CABN-P1">QM-CABN-P1</a>' in cabinet
    assert 'href="/dispatch/?structure=QM-CAB-N"' in cabinet
    span = _get(client, "/spans/QM-S25")
    assert "buried" in span
    assert '<a href="/cables/QM-F48M">QM-F48M</a>' in span
    assert "Millrace Road buried route" in span
    assert '<a class="button" href="/dispatch/?span=QM-S25">' in span


@pytest.mark.parametrize(
    "url",
    [
        "/closures/NO-SUCH",
        "/closures/NO-SUCH/print",
        "/cables/NO-SUCH",
        "/panels/NO-SUCH",
        "/circuits/NO-SUCH",
        "/structures/NO-SUCH",
        "/spans/NO-SUCH",
        "/no/such/page",
    ],
)
def test_unknown_things_are_a_readable_404(client: FlaskClient, url: str) -> None:
    page = _get(client, url, 404)
    assert "<h1>Not found</h1>" in page
    if "NO-SUCH" in url:
        assert "NO-SUCH" in page


def test_read_pages_refuse_posts(client: FlaskClient) -> None:
    for url in ("/closures/QM-SC-MH02", "/dispatch/", "/", "/circuits/QM-BB-01"):
        assert client.post(url).status_code == 405
