"""Fixtures for the web tests: apps on the demo town (read-only tests share one per backend)
and on small hand-built networks (tests that write get a fresh database each)."""

from __future__ import annotations

import re
import shutil
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient

from plantdb.db import Database, run_in_transaction
from plantdb.people import add_person, add_token
from plantdb.records.bundle import load_bundle
from seed_data.demo_town import build_demo_bundle
from tests.conftest import BACKENDS, migrated_postgres_schema
from tests.networks import Bundle
from webui import create_app


def load_into(url: str, data: dict[str, Any]) -> None:
    """Load a bundle into the database at `url`."""
    database = Database(url)
    try:
        run_in_transaction(database, lambda session: load_bundle(session, data))
    finally:
        database.dispose()


@pytest.fixture(scope="session")
def demo_sqlite(tmp_path_factory: pytest.TempPathFactory, sqlite_template: Path) -> Path:
    """A SQLite file holding the demo town, built once per test session (copy it to write)."""
    path = tmp_path_factory.mktemp("demo") / "demo.sqlite"
    shutil.copyfile(sqlite_template, path)
    load_into(f"sqlite:///{path}", build_demo_bundle())
    return path


def _demo_postgres() -> Iterator[str]:
    with migrated_postgres_schema("plantdb_webdemo") as url:
        load_into(url, build_demo_bundle())
        yield url


@pytest.fixture(scope="session")
def demo_postgres() -> Iterator[str]:
    """A PostgreSQL schema of this worker's own holding the demo town (never written to)."""
    yield from _demo_postgres()


@pytest.fixture(scope="session", params=BACKENDS)
def demo_url(request: pytest.FixtureRequest) -> str:
    """The URL of a database holding the demo town; tests using it must only read."""
    if request.param == "sqlite":
        path: Path = request.getfixturevalue("demo_sqlite")
        return f"sqlite:///{path}"
    url: str = request.getfixturevalue("demo_postgres")
    return url


_CSRF_META = re.compile(r'<meta name="csrf-token" content="([^"]+)">')


class CsrfClient(FlaskClient):
    """A test client that sends a form's CSRF token as a browser does: read from a page of the
    app (its `csrf-token` meta tag) just before the POST. `csrf=False` on a POST sends none."""

    def open(self, *args: Any, **kwargs: Any) -> Any:
        send_token = kwargs.pop("csrf", True)
        if kwargs.get("method") == "POST" and send_token and not _has_bearer(kwargs):
            where = {k: kwargs[k] for k in ("base_url", "environ_base") if k in kwargs}
            if "json" in kwargs:
                headers = dict(kwargs.get("headers") or {})
                headers["X-CSRFToken"] = self.csrf_token(**where)
                kwargs["headers"] = headers
            else:
                data = kwargs.get("data")
                data = {} if data is None else data
                if isinstance(data, dict) and "csrf_token" not in data:
                    kwargs["data"] = {**data, "csrf_token": self.csrf_token(**where)}
        return super().open(*args, **kwargs)

    def csrf_token(self, **where: Any) -> str:
        """The CSRF token of this client's session, as the sign-in page carries it."""
        page = super().open("/sign-in", method="GET", **where).get_data(as_text=True)
        found = _CSRF_META.search(page)
        assert found, "the page carries no csrf-token meta tag"
        return found.group(1)


def _has_bearer(kwargs: dict[str, Any]) -> bool:
    headers = dict(kwargs.get("headers") or {})
    return str(headers.get("Authorization", "")).lower().startswith("bearer ")


def app_config(url: str, **config: Any) -> dict[str, Any]:
    """The config of an app under test on the database at `url`."""
    return {"DATABASE_URL": url, "TESTING": True, **config}


def new_app(url: str, **config: Any) -> Flask:
    """An app under test whose client sends CSRF tokens as a browser would."""
    app = create_app(app_config(url, **config))
    app.test_client_class = CsrfClient
    return app


@pytest.fixture(scope="session")
def demo_app(demo_url: str) -> Iterator[Flask]:
    """An app on the demo town, shared by the read-only tests of one backend."""
    app = new_app(demo_url)
    yield app
    app.extensions["plantdb.database"].dispose()


@pytest.fixture
def client(demo_app: Flask) -> FlaskClient:
    """A test client of the demo-town app (read-only tests)."""
    return demo_app.test_client()


@pytest.fixture
def make_app(db_url: str) -> Iterator[Callable[..., Flask]]:
    """Build an app on a fresh database after loading a bundle into it (tests that write)."""
    apps: list[Flask] = []

    def build(bundle: Bundle | dict[str, Any] | None = None, **config: Any) -> Flask:
        if bundle is not None:
            load_into(db_url, bundle.data if isinstance(bundle, Bundle) else bundle)
        app = new_app(db_url, **config)
        apps.append(app)
        return app

    yield build
    for app in apps:
        app.extensions["plantdb.database"].dispose()


PASSWORD = "kittiwake cliff 41"


def add_person_to(url: str, name: str, role: str, password: str = PASSWORD) -> None:
    """Add a person to the database at `url` (from then on, the app needs sign-in)."""
    database = Database(url)
    try:
        run_in_transaction(database, lambda session: add_person(session, name, role, password))
    finally:
        database.dispose()


def token_for(url: str, name: str) -> str:
    """A new API token for the person."""
    database = Database(url)
    try:
        return run_in_transaction(database, lambda session: add_token(session, name))
    finally:
        database.dispose()


def sign_in(client: FlaskClient, name: str, password: str = PASSWORD, **extra: Any) -> Any:
    """Sign the client in through the sign-in form; the answer (303 when it worked)."""
    return client.post("/sign-in", data={"name": name, "password": password}, **extra)


def page_text(response: Any) -> str:
    """A response body as text."""
    return str(response.get_data(as_text=True))


@pytest.hookimpl(wrapper=True, tryfirst=True)
def pytest_runtest_makereport(item: pytest.Item, call: pytest.CallInfo[None]) -> Any:
    """Keep each phase's report on the test item, so a browser fixture can tell a failure."""
    report = yield
    setattr(item, f"report_{report.when}", report)
    return report
