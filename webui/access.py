"""Who may do what: every request's identity, and the one gate every change passes.

Each request is identified before its view runs: an `Authorization: Bearer` API token, else
the web session named by the session cookie (checked against the server's table, so a
sign-out or a disabled person takes effect at once). With nobody defined the app is open, to
this machine only: a request from another address, or one that came through a proxy that was
not declared with `--behind-proxy`, is refused with 403. Once anyone is defined, every route
but the sign-in page and the static files needs a person (401 for the API, a redirect to
sign-in for pages).

Changes happen only on POST and only in views marked `@writes(role, ...)`, which names the
roles allowed (admin always is); a POST to any other view is refused with 405 before it
reaches it. Forms carry a CSRF token; the API with a token needs none. Every refusal is
written to the security log.
"""

from __future__ import annotations

import datetime as dt
import functools
import ipaddress
import logging
from collections.abc import Callable
from typing import Any, TypeVar

from flask import Flask, current_app, g, redirect, request, session, url_for
from flask_wtf.csrf import CSRFError
from werkzeug.datastructures import WWWAuthenticate
from werkzeug.exceptions import BadRequest, Forbidden, MethodNotAllowed, Unauthorized

from plantdb.audit import acting_as
from plantdb.model import Role
from plantdb.people import (
    Check,
    Identity,
    SessionPolicy,
    anyone_defined,
    check_session,
    check_token,
)
from plantdb.security_log import log_event
from webui.security import csrf
from webui.store import reading, write

F = TypeVar("F", bound=Callable[..., Any])

WRITE_MARK = "plantdb_writes"
ROLES_MARK = "plantdb_roles"
SAFE_METHODS = frozenset({"GET", "HEAD", "OPTIONS"})
ROLES = tuple(role.value for role in Role)
# The roles mark of a view that changes only the visitor's own session (sign-in, sign-out).
OWN_SESSION = frozenset({"anyone"})
SESSION_KEY = "sid"
API_PREFIX = "/api/"
# Reachable without signing in: the sign-in page and the files every page loads.
STATIC_ENDPOINTS = frozenset(
    {"static", "assets.leaflet", "assets.colours", "assets.print_sheet_css", "assets.favicon"}
)
OPEN_ENDPOINTS = STATIC_ENDPOINTS | {"auth.sign_in", "auth.sign_in_post"}
# Headers a proxy adds naming the client it passes a request on for (RFC 7239's Forwarded,
# the common X-Forwarded-* family, and the single-address ones some proxies send instead).
FORWARDING_HEADERS = (
    "Forwarded",
    "X-Forwarded-For",
    "X-Forwarded-Host",
    "X-Forwarded-Proto",
    "X-Forwarded-Prefix",
    "X-Forwarded-Port",
    "X-Forwarded-Server",
    "X-Real-IP",
    "X-Client-IP",
    "X-Cluster-Client-IP",
    "True-Client-IP",
    "Via",
)


def writes(*roles: str) -> Callable[[F], F]:
    """Mark a view as changing the record, open to the roles named (and admin): POST only."""
    if not roles or callable(roles[0]):
        raise TypeError("name the roles that may write: @writes('clerk'), not bare @writes")
    unknown = [r for r in roles if r not in ROLES]
    if unknown:
        raise ValueError(f"@writes: unknown roles {unknown}; roles are {', '.join(ROLES)}")
    allowed = frozenset(roles) | {Role.ADMIN.value}

    def decorate(view: F) -> F:
        @functools.wraps(view)
        def guarded(*args: Any, **kwargs: Any) -> Any:
            if request.method != "POST":
                raise MethodNotAllowed(valid_methods=["POST"])
            check_may_write(allowed)
            return view(*args, **kwargs)

        setattr(guarded, WRITE_MARK, True)
        setattr(guarded, ROLES_MARK, allowed)
        return guarded  # type: ignore[return-value]

    return decorate


def changes_own_session(view: F) -> F:
    """Mark a POST view that changes only the visitor's own session (sign-in, sign-out)."""
    setattr(view, WRITE_MARK, True)
    setattr(view, ROLES_MARK, OWN_SESSION)
    return view


def roles_of(view: Callable[..., Any] | None) -> frozenset[str] | None:
    """The roles a marked view allows (OWN_SESSION for sign-in and sign-out); None: unmarked."""
    found = getattr(view, ROLES_MARK, None)
    return found if isinstance(found, frozenset) else None


def is_writing_view(view: Callable[..., Any] | None) -> bool:
    """True when a view function was marked with `@writes` (or `@changes_own_session`)."""
    return bool(view is not None and getattr(view, WRITE_MARK, False))


def current_identity() -> Identity | None:
    """The person this request comes from (None when nobody is defined, or not signed in)."""
    found: Identity | None = g.get("identity")
    return found


def open_mode() -> bool:
    """True when nobody is defined: the app is open to this machine, with no sign-in."""
    return bool(g.get("open_mode"))


def request_actor() -> str:
    """The name changes are recorded under: the person's, or "local" when nobody is defined."""
    identity = current_identity()
    if identity is not None:
        return identity.name
    return "local" if open_mode() else "anonymous"


def _address() -> str:
    return request.remote_addr or "unknown"


def log_refusal(reason: str, *, status: int) -> None:
    """Write a refused request to the security log."""
    log_event(
        "refused",
        request_actor(),
        _address(),
        f"{request.method} {request.full_path.rstrip('?')}",
        level=logging.WARNING,
        status=status,
        reason=reason,
    )


