"""Real-browser tests: Debian's Chromium driven by Playwright against a live server on the
demo town. Each test records every request the page makes and fails if one leaves the server
or a script fails; every failure, of the test itself or of those checks as its tab closes,
leaves a screenshot of the page (`failure.png`) in the test's temporary folder.

Without /usr/bin/chromium these tests skip, saying so; with PLANTDB_REQUIRE_BROWSER=1 (CI)
they fail instead. Playwright never downloads a browser here.
"""

from __future__ import annotations

import os
import shutil
import threading
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pytest
from werkzeug.serving import make_server

from plantdb.safety import LOCATE_CAUTION
from tests.web.conftest import PASSWORD, add_person_to
from webui import create_app

pytestmark = [pytest.mark.browser, pytest.mark.xdist_group("browser")]

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-background-networking",
    "--disable-gpu",
    "--disable-component-update",
    "--no-first-run",
]
TABLET = {"width": 1024, "height": 768}
WAIT_MS = 15_000


@contextmanager
def _serving(folder: Path, demo_sqlite: Path, people: dict[str, str]) -> Iterator[str]:
    """The app on its own copy of the demo town with these people (name: role), served on a
    free port of 127.0.0.1."""
    path = folder / "demo.sqlite"
    shutil.copyfile(demo_sqlite, path)
    for name, role in people.items():
        add_person_to(f"sqlite:///{path}", name, role)
    app = create_app({"DATABASE_URL": f"sqlite:///{path}"})
    http = make_server("127.0.0.1", 0, app, threaded=True)
    thread = threading.Thread(target=http.serve_forever, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{http.server_port}"
    http.shutdown()
    thread.join(timeout=10)
    http.server_close()
    app.extensions["plantdb.database"].dispose()


@pytest.fixture(scope="module")
def server(tmp_path_factory: pytest.TempPathFactory, demo_sqlite: Path) -> Iterator[str]:
    """The demo town with nobody defined: open to this machine, no sign-in."""
    with _serving(tmp_path_factory.mktemp("browser"), demo_sqlite, {}) as address:
        yield address


@pytest.fixture(scope="module")
def staffed_server(tmp_path_factory: pytest.TempPathFactory, demo_sqlite: Path) -> Iterator[str]:
    """The demo town with a clerk defined: everything needs sign-in."""
    people = {"wren": "clerk"}
    with _serving(tmp_path_factory.mktemp("staffed"), demo_sqlite, people) as address:
        yield address


@pytest.fixture(scope="module")
def browser() -> Iterator[Any]:
    """Debian's Chromium, headless."""
    if not os.access(CHROMIUM, os.X_OK):
        message = f"browser tests need Debian's Chromium at {CHROMIUM}"
        if os.environ.get("PLANTDB_REQUIRE_BROWSER") == "1":
            pytest.fail(f"{message} (PLANTDB_REQUIRE_BROWSER=1)")
        pytest.skip(message)
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        chromium = playwright.chromium.launch(
            executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS
        )
        yield chromium
        chromium.close()


@dataclass
class Visit:
    """A browser tab on the server, with every request it made and every script error."""

    page: Any
    base: str
    requests: list[str] = field(default_factory=list)
    errors: list[str] = field(default_factory=list)

    def open(self, path: str) -> None:
        self.page.goto(self.base + path)

    def problems(self) -> list[str]:
        """What the checks made as the tab closes find: requests that left the server, script
        errors and files that failed to load."""
        found = []
        outside = [url for url in self.requests if not url.startswith(self.base + "/")]
        if outside:
            found.append(f"the page loaded from outside the server: {outside}")
        if self.errors:
            found.append(f"script errors or missing files: {self.errors}")
        return found

    def map_ready(self) -> None:
        self.page.wait_for_selector("#map[data-ready='true']", timeout=WAIT_MS)

    def click_path(self, selector: str) -> None:
        """A real click on a drawn line: on its stroke where nothing else covers it."""
        self.page.wait_for_selector(selector, state="attached", timeout=WAIT_MS)
        spot = self.page.eval_on_selector(
            selector,
            """(path) => {
                for (const f of [0.5, 0.4, 0.6, 0.3, 0.7, 0.2, 0.8, 0.1, 0.9]) {
                    const point = path.getPointAtLength(path.getTotalLength() * f);
                    const screen = point.matrixTransform(path.getScreenCTM());
                    if (document.elementFromPoint(screen.x, screen.y) === path) {
                        return [screen.x, screen.y];
                    }
                }
                return null;
            }""",
        )
        assert spot is not None, f"{selector} is covered everywhere along its length"
        self.page.mouse.click(spot[0], spot[1])


SCREENSHOT = "failure.png"


def save_screenshot(page: Any, folder: Path) -> str:
    """A full-page screenshot of the tab in `folder`; where it is, for the failure message (a
    tab too broken to draw says so rather than hide the failure it would show)."""
    from playwright.sync_api import Error as PlaywrightError

    path = folder / SCREENSHOT
    try:
        page.screenshot(path=str(path), full_page=True)
    except PlaywrightError as error:
        return f"no screenshot: {error.message}"
    return f"screenshot: {path}"


def close_tab(tab: Visit, context: Any, folder: Path, *, test_failed: bool) -> None:
    """Close the tab after its checks; any failure, the test's or the checks', leaves a
    screenshot first."""
    problems = tab.problems()
    shot = save_screenshot(tab.page, folder) if test_failed or problems else ""
    if shot:
        print(shot)  # shown with the failed test's captured output
    context.close()
    assert not problems, f"{'; '.join(problems)} ({shot})"


@contextmanager
def _tab(browser: Any, base: str, request: pytest.FixtureRequest, folder: Path) -> Iterator[Visit]:
    """A fresh tablet-sized tab on `base` that records its requests and script errors."""
    context = browser.new_context(viewport=TABLET)
    context.set_default_timeout(WAIT_MS)
    page = context.new_page()
    tab = Visit(page, base)
    page.on("request", lambda r: tab.requests.append(r.url))
    page.on("pageerror", lambda e: tab.errors.append(str(e)))
    # A content-security-policy violation (an inline style or script the policy refuses) shows
    # as a console error; so does any other script error the page logs. (Failed loads are
    # judged by the response listener below, which knows a 401 or 422 page is on purpose.)
    page.on(
        "console",
        lambda m: (
            tab.errors.append(f"console: {m.text}")
            if m.type == "error" and not m.text.startswith("Failed to load resource")
            else None
        ),
    )
    # A refused page answers 401 or 422 on purpose; anything else a page loads must be found.
    page.on(
        "response",
        lambda r: (
            tab.errors.append(f"{r.status} {r.url}")
            if r.status >= 400 and r.request.resource_type != "document"
            else None
        ),
    )
    yield tab
    # The test's own outcome, kept on the item by the report hook in tests/web/conftest.py.
    call = getattr(request.node, "report_call", None)
    close_tab(tab, context, folder, test_failed=call is not None and call.failed)


@pytest.fixture
def visit(
    browser: Any, server: str, request: pytest.FixtureRequest, tmp_path: Path
) -> Iterator[Visit]:
    """A fresh tablet-sized tab; afterwards, every request must have stayed on the server."""
    with _tab(browser, server, request, tmp_path) as tab:
        yield tab


@pytest.fixture
def staffed_visit(
    browser: Any, staffed_server: str, request: pytest.FixtureRequest, tmp_path: Path
) -> Iterator[Visit]:
    """A tab on the server that needs sign-in, checked as `visit` is."""
    with _tab(browser, staffed_server, request, tmp_path) as tab:
        yield tab


def test_map_shows_the_demo_towns_layers(visit: Visit) -> None:
    visit.open("/")
    visit.map_ready()
    page = visit.page
    assert page.locator("[data-layer='structure']").count() == 35
    assert page.locator("path[data-layer='span']").count() == 34
    assert page.locator(".symbol-closure[data-layer='closure']").count() == 11
    assert page.locator(".symbol-panel[data-layer='panel']").count() > 0
    # Span kinds are told apart by dash pattern, not colour alone.
    aerial = page.locator("path[data-label='QM-S12']")
    assert aerial.get_attribute("stroke-dasharray") == "9 6"
    assert page.locator("path[data-label='QM-S01']").get_attribute("stroke-dasharray") is None
    # Layers can be switched: hide the aerial spans from the layer control.
    page.locator(".leaflet-control-layers").hover()
    page.get_by_label("Spans: aerial").uncheck()
    assert page.locator("path[data-label='QM-S12']").count() == 0
    page.get_by_label("Spans: aerial").check()
    assert page.locator("path[data-label='QM-S12']").count() == 1
    # Search by label flies to the thing and opens its popup.
    page.fill("#map-q", "QM-SC-HH04")
    page.click("#map-search button")
    page.locator("#map-results").get_by_role("button", name="QM-SC-HH04", exact=True).click()
    page.wait_for_selector(".leaflet-popup a[href='/closures/QM-SC-HH04']")


def test_a_click_on_a_closure_opens_its_page(visit: Visit) -> None:
    visit.open("/")
    visit.map_ready()
    page = visit.page
    page.click("[data-layer='closure'][data-label='QM-SC-VLT1']")
    page.get_by_role("link", name="Closure QM-SC-VLT1").click()
    page.wait_for_url("**/closures/QM-SC-VLT1")
    assert page.locator("h1").inner_text() == "Closure QM-SC-VLT1"
    assert page.locator("#tray-1 table.splices tbody tr").count() == 12


def test_show_on_map_opens_on_the_thing(visit: Visit) -> None:
    visit.open("/closures/QM-SC-PED3")
    visit.page.get_by_role("link", name="Show on map").click()
    visit.page.wait_for_url("**/?focus=QM-SC-PED3")
    visit.page.wait_for_selector(".leaflet-popup a[href='/closures/QM-SC-PED3']")


def test_a_range_entered_in_the_form_appears_in_the_sheet(visit: Visit) -> None:
    visit.open("/closures/QM-SC-MH02")
    page = visit.page
    assert page.locator("#tray-3 table.splices").count() == 0  # tray 3 is empty
    form = page.locator("#form-range")
    form.get_by_label("Cable or splitter").first.fill("QM-F288")
    form.locator("#range-a_first").fill("25")
    form.locator("#range-a_last").fill("30")
    form.locator("#range-a_side").select_option("B")
    form.locator("#range-b_cable").fill("QM-F48M")
    form.locator("#range-b_first").fill("25")
    form.locator("#range-b_last").fill("30")
    form.locator("#range-tray").fill("3")
    form.locator("#range-slot").fill("1")
    form.get_by_role("button", name="Record the range").click()
    page.wait_for_url("**/closures/QM-SC-MH02#tray-3")
    assert "Added 6 splices in tray 3." in page.locator(".flash-done").inner_text()
    rows = page.locator("#tray-3 table.splices tbody tr")
    assert rows.count() == 6
    first = rows.first.inner_text()
    # ANSI/TIA-598 colour order (seen; checked against the standard in
    # tests/unit/test_colours.py): strand 25 of 12-per-tube cables is tube 3, fiber 1
    # (arithmetic), so green / blue, named, not only drawn.
    assert "QM-F288:25/B" in first and "QM-F48M:25" in first
    assert "green / blue" in first and "(GR/BL)" in first


def test_a_cut_impact_pick_lists_circuits(visit: Visit) -> None:
    visit.open("/dispatch/")
    visit.map_ready()
    page = visit.page
    visit.click_path("path[data-label='QM-S12']")
    page.get_by_role("link", name="Cut impact of this span").click()
    page.wait_for_selector("#impact-answer")
    answer = page.locator("#impact-answer").inner_text()
    for circuit in ("QM-CD-01", "QM-CD-02", "QM-CD-03"):
        assert circuit in answer
    assert "3 active circuits down" in answer
    assert "Finchmoss Books" in answer
    page.wait_for_selector("#map[data-impact='drawn']")
    assert page.locator("path.impact-target").count() >= 1
    assert page.locator("path.impact-cable").count() >= 1


def test_an_otdr_location_puts_a_pin_on_the_map(visit: Visit) -> None:
    visit.open("/dispatch/")
    page = visit.page
    page.fill("#port", "QM-CO-ODF1:13")
    page.fill("#distance_m", "800")
    page.get_by_role("button", name="Locate").click()
    page.wait_for_selector("#locate-answer")
    visit.map_ready()
    pin = page.locator(".locate-pin")
    pin.wait_for(state="visible")
    assert pin.get_attribute("title", timeout=WAIT_MS).startswith("Break: QM-F48M")
    assert page.locator("path.locate-range").count() == 1
    places = page.locator(".locate-place").all_inner_texts()
    assert sorted(places) == ["QM-MH02", "QM-PED1"]
    caution = page.locator("#locate-answer .caution").inner_text()
    assert LOCATE_CAUTION in " ".join(caution.split())  # plantdb.safety's own text


def test_an_import_shows_its_dry_run_report_then_commits(visit: Visit) -> None:
    header = "closure,tray,slot,a_cable,a_strand,a_side,b_cable,b_strand,b_side,method,loss_db"
    good = "QM-SC-CABN,2,1,QM-F144,3-4,A,QM-D48W,13-14,,fusion,"
    bad = "QM-SC-CABN,2,3,QM-F144,5,A,QM-D48W,99,,fusion,"
    visit.open("/import/")
    page = visit.page
    page.set_input_files(
        "#sheet",
        {
            "name": "cabinet.csv",
            "mimeType": "text/csv",
            "buffer": f"{header}\n{good}\n{bad}\n".encode(),
        },
    )
    page.get_by_role("button", name="Check the sheet").click()
    report = page.locator("#report")
    report.wait_for()
    assert "Check of cabinet.csv (dry run: nothing written)" in report.inner_text()
    problems = page.locator("#report .problems li").all_inner_texts()
    assert problems and all(p.startswith("line 3:") for p in problems)
    assert page.locator("#commit-form").count() == 0
    page.set_input_files(
        "#sheet",
        {"name": "cabinet.csv", "mimeType": "text/csv", "buffer": f"{header}\n{good}\n".encode()},
    )
    page.get_by_role("button", name="Check the sheet").click()
    page.get_by_role("button", name="Commit these 2 splices").click()
    assert "Added 2 splices" in page.locator("#report .good").inner_text()


def test_pages_load_nothing_from_outside_the_server(visit: Visit) -> None:
    for path in (
        "/",
        "/closures/QM-SC-CABN",
        "/cables/QM-D48W",
        "/panels/QM-CO-ODF2",
        "/circuits/QM-CD-03",
        "/dispatch/?port=QM-CO-ODF1:13&distance_m=800",
        "/import/",
        "/closures/QM-SC-CABN/print",
    ):
        visit.open(path)
        visit.page.wait_for_load_state("networkidle")
    assert any(url.endswith("/static/leaflet/leaflet.js") for url in visit.requests)
    assert any("/api/v1/geometry?circuit=QM-CD-03" in url for url in visit.requests)
    # The check that none left the server runs as the tab closes (see the `visit` fixture).


def test_pages_satisfy_the_content_security_policy(visit: Visit) -> None:
    seen: list[str] = []
    visit.page.on("response", lambda r: seen.append(r.headers.get("content-security-policy", "")))
    for path in ("/", "/closures/QM-SC-CABN", "/closures/QM-SC-CABN/print", "/dispatch/"):
        visit.open(path)
        visit.page.wait_for_load_state("networkidle")
    assert seen and all("object-src 'none'" in policy for policy in seen if policy)
    # The printed sheet's swatches are coloured by the linked stylesheet, not inline styles.
    visit.open("/closures/QM-SC-CABN/print")
    colour = visit.page.eval_on_selector(
        ".swatch.tia-1", "node => getComputedStyle(node).backgroundColor"
    )
    assert colour not in ("", "rgba(0, 0, 0, 0)")
    # Violations are collected as console errors; the fixture fails the test on any.


def test_the_keyboard_reaches_the_page_and_the_map(visit: Visit) -> None:
    visit.open("/")
    visit.map_ready()
    page = visit.page
    page.keyboard.press("Tab")
    assert page.evaluate("document.activeElement.textContent") == "Skip to content"
    page.focus("#map-q")
    page.keyboard.type("QM-SC-PL06")
    page.keyboard.press("Enter")
    page.locator("#map-results").get_by_role("button", name="QM-SC-PL06", exact=True).focus()
    page.keyboard.press("Enter")
    link = page.locator(".leaflet-popup a[href='/closures/QM-SC-PL06']")
    link.wait_for()
    link.focus()
    page.keyboard.press("Enter")
    page.wait_for_url("**/closures/QM-SC-PL06")


def test_signing_in_and_out(staffed_visit: Visit) -> None:
    page = staffed_visit.page
    staffed_visit.open("/closures/QM-SC-CABN")
    page.wait_for_url("**/sign-in?next=/closures/QM-SC-CABN")
    assert page.locator("#open-banner").count() == 0
    page.get_by_label("Name").fill("wren")
    page.get_by_label("Password").fill("not the password")
    page.get_by_role("button", name="Sign in").click()
    # The refusal page answers 401 on purpose (the tab's checks pass a refused page).
    assert "not accepted" in page.locator("#sign-in-problem").inner_text()
    page.get_by_label("Password").fill(PASSWORD)
    page.get_by_role("button", name="Sign in").click()
    page.wait_for_url("**/closures/QM-SC-CABN")
    assert page.locator("#signed-in-as").inner_text() == "wren (clerk)"
    cookie = next(c for c in page.context.cookies() if c["name"] == "plantdb_session")
    assert cookie["httpOnly"] and cookie["sameSite"] == "Lax"
    page.get_by_role("button", name="Sign out").click()
    page.wait_for_url("**/sign-in")
    staffed_visit.open("/circuits/")
    page.wait_for_url("**/sign-in?next=/circuits/")
    # Script errors and requests that left the server are checked as the tab closes.


def test_a_check_failing_as_the_tab_closes_leaves_a_screenshot(
    browser: Any, server: str, tmp_path: Path
) -> None:
    context = browser.new_context(viewport=TABLET)
    tab = Visit(context.new_page(), server)
    tab.open("/import/")
    tab.requests.append("https://tiles.invalid/0/0/0.png")  # as a page loading from outside
    with pytest.raises(AssertionError, match="loaded from outside the server") as failed:
        close_tab(tab, context, tmp_path, test_failed=False)
    assert f"screenshot: {tmp_path / SCREENSHOT}" in str(failed.value)
    assert (tmp_path / SCREENSHOT).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    # With nothing found and the test passed, no screenshot is taken.
    context = browser.new_context(viewport=TABLET)
    quiet = Visit(context.new_page(), server)
    (tmp_path / SCREENSHOT).unlink()
    close_tab(quiet, context, tmp_path, test_failed=False)
    assert not (tmp_path / SCREENSHOT).exists()
