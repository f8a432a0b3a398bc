"""Sign-in, sessions, tokens, the open single-user mode, CSRF, headers, the secret key and the
security log, through the Flask test client on both backends."""

from __future__ import annotations

import datetime as dt
import logging
import os
import stat
from collections.abc import Callable
from pathlib import Path

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import select, text

from plantdb.db import Database, run_in_transaction
from plantdb.errors import PlantError
from plantdb.model import WebSession
from plantdb.people import disable_person
from plantdb.security_log import LOGGER_NAME
from plantdb.sign_in import Limits
from tests.web.conftest import add_person_to, page_text, sign_in, token_for
from tests.web.test_forms import ROWS, splice_yard
from webui import create_app
from webui.auth import safe_next
from webui.security import instance_secret

SESSION_COOKIE = "plantdb_session"
OUTSIDE = {"REMOTE_ADDR": "192.0.2.44"}
RULES = (
    "default-src 'self'",
    "object-src 'none'",
    "base-uri 'none'",
    "frame-ancestors 'none'",
    "script-src 'self'",
    "style-src 'self'",
)


@pytest.fixture
def closed(make_app: Callable[..., Flask], db_url: str) -> Flask:
    """The splice yard with one clerk defined: every route needs sign-in."""
    app = make_app(splice_yard())
    add_person_to(db_url, "ann", "clerk")
    return app


def test_with_nobody_defined_every_page_says_it_is_open(client: FlaskClient) -> None:
    for url in ("/", "/closures/QM-SC-CABN", "/circuits/", "/import/", "/no/such/page"):
        page = page_text(client.get(url))
        assert 'id="open-banner"' in page and "nobody" in page, url
        assert "Sign out" not in page
    assert client.get("/api/v1/bundle").status_code == 200
    assert "Nobody is defined on this server" in page_text(client.get("/sign-in"))


def test_with_nobody_defined_only_this_machine_is_answered(client: FlaskClient) -> None:
    page = client.get("/", environ_base=OUTSIDE)
    assert page.status_code == 403 and "answers only its own machine" in page_text(page)
    api = client.get("/api/v1/bundle", environ_base=OUTSIDE)
    assert api.status_code == 403 and "plantdb user add" in api.get_json()["error"]
    assert client.get("/", environ_base={"REMOTE_ADDR": "::1"}).status_code == 200


# What a reverse proxy on this machine adds: its own connection comes from 127.0.0.1.
THROUGH_A_PROXY = [
    {"X-Forwarded-For": "198.51.100.23"},
    {"X-Forwarded-For": "127.0.0.1"},
    {"Forwarded": "for=198.51.100.23;proto=https"},
    {"X-Real-IP": "198.51.100.23"},
    {"X-Forwarded-Host": "plant.example", "X-Forwarded-Proto": "https"},
]


@pytest.mark.parametrize("headers", THROUGH_A_PROXY)
def test_with_nobody_defined_a_request_through_an_undeclared_proxy_is_refused(
    client: FlaskClient, headers: dict[str, str], caplog: pytest.LogCaptureFixture
) -> None:
    with caplog.at_level(logging.INFO, logger=LOGGER_NAME):
        page = client.get("/", headers=headers)
    assert page.status_code == 403 and "answers only its own machine" in page_text(page)
    (line,) = _security_lines(caplog)
    assert 'from="127.0.0.1"' in line and "came through a proxy" in line
    api = client.get("/api/v1/bundle", headers=headers)
    assert api.status_code == 403 and "plantdb user add" in api.get_json()["error"]
    assert client.get("/api/v1/bundle").status_code == 200  # the same machine, directly


