"""`plantdb serve`: starts the app under waitress on the asked address, refuses a database it
cannot serve, and keeps the core package free of the web app."""

from __future__ import annotations

import html
import json
import re
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner
from flask import Flask

from plantdb.cli import cli

PASSWORD = "bittern reed 88"


@pytest.fixture
def served(monkeypatch: pytest.MonkeyPatch) -> Iterator[dict[str, Any]]:
    """Stands in for waitress.serve: records what it was asked to serve instead of blocking."""
    import waitress

    calls: dict[str, Any] = {}

    def serve(app: Any, **options: Any) -> None:
        calls["app"] = app
        calls.update(options)

    monkeypatch.setattr(waitress, "serve", serve)
    yield calls
    if "app" in calls:  # its database connections, closed rather than left to the collector
        calls["app"].extensions["plantdb.database"].dispose()


def test_serve_runs_the_app_under_waitress(db_url: str, served: dict[str, Any]) -> None:
    result = CliRunner().invoke(cli, ["serve", "--db", db_url])
    assert result.exit_code == 0, result.output
    assert isinstance(served["app"], Flask)
    assert (served["host"], served["port"]) == ("127.0.0.1", 5000)  # the contract's default
    assert "serving" in result.output and "http://127.0.0.1:5000/" in result.output
    app: Flask = served["app"]
    assert app.config["TILE_URL"] is None  # no base map, no internet needed
    client = app.test_client()
    assert client.get("/api/v1/map?bbox=0,0,1,1").get_json()["features"] == []
    assert "The record holds no structures yet" in client.get("/").get_data(as_text=True)


def test_serve_options(
    db_url: str, served: dict[str, Any], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("PLANTDB_TILE_URL", "https://tiles.invalid/{z}/{x}/{y}.png")
    added = CliRunner().invoke(
        cli, ["user", "add", "ann", "--role", "admin", "--db", db_url], input=PASSWORD + "\n"
    )
    assert added.exit_code == 0, added.output
    argv = ["serve", "--db", db_url, "--host", "0.0.0.0", "--port", "8123", "--read-only"]
    result = CliRunner().invoke(cli, [*argv, "--behind-proxy", "--json"])
    assert result.exit_code == 0, result.output
    assert json.loads(result.output) == {
        "serving": "http://0.0.0.0:8123/",
        "database": db_url,
        "read_only": True,
        "behind_proxy": True,
    }
    assert (served["host"], served["port"]) == ("0.0.0.0", 8123)
    app: Flask = served["app"]
    assert app.config["READ_ONLY"] is True and app.config["BEHIND_PROXY"] == 1
    assert app.config["TILE_URL"] == "https://tiles.invalid/{z}/{x}/{y}.png"
    # The base map's host is the one outside source the pages may load images from.
    policy = app.test_client().get("/sign-in").headers["Content-Security-Policy"]
    assert "img-src 'self' https://tiles.invalid;" in policy


def test_with_nobody_defined_serve_listens_on_this_machine_only(
    db_url: str, served: dict[str, Any]
) -> None:
    for host in ("0.0.0.0", "192.0.2.10", "::", "plant.example"):
        result = CliRunner().invoke(cli, ["serve", "--db", db_url, "--host", host])
        assert result.exit_code == 1, host
        assert f"plantdb: --host {host}: nobody is defined" in result.stderr
        assert "listens on 127.0.0.1 only until a person is added" in result.stderr
        assert "app" not in served
    for host in ("127.0.0.1", "localhost", "::1", "127.0.0.2"):
        result = CliRunner().invoke(cli, ["serve", "--db", db_url, "--host", host])
        assert result.exit_code == 0, (host, result.output)
        assert served["host"] == host
        served.pop("app").extensions["plantdb.database"].dispose()


def test_serve_refuses_a_database_it_cannot_serve(tmp_path: Path, served: dict[str, Any]) -> None:
    url = f"sqlite:///{tmp_path / 'empty.sqlite'}"
    result = CliRunner().invoke(cli, ["serve", "--db", url])
    assert result.exit_code == 1
    assert "is not initialised; run `plantdb init` first" in result.stderr
    assert "app" not in served
    bad_port = CliRunner().invoke(cli, ["serve", "--db", url, "--port", "70000"])
    assert bad_port.exit_code == 2


def test_core_package_does_not_import_the_web_app() -> None:
    code = "import sys, plantdb.cli; print('webui' in sys.modules, 'flask' in sys.modules)"
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stdout.split() == ["False", "False"]


def test_the_tile_url_option_reaches_the_maps_of_the_pages(
    db_url: str, served: dict[str, Any], monkeypatch: pytest.MonkeyPatch
) -> None:
    """--tile-url (over $PLANTDB_TILE_URL) and --tile-attribution end in the map's settings."""
    monkeypatch.setenv("PLANTDB_TILE_URL", "https://other.invalid/{z}/{x}/{y}.png")
    tiles = "https://tiles.invalid/{z}/{x}/{y}.png"
    argv = ["serve", "--db", db_url, "--tile-url", tiles, "--tile-attribution", "© Tile Guild"]
    result = CliRunner().invoke(cli, argv)
    assert result.exit_code == 0, result.output
    page = served["app"].test_client().get("/").get_data(as_text=True)
    found = re.search(r'data-map="plant" data-settings=\'([^\']*)\'', page)
    assert found is not None
    settings = json.loads(html.unescape(found.group(1)))
    assert (settings["tile_url"], settings["tile_attribution"]) == (tiles, "© Tile Guild")
