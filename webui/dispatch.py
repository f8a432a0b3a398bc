"""The dispatcher's page: cut impact of a span or a structure picked on the map (or typed),
and an OTDR break located on the map with its range, the structures either side and the
caution."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, render_template, request, url_for
from werkzeug.datastructures import MultiDict
from werkzeug.exceptions import BadRequest

from plantdb.errors import PlantError
from plantdb.trace.dispatch import impact_document, locate_document
from webui import params
from webui.errors import status_of
from webui.geometry import structure_points
from webui.map import map_settings
from webui.store import reading

blueprint = Blueprint("dispatch", __name__, url_prefix="/dispatch")


def _impact(args: MultiDict[str, str]) -> dict[str, Any] | None:
    span, structure = params.text(args, "span"), params.text(args, "structure")
    if span is None and structure is None:
        return None
    if span is not None and structure is not None:
        raise BadRequest("give a span or a structure, not both")
    with reading() as session:
        return impact_document(session, span=span, structure=structure)


def _locate(args: MultiDict[str, str]) -> dict[str, Any] | None:
    port = params.text(args, "port")
    if port is None and params.text(args, "distance_m") is None:
        return None
    port = params.required_text(args, "port")
    distance = params.number(args, "distance_m", required=True)
    assert distance is not None
    wavelength = params.whole(args, "wavelength")
    otdr_index = params.number(args, "otdr_index")
    with reading() as session:
        document = locate_document(session, port, distance, wavelength, otdr_index)
        points = structure_points(session, document["between"])
    document["places"] = [
        {"label": label, "lon": points[label][0], "lat": points[label][1]}
        for label in document["between"]
        if label in points
    ]
    return document


def _map_data(impact: dict[str, Any] | None, located: dict[str, Any] | None) -> dict[str, Any]:
    extra: dict[str, Any] = {}
    if impact is not None:
        extra["impact"] = {
            "target": impact["target"],
            "kind": impact.get("kind"),
            "spans": impact.get("spans", []),
            "cables_url": url_for("map.lines", cable=impact["cables"])
            if impact["cables"]
            else None,
        }
    if located is not None:
        extra["locate"] = {
            "lon": located["lon"],
            "lat": located["lat"],
            "range_line": located.get("range_line", []),
            "places": located["places"],
            "label": f"{located['cable']} at sheath mark {located['sheath_mark_m']} m",
        }
    return extra


@blueprint.route("/")
def dispatch() -> Any:
    """The page, with the answer to whichever question its query string asks."""
    problems: dict[str, str] = {}
    status = 200
    answers: dict[str, dict[str, Any] | None] = {"impact": None, "locate": None}
    for name, work in (("impact", _impact), ("locate", _locate)):
        try:
            answers[name] = work(request.args)
        except PlantError as error:
            problems[name] = error.message
            status = max(status, status_of(error))
        except BadRequest as error:
            problems[name] = str(error.description)
            status = max(status, 400)
    settings = map_settings(**_map_data(answers["impact"], answers["locate"]))
    page = render_template(
        "dispatch.html",
        impact=answers["impact"],
        located=answers["locate"],
        problems=problems,
        args=request.args,
        settings=settings,
    )
    return page, status