def test_with_nobody_defined_behind_a_declared_proxy_the_forwarded_client_decides(
    make_app: Callable[..., Flask],
) -> None:
    client = make_app(splice_yard(), BEHIND_PROXY=1).test_client()
    outside = {"X-Forwarded-For": "198.51.100.23", "X-Forwarded-Proto": "https"}
    for url in ("/", "/api/v1/bundle"):
        assert client.get(url, headers=outside).status_code == 403, url
        here = {"X-Forwarded-For": "127.0.0.1"}
        assert client.get(url, headers=here).status_code == 200, url
        # A client's own X-Forwarded-For is kept, the proxy's address for it added last: only
        # the last one is trusted.
        forged = {"X-Forwarded-For": "127.0.0.1, 198.51.100.23"}
        assert client.get(url, headers=forged).status_code == 403, url
        # A proxy that names its client only in a header ProxyFix does not read.
        unread = {"Forwarded": "for=198.51.100.23"}
        assert client.get(url, headers=unread).status_code == 403, url
        assert client.get(url).status_code == 200, url  # straight from this machine


def test_once_someone_exists_everything_needs_a_person(closed: Flask) -> None:
    client = closed.test_client()
    page = client.get("/closures/WC-1?x=1")
    assert page.status_code == 302
    assert page.headers["Location"] == "/sign-in?next=/closures/WC-1?x%3D1"
    api = client.get("/api/v1/bundle")
    assert api.status_code == 401 and "Bearer" in api.get_json()["error"]
    assert api.headers["WWW-Authenticate"].lower().startswith("bearer")
    assert client.post("/api/v1/splices", json=ROWS).status_code == 401
    assert client.get("/api/v1/openapi.json").status_code == 401
    for url in ("/static/css/plantdb.css", "/assets/colours.css", "/static/leaflet/leaflet.js"):
        with client.get(url) as response:
            assert response.status_code == 200, url
    form = page_text(client.get("/sign-in"))
    assert 'id="sign-in-form"' in form and 'id="open-banner"' not in form
    # Nobody defined is no longer "open": a request from elsewhere is asked to sign in.
    assert client.get("/", environ_base=OUTSIDE).status_code == 302


def test_sign_in_makes_a_new_server_side_session_and_sign_out_ends_it(
    closed: Flask, db_url: str
) -> None:
    client = closed.test_client()
    client.get("/sign-in")
    before = client.get_cookie(SESSION_COOKIE)
    assert before is not None
    wrong = sign_in(client, "ann", "not her password")
    assert wrong.status_code == 401 and "not accepted" in page_text(wrong)
    answer = sign_in(client, "ann")
    assert answer.status_code == 303 and answer.headers["Location"] == "/"
    cookie = answer.headers["Set-Cookie"]
    assert "HttpOnly" in cookie and "SameSite=Lax" in cookie and "Secure" not in cookie
    after = client.get_cookie(SESSION_COOKIE)
    assert after is not None and after.value != before.value
    page = page_text(client.get("/closures/WC-1"))
    assert "Signed in as ann (clerk)." in page and 'id="signed-in-as"' in page
    copy = closed.test_client()
    copy.set_cookie(SESSION_COOKIE, after.value)
    assert copy.get("/closures/WC-1").status_code == 200  # the same cookie elsewhere
    assert client.post("/sign-out").status_code == 303
    assert client.get("/closures/WC-1").status_code == 302
    assert copy.get("/closures/WC-1").status_code == 302  # ended on the server, not only here
    database = Database(db_url)
    with database.read() as session:
        assert session.execute(text("SELECT revoked FROM web_session")).scalar_one()
    database.dispose()


def test_cookies_are_secure_over_tls_or_when_told(
    closed: Flask, make_app: Callable[..., Flask]
) -> None:
    client = closed.test_client()
    # Over TLS the CSRF check also wants the browser's same-origin Referer.
    referer = {"Referer": "https://plant.example/sign-in"}
    answer = sign_in(client, "ann", base_url="https://plant.example", headers=referer)
    assert answer.status_code == 303
    assert "Secure" in answer.headers["Set-Cookie"]
    assert "max-age=31536000" in answer.headers["Strict-Transport-Security"]
    forced = make_app(FORCE_SECURE_COOKIES=True).test_client()
    assert "Secure" in sign_in(forced, "ann").headers["Set-Cookie"]


