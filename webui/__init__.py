"""The web UI and JSON API: an application factory and one blueprint per screen family.

`create_app(config)` builds a fresh app on one database; `plantdb serve` runs it under
waitress. Every page reads in one session per request; every change goes through a service
in one transaction (`webui.store`), and every state-changing view through `webui.access`.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from flask import Flask

from plantdb.db import Database, require_current_schema, resolve_url
from webui import security
from webui.security import COOKIE_SETTINGS

ENV_INSTANCE = "PLANTDB_INSTANCE_PATH"

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
    # Cookies always `Secure` (else only when the request came over TLS).
    "FORCE_SECURE_COOKIES": False,
    # How many proxies' X-Forwarded-* headers to trust (0: none; `plantdb serve --behind-proxy`).
    "BEHIND_PROXY": 0,
    "SESSION_IDLE_MINUTES": 30,
    "SESSION_HOURS": 12,
}


def create_app(config: dict[str, Any] | None = None) -> Flask:
    """A Flask app on the database named by config["DATABASE_URL"] (default: as the CLI).

    The secret key comes from config["SECRET_KEY"], else $PLANTDB_SECRET_KEY, else a file in
    the instance folder (config["INSTANCE_PATH"], else $PLANTDB_INSTANCE_PATH, else Flask's).
    """
    settings = dict(config or {})
    instance = settings.get("INSTANCE_PATH") or os.environ.get(ENV_INSTANCE)
    app = Flask(__name__, instance_path=str(Path(instance).resolve()) if instance else None)
    app.config.update(DEFAULTS)
    app.config.update(COOKIE_SETTINGS)
    app.config["DATABASE_URL"] = resolve_url(None)
    app.config.update(settings)
    app.json.sort_keys = False  # type: ignore[attr-defined]  # keep the documents' own order
    database = Database(app.config["DATABASE_URL"])
    if app.config["CHECK_SCHEMA"]:
        require_current_schema(database.engine)
    app.extensions["plantdb.database"] = database
    security.install(app)
    _register(app)
    return app


def _register(app: Flask) -> None:
    from webui import access, errors, history, views
    from webui.api import blueprint as api
    from webui.assets import blueprint as assets
    from webui.auth import blueprint as auth
    from webui.cables import blueprint as cables
    from webui.circuits import blueprint as circuits
    from webui.closures import blueprint as closures
    from webui.dispatch import blueprint as dispatch
    from webui.imports import blueprint as imports
    from webui.map import blueprint as map_pages
    from webui.panels import blueprint as panels
    from webui.places import blueprint as places
    from webui.splice_edits import blueprint as splice_edits

    access.install(app)
    errors.install(app)
    views.install(app)
    history.install(app)
    for blueprint in (
        assets,
        auth,
        map_pages,
        api,
        closures,
        splice_edits,
        history.blueprint,
        cables,
        panels,
        circuits,
        dispatch,
        imports,
        places,
    ):
        app.register_blueprint(blueprint)
