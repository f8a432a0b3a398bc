"""The API against its own description: schemathesis reads /api/v1/openapi.json, generates
requests for every operation (valid and invalid), sends them in-process to the Flask app, and
checks each answer: never a server error, a status and a body the description allows.

It runs on the demo town (a writable copy per backend: POST /api/v1/splices may record what it
generates), with a bounded, derandomized number of examples so it stays under a minute.
"""

from __future__ import annotations

import shutil
from collections.abc import Callable, Iterable, Iterator
from pathlib import Path
from typing import Any

import pytest
import schemathesis
from flask import Flask
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from schemathesis import GenerationMode
from schemathesis.specs.openapi.checks import positive_data_acceptance

from seed_data.demo_town import build_demo_bundle
from tests.conftest import BACKENDS, migrated_postgres_schema
from tests.web.conftest import load_into, new_app
from webui.openapi import openapi_document


def _writable_demo_postgres() -> Iterator[str]:
    """A PostgreSQL schema of this module's own holding the demo town (written to)."""
    with migrated_postgres_schema("plantdb_schemathesis") as url:
        load_into(url, build_demo_bundle())
        yield url


@pytest.fixture(scope="module", params=BACKENDS)
def described_app(
    request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory
) -> Iterator[Flask]:
    """An app on a writable copy of the demo town."""
    if request.param == "sqlite":
        demo: Path = request.getfixturevalue("demo_sqlite")
        path = tmp_path_factory.mktemp("schemathesis") / "demo.sqlite"
        shutil.copyfile(demo, path)
        app = new_app(f"sqlite:///{path}")
        yield app
        app.extensions["plantdb.database"].dispose()
        return
    for url in _writable_demo_postgres():
        app = new_app(url)
        yield app
        app.extensions["plantdb.database"].dispose()


def from_loopback(app: Flask) -> Callable[..., Iterable[bytes]]:
    """The app as a client on this machine reaches it (schemathesis' WSGI client names no
    address, and with nobody defined the app answers only its own machine)."""

    def wsgi(environ: dict[str, Any], start_response: Callable[..., Any]) -> Iterable[bytes]:
        environ.setdefault("REMOTE_ADDR", "127.0.0.1")
        return app(environ, start_response)

    return wsgi


@pytest.fixture
def api_schema(described_app: Flask) -> schemathesis.BaseSchema:
    """The API's description, read from the app itself; requests go to the app in-process."""
    return schemathesis.openapi.from_wsgi("/api/v1/openapi.json", from_loopback(described_app))


# Every operation the description names (read without an app: the document is code).
OPERATIONS = [
    (method.upper(), path) for path, item in openapi_document()["paths"].items() for method in item
]


def _recorded_splice_row() -> dict[str, Any]:
    """The demo town's first splice as a splice row: entered again it is "already recorded"."""
    splice = build_demo_bundle()["splices"][0]
    row: dict[str, Any] = {
        "closure": splice["closure"],
        "tray": splice["tray"],
        "slot": splice["slot"],
    }
    for side in ("a", "b"):
        cable, _, point = splice[side].partition(":")
        strand, _, piece = point.partition("/")
        row |= {f"{side}_cable": cable, f"{side}_strand": strand, f"{side}_side": piece or None}
    return row


# Requests that name things of the demo town, so the documents themselves (not only the
# refusals) are checked against the description.
KNOWN: dict[str, dict[str, Any]] = {
    "/trace": {"query": {"circuit": "QM-BB-01"}},
    "/loss": {"query": {"circuit": "QM-BB-01"}},
    "/live": {"query": {"closure": "QM-SC-MH02"}},
    "/impact": {"query": {"span": "QM-S12"}},
    "/locate": {"query": {"port": "QM-CO-ODF1:13", "distance_m": 800}},
    "/map": {"query": {"bbox": "-102,46,-101,47"}},
    "/geometry": {"query": {"cable": "QM-F288"}},
    "/search": {"query": {"q": "QM-SC"}},
    "/bundle": {},
    "/splices": {"query": {"dry_run": "true"}, "body": [_recorded_splice_row()]},
}


# Every check but "a request the description allows must be accepted": what OpenAPI cannot say
# about parameters (exactly one of port, fiber or circuit; a box's south below its north) and
# the record's own rules (an unknown closure in a splice row is 422, as the contract says)
# rightly refuse requests that are valid by the description alone.
@pytest.mark.parametrize(("method", "path"), OPERATIONS)
@settings(
    max_examples=25,
    derandomize=True,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
@given(data=st.data())
def test_every_operation_answers_as_described(
    api_schema: schemathesis.BaseSchema, method: str, path: str, data: st.DataObject
) -> None:
    # schemathesis' own pytest plugin predates this pytest, so its strategies are drawn here.
    operation = api_schema[path][method]
    generated = st.one_of(
        operation.as_strategy(GenerationMode.POSITIVE, **KNOWN[path]),
        operation.as_strategy(GenerationMode.POSITIVE),
        operation.as_strategy(GenerationMode.NEGATIVE),
    )
    case = data.draw(generated, label="case")
    case.call_and_validate(excluded_checks=[positive_data_acceptance])