def test_behind_a_proxy_the_forwarded_client_is_logged_and_limited(
    make_app: Callable[..., Flask], db_url: str, caplog: pytest.LogCaptureFixture
) -> None:
    slow = Limits(first_wait=dt.timedelta(minutes=1))
    app = make_app(splice_yard(), BEHIND_PROXY=1, SIGN_IN_LIMITS=slow)
    add_person_to(db_url, "ann", "clerk")
    add_person_to(db_url, "vic", "viewer")
    first = {"X-Forwarded-For": "203.0.113.9"}
    second = {"X-Forwarded-For": "203.0.113.10"}
    client = app.test_client()
    with caplog.at_level(logging.INFO, logger=LOGGER_NAME):
        for _ in range(3):
            assert sign_in(client, "ann", "wrong guess 1", headers=first).status_code == 401
        assert sign_in(client, "ann", headers=first).status_code == 429
        assert sign_in(client, "vic", headers=second).status_code == 303
        refused = client.post("/circuits/W-CKT/status", data={"status": "retired"}, headers=second)
    assert refused.status_code == 403
    lines = _security_lines(caplog)
    assert len(lines) == 6
    assert all('from="203.0.113.9"' in line for line in lines[:4]), lines
    assert all('from="203.0.113.10"' in line for line in lines[4:]), lines
    assert not any("127.0.0.1" in line for line in lines)
    # The limit is the forwarded client's: another client through the same proxy gets in.
    assert sign_in(app.test_client(), "ann", headers=second).status_code == 303
    # Without --behind-proxy the headers are ignored: every client is the proxy's address.
    plain = make_app(SIGN_IN_LIMITS=slow).test_client()
    elsewhere = {"X-Forwarded-For": "203.0.113.11"}
    for _ in range(3):
        assert sign_in(plain, "ann", "wrong guess 2", headers=elsewhere).status_code == 401
    assert sign_in(plain, "ann", headers={"X-Forwarded-For": "203.0.113.12"}).status_code == 429


def test_behind_a_proxy_cookies_are_secure_when_it_says_https(
    closed: Flask, make_app: Callable[..., Flask]
) -> None:
    proxied = make_app(BEHIND_PROXY=1).test_client()
    # Over TLS the CSRF check also wants the browser's same-origin Referer.
    tls = {"X-Forwarded-Proto": "https", "Referer": "https://localhost/sign-in"}
    answer = sign_in(proxied, "ann", headers=tls)
    assert answer.status_code == 303
    assert "Secure" in answer.headers["Set-Cookie"]
    assert "max-age=31536000" in answer.headers["Strict-Transport-Security"]
    plain = {"X-Forwarded-Proto": "http"}
    answer = sign_in(proxied, "ann", headers=plain)
    assert answer.status_code == 303 and "Secure" not in answer.headers["Set-Cookie"]
    # Without --behind-proxy the header is ignored: the request came over plain HTTP.
    answer = sign_in(closed.test_client(), "ann", headers={"X-Forwarded-Proto": "https"})
    assert answer.status_code == 303 and "Secure" not in answer.headers["Set-Cookie"]
    assert "Strict-Transport-Security" not in answer.headers


def test_after_sign_in_only_a_path_on_this_server_is_followed(closed: Flask) -> None:
    with closed.test_request_context():
        assert safe_next("/circuits/W-CKT?x=1") == "/circuits/W-CKT?x=1"
        for bad in ("https://elsewhere.example/", "//elsewhere.example/x", "/\\elsewhere", ""):
            assert safe_next(bad) == "/"
    client = closed.test_client()
    data = {"name": "ann", "password": "kittiwake cliff 41", "next": "//elsewhere.example/"}
    assert client.post("/sign-in", data=data).headers["Location"] == "/"


def test_disabling_a_person_ends_their_sessions_and_tokens_at_once(
    closed: Flask, db_url: str
) -> None:
    client = closed.test_client()
    assert sign_in(client, "ann").status_code == 303
    token = token_for(db_url, "ann")
    bearer = {"Authorization": f"Bearer {token}"}
    assert client.get("/closures/WC-1").status_code == 200
    assert closed.test_client().get("/api/v1/bundle", headers=bearer).status_code == 200
    database = Database(db_url)
    run_in_transaction(database, lambda session: disable_person(session, "ann"))
    database.dispose()
    assert client.get("/closures/WC-1").status_code == 302
    assert closed.test_client().get("/api/v1/bundle", headers=bearer).status_code == 401
    assert sign_in(closed.test_client(), "ann").status_code == 401


