"""The web UI and JSON API: an application factory and one blueprint per screen family.

`create_app(config)` builds a fresh app on one database; `plantdb serve` runs it under
waitress. Every page reads in one session per request; every change goes through a service
in one transaction (`webui.store`), and every state-changing view through `webui.access`.
"""

from __future__ import annotations

import secrets
from typing import Any

from flask import Flask

from plantdb.db import Database, require_current_schema, resolve_url

DEFAULTS: dict[str, Any] = {
    # None: no base map; the plant draws on a plain background and needs no internet.
    "TILE_URL": None,
    "TILE_ATTRIBUTION": "",
    # More features than this per layer in one viewport answer are cut off ("zoom in").
    "MAP_FEATURE_LIMIT": 4000,
    # A splice sheet larger than this is refused at upload (the command line takes more).
    "MAX_CONTENT_LENGTH": 16 * 1024 * 1024,
    "READ_ONLY": False,
    "CHECK_SCHEMA": True,
}


def create_app(config: dict[str, Any] | None = None) -> Flask:
    """A Flask app on the database named by config["DATABASE_URL"] (default: as the CLI)."""
    app = Flask(__name__)
    app.config.update(DEFAULTS)
    app.config["DATABASE_URL"] = resolve_url(None)
    # Only flashed messages ride in the session; a key per process is enough until sign-in.
    app.config["SECRET_KEY"] = secrets.token_hex(32)
    app.config.update(config or {})
    app.json.sort_keys = False  # type: ignore[attr-defined]  # keep the documents' own order
    database = Database(app.config["DATABASE_URL"])
    if app.config["CHECK_SCHEMA"]:
        require_current_schema(database.engine)
    app.extensions["plantdb.database"] = database
    _register(app)
    return app


def _register(app: Flask) -> None:
    from webui import access, errors, views
    from webui.api import blueprint as api
    from webui.assets import blueprint as assets
    from webui.cables import blueprint as cables
    from webui.circuits import blueprint as circuits
    from webui.closures import blueprint as closures
    from webui.dispatch import blueprint as dispatch
    from webui.imports import blueprint as imports
    from webui.map import blueprint as map_pages
    from webui.panels import blueprint as panels
    from webui.places import blueprint as places

    access.install(app)
    errors.install(app)
    views.install(app)
    for blueprint in (
        assets,
        map_pages,
        api,
        closures,
        cables,
        panels,
        circuits,
        dispatch,
        imports,
        places,
    ):
        app.register_blueprint(blueprint)
