"""Files the pages load: Leaflet from the installed xstatic package, and the colour classes.

Nothing is fetched from outside the server: Leaflet's script, stylesheet and images come from
the `xstatic-leaflet` package, and the TIA-598 swatch classes are written from
`plantdb.colours`, so the screen's colours are the ones the sheets print.
"""

from __future__ import annotations

from functools import lru_cache

from flask import Blueprint, Response, redirect, send_from_directory, url_for
from werkzeug.wrappers import Response as WerkzeugResponse

from plantdb.colours import TIA_598
from plantdb.records.print_sheet import sheet_css

blueprint = Blueprint("assets", __name__)

# An hour: the files change only when the package is upgraded.
CACHE_SECONDS = 3600


@lru_cache(maxsize=1)
def _leaflet_folder() -> str:
    import xstatic.pkg.leaflet

    return str(xstatic.pkg.leaflet.BASE_DIR)


@blueprint.route("/static/leaflet/<path:filename>")
def leaflet(filename: str) -> Response:
    """Leaflet's own files (leaflet.js, leaflet.css, images/...)."""
    return send_from_directory(_leaflet_folder(), filename, max_age=CACHE_SECONDS)


@lru_cache(maxsize=1)
def colour_css() -> str:
    """`.tia-N` sets a swatch's base colour and edge; `.stripe-C` its stripe colour."""
    lines = ["/* ANSI/TIA-598 swatches, written from plantdb.colours */"]
    for n, colour in enumerate(TIA_598, start=1):
        lines.append(f".tia-{n} {{ --swatch: {colour.hex}; --swatch-edge: {colour.border}; }}")
    for colour in TIA_598:
        lines.append(f".stripe-{colour.name} {{ --stripe: {colour.hex}; }}")
    return "\n".join(lines) + "\n"


@blueprint.route("/assets/colours.css")
def colours() -> Response:
    """The colour classes as a stylesheet."""
    response = Response(colour_css(), mimetype="text/css")
    response.cache_control.max_age = CACHE_SECONDS
    response.cache_control.public = True
    return response


@blueprint.route("/assets/print-sheet.css")
def print_sheet_css() -> Response:
    """The print-ready splice sheet's stylesheet (linked, so the page needs no inline style)."""
    response = Response(sheet_css(), mimetype="text/css")
    response.cache_control.max_age = CACHE_SECONDS
    response.cache_control.public = True
    return response


@blueprint.route("/favicon.ico")
def favicon() -> WerkzeugResponse:
    """Browsers ask for /favicon.ico even on pages that name their icon (the printed sheet)."""
    return redirect(url_for("static", filename="favicon.svg"), code=301)