def test_an_idle_session_ends(closed: Flask, db_url: str) -> None:
    client = closed.test_client()
    assert sign_in(client, "ann").status_code == 303
    assert client.get("/circuits/").status_code == 200
    database = Database(db_url)
    with database.writing() as session, session.begin():
        for stored in session.scalars(select(WebSession)):
            stored.last_seen -= dt.timedelta(minutes=31)
    database.dispose()
    assert client.get("/circuits/").status_code == 302


def test_failed_sign_ins_slow_down_one_address_but_not_another(
    closed: Flask, make_app: Callable[..., Flask]
) -> None:
    # A minute's first wait, so that the slowest machine cannot outlast it between two tries.
    slow = make_app(SIGN_IN_LIMITS=Limits(first_wait=dt.timedelta(minutes=1)))
    client = slow.test_client()
    for _ in range(3):
        assert sign_in(client, "ann", "wrong guess 1").status_code == 401
    slowed = sign_in(client, "ann")  # the right password, but too soon from here
    assert slowed.status_code == 429
    assert int(slowed.headers["Retry-After"]) >= 1
    assert "Too many failed tries" in page_text(slowed)
    elsewhere = slow.test_client()
    assert sign_in(elsewhere, "ann", environ_base={"REMOTE_ADDR": "10.9.8.7"}).status_code == 303


def test_api_tokens_read_and_write_without_csrf(closed: Flask, db_url: str) -> None:
    token = token_for(db_url, "ann")
    client = closed.test_client()
    bearer = {"Authorization": f"Bearer {token}"}
    assert client.get("/api/v1/bundle", headers=bearer).status_code == 200
    answer = client.post("/api/v1/splices", json=ROWS, headers=bearer)
    assert answer.status_code == 201, answer.get_json()
    wrong = client.get("/api/v1/bundle", headers={"Authorization": f"Bearer {token}x"})
    assert wrong.status_code == 401
    assert client.get_cookie(SESSION_COOKIE) is None  # a token makes no session


def test_forms_need_their_csrf_token(closed: Flask) -> None:
    client = closed.test_client()
    form = {"status": "active"}
    refused = client.post("/sign-in", data={"name": "ann", "password": "x" * 9}, csrf=False)
    assert refused.status_code == 400 and "CSRF" in page_text(refused)
    assert sign_in(client, "ann").status_code == 303
    clerk_form = {"form": "one", "a_cable": "W-A", "a_strand": "2", "b_cable": "W-B",
                  "b_strand": "2", "tray": "1", "slot": "2"}  # fmt: skip
    assert client.post("/closures/WC-1/splices", data=clerk_form, csrf=False).status_code == 400
    assert client.post("/closures/WC-1/splices", data=clerk_form).status_code == 303
    # The API from a signed-in browser needs the token in a header.
    assert client.post("/api/v1/splices", json=ROWS[1:], csrf=False).status_code == 400
    assert client.post("/api/v1/splices", json=ROWS[1:]).status_code == 201
    assert client.post("/circuits/W-CKT/status", data=form, csrf=False).status_code == 400


def test_with_nobody_defined_forms_still_need_csrf_and_the_api_json(
    make_app: Callable[..., Flask],
) -> None:
    client = make_app(splice_yard()).test_client()
    form = {"status": "planned"}
    assert client.post("/circuits/W-CKT/status", data=form, csrf=False).status_code == 400
    assert client.post("/circuits/W-CKT/status", data=form).status_code == 303
    posted = client.post("/api/v1/splices", data="[]", content_type="text/plain")
    assert posted.status_code == 400 and "must be JSON" in posted.get_json()["error"]


