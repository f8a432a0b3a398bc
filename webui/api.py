"""The JSON API under /api/v1/: the same documents as the command line's `--json`."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, jsonify, request, url_for
from sqlalchemy.orm import Session
from werkzeug.exceptions import BadRequest

from plantdb.records.bundle import dump_bundle
from plantdb.records.sheet_files import sheet_from_items
from plantdb.records.sheet_import import import_sheet
from plantdb.records.splicing import SpliceReport
from plantdb.trace.dispatch import impact_document, live_document, locate_document
from plantdb.trace.loss import LossOptions
from plantdb.trace.service import loss_report, trace_document
from webui import params
from webui.access import writes
from webui.openapi import openapi_document
from webui.store import reading, write

blueprint = Blueprint("api", __name__, url_prefix="/api/v1")

TRUE_WORDS = frozenset({"1", "true", "yes", "on"})


@blueprint.route("/")
def index() -> Any:
    """Where the API's description is."""
    return jsonify({"openapi": url_for("api.openapi", _external=False), "version": 1})


@blueprint.route("/openapi.json")
def openapi() -> Any:
    """The OpenAPI 3.1 description of this API."""
    return jsonify(openapi_document())


@blueprint.route("/trace")
def trace() -> Any:
    """The trace from a port, a strand or a circuit."""
    kind, value = params.one_of(request.args, ["port", "fiber", "circuit"])
    with reading() as session:
        return jsonify(trace_document(session, kind, value))


def loss_options(args: Any) -> LossOptions:
    """Wavelengths, allowance overrides and a margin from the query string."""
    return LossOptions(
        params.wavelengths(args),
        params.number(args, "splice_max_db"),
        params.number(args, "splice_typical_db"),
        params.number(args, "connector_max_db"),
        params.number(args, "connector_typical_db"),
        params.number(args, "margin_db") or 0.0,
    )


@blueprint.route("/loss")
def loss() -> Any:
    """The expected loss of a circuit or of every path from a port."""
    kind, value = params.one_of(request.args, ["circuit", "port"])
    options = loss_options(request.args)
    with reading() as session:
        return jsonify(loss_report(session, kind, value, options))


@blueprint.route("/live")
def live() -> Any:
    """What is live through a closure."""
    closure = params.required_text(request.args, "closure")
    with reading() as session:
        return jsonify(live_document(session, closure))


@blueprint.route("/impact")
def impact() -> Any:
    """What a cut of a span or at a structure takes down."""
    kind, value = params.one_of(request.args, ["span", "structure"])
    with reading() as session:
        return jsonify(impact_document(session, **{kind: value}))


@blueprint.route("/locate")
def locate() -> Any:
    """Where an OTDR distance from a port falls on the plant."""
    port = params.required_text(request.args, "port")
    distance = params.number(request.args, "distance_m", required=True)
    assert distance is not None
    wavelength = params.whole(request.args, "wavelength")
    otdr_index = params.number(request.args, "otdr_index")
    with reading() as session:
        return jsonify(locate_document(session, port, distance, wavelength, otdr_index))


@blueprint.route("/bundle")
def bundle() -> Any:
    """The whole record as a bundle (what `plantdb dump` writes)."""
    with reading() as session:
        return jsonify(dump_bundle(session))


@blueprint.route("/splices", methods=["POST"])
@writes("clerk")
def splices() -> Any:
    """Record a JSON list of splice rows (the splice sheet's columns): all of them or none."""
    items = request.get_json(silent=True)
    if items is None:
        raise BadRequest("the body must be JSON: a list of splice rows with the sheet's columns")
    dry_run = (params.text(request.args, "dry_run") or "").lower() in TRUE_WORDS
    sheet = sheet_from_items(items, "splices")

    def work(session: Session) -> SpliceReport:
        report = import_sheet(session, sheet, dry_run=dry_run)
        report.refuse_if_problems("splice rows")  # raising rolls the transaction back
        return report

    if dry_run:
        with reading() as session:
            document = work(session).document()
    else:
        document = write(work).document()
    document["dry_run"] = dry_run
    status = 201 if document["added"] and not dry_run else 200
    return jsonify(document), status
