"""The map page, the viewport API it loads from, search, and the lines of cables and circuits."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, current_app, jsonify, render_template, request, url_for
from werkzeug.exceptions import BadRequest

from plantdb.trace.reader import PlantReader
from plantdb.trace.service import trace_document
from webui import geometry, params
from webui.search import search
from webui.store import reading
from webui.views import page_urls, thing_url

blueprint = Blueprint("map", __name__)

# How many things one geometry request may name (a dispatcher's impact lists a few cables).
MAX_GEOMETRY_LABELS = 200


def _url(kind: str, label: str) -> str:
    return thing_url(kind, label) or ""


def map_settings(**extra: Any) -> dict[str, Any]:
    """What a page's map element needs: the plant's extent, the base map, the data endpoint."""
    with reading() as session:
        box = geometry.extent(session)
    return {
        "extent": list(box) if box else None,
        "tile_url": current_app.config.get("TILE_URL") or "",
        "tile_attribution": current_app.config.get("TILE_ATTRIBUTION") or "",
        "map_url": url_for("map.viewport"),
        "search_url": url_for("map.search_api"),
        "dispatch_url": url_for("dispatch.dispatch"),
        **extra,
    }


@blueprint.route("/")
def index() -> str:
    """The map of the whole plant, with layers and search."""
    return render_template(
        "map.html", settings=map_settings(focus=params.text(request.args, "focus"))
    )


@blueprint.route("/api/v1/map")
def viewport() -> Any:
    """An RFC 7946 FeatureCollection of the structures, spans, closures and panels in a box."""
    box = params.bbox(request.args.get("bbox"))
    limit = int(current_app.config["MAP_FEATURE_LIMIT"])
    with reading() as session:
        return jsonify(geometry.viewport(session, box, limit, page_urls()))


def _with_urls(found: list[dict[str, Any]]) -> list[dict[str, Any]]:
    for item in found:
        if item["kind"] == "equipment":
            item["url"] = _url("structure", item["structure"])
        else:
            item["url"] = _url(item["kind"], item["label"])
    return found


@blueprint.route("/api/v1/search")
def search_api() -> Any:
    """Things whose label holds `q`, with their page and (when placed) their position."""
    query = params.required_text(request.args, "q")
    with reading() as session:
        return jsonify({"query": query, "results": _with_urls(search(session, query))})


@blueprint.route("/search")
def search_page() -> str:
    """The same search as a page, for people without the map."""
    query = params.text(request.args, "q") or ""
    results: list[dict[str, Any]] = []
    if query:
        with reading() as session:
            results = _with_urls(search(session, query, limit=100))
    return render_template("search.html", query=query, results=results)


@blueprint.route("/api/v1/geometry")
def lines() -> Any:
    """GeoJSON lines of cables (`cable=`, repeatable) and circuits' paths (`circuit=`)."""
    cables = [c.strip() for c in request.args.getlist("cable") if c.strip()]
    circuits = [c.strip() for c in request.args.getlist("circuit") if c.strip()]
    if not cables and not circuits:
        raise BadRequest("give one or more cable=LABEL or circuit=LABEL parameters")
    if len(cables) + len(circuits) > MAX_GEOMETRY_LABELS:
        raise BadRequest(f"at most {MAX_GEOMETRY_LABELS} cables and circuits in one request")
    features: list[dict[str, Any]] = []
    with reading() as session:
        reader = PlantReader(session)
        for label in cables:
            features += geometry.cable_lines(reader, label)
        for label in circuits:
            features += geometry.trace_lines(reader, trace_document(session, "circuit", label))
    return jsonify(geometry.collection(features))