def test_every_answer_carries_the_security_headers(closed: Flask) -> None:
    client = closed.test_client()
    sign_in(client, "ann")
    for url in ("/", "/closures/WC-1/print", "/api/v1/bundle", "/no/such", "/sign-in",
                "/static/css/plantdb.css"):  # fmt: skip
        with client.get(url) as response:
            headers = response.headers
        policy = headers["Content-Security-Policy"]
        for rule in RULES:
            assert rule in policy, (url, rule)
        assert "unsafe-inline" not in policy
        assert headers["X-Content-Type-Options"] == "nosniff", url
        assert headers["Referrer-Policy"] == "same-origin", url
    printed = page_text(client.get("/closures/WC-1/print"))
    assert "<style>" not in printed and "style=" not in printed
    assert '<link rel="stylesheet" href="/assets/print-sheet.css">' in printed


def test_the_secret_key_comes_from_the_environment_or_the_instance_folder(
    db_url: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("PLANTDB_SECRET_KEY", "k" * 64)
    from_environment = create_app({"DATABASE_URL": db_url})
    assert from_environment.secret_key == "k" * 64
    from_environment.extensions["plantdb.database"].dispose()
    monkeypatch.delenv("PLANTDB_SECRET_KEY")
    folder = tmp_path / "instance"
    first = create_app({"DATABASE_URL": db_url, "INSTANCE_PATH": str(folder)})
    second = create_app({"DATABASE_URL": db_url, "INSTANCE_PATH": str(folder)})
    key = folder / "secret_key"
    assert first.secret_key == second.secret_key == key.read_text().strip()
    assert len(str(first.secret_key)) == 64
    assert stat.S_IMODE(key.stat().st_mode) == 0o600
    assert [p.name for p in folder.iterdir()] == ["secret_key"]
    for app in (first, second):
        app.extensions["plantdb.database"].dispose()
    os.chmod(key, 0o644)
    with pytest.raises(PlantError, match="can be read by others; run `chmod 600"):
        instance_secret(folder)


def _security_lines(caplog: pytest.LogCaptureFixture) -> list[str]:
    return [r.getMessage() for r in caplog.records if r.name == LOGGER_NAME]


def test_sign_ins_and_refusals_are_logged_one_line_each(
    closed: Flask, db_url: str, caplog: pytest.LogCaptureFixture
) -> None:
    add_person_to(db_url, "vic", "viewer")
    client = closed.test_client()
    forged = 'mallory\nsign-in at=2026-01-01T00:00:00Z who="ann"'
    with caplog.at_level(logging.INFO, logger=LOGGER_NAME):
        sign_in(client, forged, "whatever it is")
        sign_in(client, "vic")
        client.post("/circuits/W-CKT/status", data={"status": "retired"})
    lines = _security_lines(caplog)
    assert len(lines) == 3 and all("\n" not in line for line in lines)
    failed, success, refused = lines
    assert failed.startswith("sign-in failed at=") and failed.split(" at=")[1].split(" ")[
        0
    ].endswith("Z")
    assert 'who="mallory\\nsign-in at=2026-01-01T00:00:00Z who=\\"ann\\""' in failed
    assert 'from="127.0.0.1"' in failed and 'reason="unknown name"' in failed
    assert success.startswith("sign-in at=") and 'who="vic"' in success
    assert refused.startswith("refused at=") and 'who="vic"' in refused
    assert 'what="POST /circuits/W-CKT/status"' in refused and 'status="403"' in refused
    levels = [r.levelno for r in caplog.records if r.name == LOGGER_NAME]
    assert levels == [logging.WARNING, logging.INFO, logging.WARNING]


def test_a_page_without_a_session_is_logged_as_refused(
    closed: Flask, caplog: pytest.LogCaptureFixture
) -> None:
    with caplog.at_level(logging.INFO, logger=LOGGER_NAME):
        closed.test_client().get("/api/v1/bundle?x=%0Aforged")
    (line,) = _security_lines(caplog)
    assert 'who="anonymous"' in line and 'status="401"' in line
    assert "\n" not in line