def check_may_write(allowed: frozenset[str]) -> None:
    """Refuse a change this server or this person may not make (403, logged)."""
    if current_app.config.get("READ_ONLY"):
        log_refusal("read-only server", status=403)
        raise Forbidden("this server is read-only: the record cannot be changed here")
    identity = current_identity()
    if identity is None or identity.role in allowed:
        return  # identity is None only when nobody is defined: one user, every role
    needed = " or ".join(sorted(allowed))
    log_refusal(f"role {identity.role} may not; needs {needed}", status=403)
    raise Forbidden(f"{identity.name} ({identity.role}) may not do this: it needs {needed}")


def _refuse_unmarked_writes() -> None:
    if request.method in SAFE_METHODS or request.endpoint is None:
        return
    view = current_app.view_functions.get(request.endpoint)
    if not is_writing_view(view):
        raise MethodNotAllowed(valid_methods=sorted(SAFE_METHODS))


def _bearer() -> str | None:
    header = request.headers.get("Authorization", "")
    scheme, _, value = header.partition(" ")
    if scheme.lower() != "bearer":
        return None
    return value.strip()


def _settle(check: Check) -> Identity | None:
    if check.stamp is not None:
        write(check.stamp)
    return check.identity


def _session_identity(token: str) -> Identity | None:
    config = current_app.config
    policy = SessionPolicy(
        idle=dt.timedelta(minutes=config["SESSION_IDLE_MINUTES"]),
        absolute=dt.timedelta(hours=config["SESSION_HOURS"]),
    )
    with reading() as db:
        check = check_session(db, token, policy=policy)
    return _settle(check)


def _unauthorized(reason: str) -> Any:
    log_refusal(reason, status=401)
    if request.path.startswith(API_PREFIX) or request.headers.get("Authorization"):
        raise Unauthorized(
            "sign in, or send an API token: Authorization: Bearer …",
            www_authenticate=WWWAuthenticate("bearer", {"realm": "plantdb"}),
        )
    return redirect(url_for("auth.sign_in", next=request.full_path.rstrip("?")))


def _forwarding_headers() -> list[str]:
    """The forwarding headers this request carries (a proxy passed it on)."""
    return [name for name in FORWARDING_HEADERS if name in request.headers]


def _why_not_this_machine() -> str | None:
    """Why an open-mode request cannot be taken as from this machine (None: it is).

    A proxy on this machine connects from 127.0.0.1 whoever its client is, so a request that
    came through one is never "the single user at the machine". Behind a declared proxy
    (`--behind-proxy`) ProxyFix has already put the forwarded client's address in
    remote_addr, and that address decides; a forwarding header ProxyFix does not read,
    without the X-Forwarded-For it does, leaves the client unknown.
    """
    forwarded = _forwarding_headers()
    if forwarded and not current_app.config.get("BEHIND_PROXY"):
        return f"came through a proxy ({', '.join(forwarded)}) and none is declared"
    if forwarded and "X-Forwarded-For" not in forwarded:
        return f"came through the proxy without X-Forwarded-For ({', '.join(forwarded)})"
    try:
        loopback = ipaddress.ip_address(_address()).is_loopback
    except ValueError:
        loopback = False
    return None if loopback else "from another machine"


def _only_this_machine() -> None:
    why = _why_not_this_machine()
    if why is not None:
        log_refusal(f"nobody is defined: open to this machine only; {why}", status=403)
        raise Forbidden(
            "nobody is defined on this server, so it answers only its own machine;"
            " add a person with `plantdb user add` to let others sign in"
        )


def _identify() -> Any:
    """Find who the request comes from, or send it to sign in."""
    g.identity, g.open_mode = None, False
    if request.endpoint in STATIC_ENDPOINTS:
        return None
    token = _bearer()
    if token is not None:
        with reading() as db:
            g.identity = _settle(check_token(db, token))
        return None if g.identity else _unauthorized("unknown or revoked API token")
    sid = session.get(SESSION_KEY)
    if isinstance(sid, str):
        g.identity = _session_identity(sid)
        if g.identity is not None:
            return None
        session.pop(SESSION_KEY, None)
    with reading() as db:
        defined = anyone_defined(db)
    if not defined:
        g.open_mode = True
        _only_this_machine()
        return None
    if request.endpoint in OPEN_ENDPOINTS:
        return None
    return _unauthorized("not signed in" if sid is None else "session ended or timed out")


def _check_csrf() -> None:
    """Forms need their CSRF token; the API needs none with a token, and JSON without."""
    if request.method in SAFE_METHODS or request.endpoint is None:
        return
    identity = current_identity()
    if identity is not None and identity.how == "token":
        return
    if request.path.startswith(API_PREFIX) and identity is None:
        # Open mode: a page elsewhere cannot send JSON here without the browser asking first.
        if not request.is_json:
            log_refusal("API change without JSON", status=400)
            raise BadRequest("the body must be JSON, sent as Content-Type: application/json")
        return
    try:
        csrf.protect()
    except CSRFError as error:
        log_refusal(f"CSRF check: {error.description}", status=400)
        raise


def _act_as() -> None:
    """Let the audit history record each change of this request under the person's name."""
    context = acting_as(request_actor())
    context.__enter__()
    g.acting_as = context


def _stop_acting(error: BaseException | None) -> None:
    context = g.pop("acting_as", None)
    if context is not None:
        context.__exit__(None, None, None)


def _template_context() -> dict[str, Any]:
    return {"identity": current_identity(), "open_mode": open_mode()}


def install(app: Flask) -> None:
    """Identify each request, refuse unmarked changes, check CSRF, and tell the audit who."""
    app.config.setdefault("SESSION_IDLE_MINUTES", 30)
    app.config.setdefault("SESSION_HOURS", 12)
    app.before_request(_refuse_unmarked_writes)
    app.before_request(_identify)
    app.before_request(_check_csrf)
    app.before_request(_act_as)
    app.teardown_request(_stop_acting)
    app.context_processor(_template_context)
