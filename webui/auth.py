"""Signing in and out of the web UI.

A successful sign-in empties the old cookie session and starts a new server-side session
with a fresh random id (so an id planted before sign-in is worthless after it). Sign-out
ends the server-side session, so a copy of the cookie stops working too.
"""

from __future__ import annotations

import logging
from typing import Any
from urllib.parse import urlsplit

from flask import (
    Blueprint,
    current_app,
    flash,
    g,
    redirect,
    render_template,
    request,
    session,
    url_for,
)
from werkzeug.wrappers import Response

from plantdb.people import end_session
from plantdb.security_log import log_event
from plantdb.sign_in import Limits, SignInResult, try_sign_in
from webui.access import SESSION_KEY, changes_own_session, current_identity, open_mode
from webui.store import database, write

blueprint = Blueprint("auth", __name__)

NOT_ACCEPTED = "The name or password was not accepted."


def safe_next(target: str | None) -> str:
    """Where to go after sign-in: a path on this server only (never another site)."""
    fallback = url_for("map.index")
    if not target or not target.startswith("/") or target.startswith("//") or "\\" in target:
        return fallback
    parts = urlsplit(target)
    return fallback if parts.scheme or parts.netloc else target


def _page(status: int = 200, problem: str | None = None, name: str = "") -> Any:
    page = render_template(
        "sign_in.html",
        problem=problem,
        name=name,
        next=safe_next(request.values.get("next")),
    )
    return page, status


@blueprint.route("/sign-in", endpoint="sign_in")
def sign_in_page() -> Any:
    """The sign-in form (or who is signed in already)."""
    return _page()


def _log_try(result: SignInResult) -> None:
    address = request.remote_addr or "unknown"
    if result.ok:
        log_event("sign-in", result.name, address, "POST /sign-in", role=result.role or "")
        return
    log_event(
        "sign-in failed",
        result.name,
        address,
        "POST /sign-in",
        level=logging.WARNING,
        reason=result.reason,
        wait_s=result.retry_after,
    )


@blueprint.route("/sign-in", methods=["POST"])
@changes_own_session
def sign_in_post() -> Any:
    """Check a name and password; on success, a new session and back where they were going."""
    name = request.form.get("name", "")
    password = request.form.get("password", "")
    limits: Limits = current_app.config.get("SIGN_IN_LIMITS") or Limits()
    result = try_sign_in(
        database(), name, password, request.remote_addr or "unknown", limits=limits
    )
    _log_try(result)
    if result.retry_after:
        page, _status = _page(
            429, f"Too many failed tries: wait {result.retry_after} s, then try again.", name
        )
        return page, 429, {"Retry-After": str(result.retry_after)}
    if not result.ok:
        return _page(401, NOT_ACCEPTED, name)
    session.clear()
    g.pop("csrf_token", None)  # the old session's form token goes with it
    session[SESSION_KEY] = result.session_token
    flash(f"Signed in as {result.name} ({result.role}).", "done")
    return redirect(safe_next(request.form.get("next")), code=303)


@blueprint.route("/sign-out", methods=["POST"])
@changes_own_session
def sign_out() -> Response:
    """End this browser's session on the server, and forget the cookie."""
    token = session.get(SESSION_KEY)
    identity = current_identity()
    if isinstance(token, str):
        write(lambda db: end_session(db, token))
    if identity is not None:
        log_event("sign-out", identity.name, request.remote_addr or "unknown", "POST /sign-out")
    session.clear()
    if not open_mode():
        flash("Signed out.", "done")
    return redirect(url_for("auth.sign_in"), code=303)
