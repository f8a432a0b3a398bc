"""What every response and every cookie carries: the secret key, the session cookie's flags,
CSRF tokens, security headers, and (when configured) trust in a TLS proxy's headers.

The session cookie holds only a random session id (checked against the server's table in
`webui.access`) and the CSRF token; it is signed with SECRET_KEY, which comes from
$PLANTDB_SECRET_KEY or is generated once into the instance folder (mode 0600), never from
the repository.
"""

from __future__ import annotations

import os
import secrets
import stat
from pathlib import Path
from typing import Any
from urllib.parse import urlsplit

from flask import Flask, Response, has_request_context, request
from flask.sessions import SecureCookieSessionInterface
from flask_wtf.csrf import CSRFProtect
from werkzeug.middleware.proxy_fix import ProxyFix

from plantdb.errors import PlantError

ENV_SECRET = "PLANTDB_SECRET_KEY"
SECRET_FILE = "secret_key"
csrf = CSRFProtect()

COOKIE_SETTINGS: dict[str, Any] = {
    "SESSION_COOKIE_NAME": "plantdb_session",
    "SESSION_COOKIE_HTTPONLY": True,
    "SESSION_COOKIE_SAMESITE": "Lax",
    # Checked by hand in `webui.access` (so that API calls with a token skip it).
    "WTF_CSRF_CHECK_DEFAULT": False,
    # A form stays good as long as the longest session (the server ends sessions itself).
    "WTF_CSRF_TIME_LIMIT": 12 * 3600,
}


class _SessionCookies(SecureCookieSessionInterface):
    """Marks the cookie `Secure` when the request came over TLS (or when told to always)."""

    def get_cookie_secure(self, app: Flask) -> bool:
        if app.config.get("FORCE_SECURE_COOKIES"):
            return True
        return bool(has_request_context() and request.is_secure)


def _read_secret(path: Path) -> str:
    mode = path.stat().st_mode
    if mode & (stat.S_IRWXG | stat.S_IRWXO):
        raise PlantError(
            f"the secret key file {path} can be read by others; run `chmod 600 {path}`"
        )
    value = path.read_text(encoding="ascii").strip()
    if len(value) < 32:
        raise PlantError(f"the secret key file {path} is damaged (too short); delete it")
    return value


def instance_secret(folder: Path) -> str:
    """The key kept in the instance folder, made on first use (readable by its owner only)."""
    path = folder / SECRET_FILE
    if path.exists():
        return _read_secret(path)
    folder.mkdir(parents=True, exist_ok=True, mode=0o700)
    draft = folder / f".{SECRET_FILE}.{os.getpid()}.{secrets.token_hex(4)}"
    descriptor = os.open(draft, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    with os.fdopen(descriptor, "w", encoding="ascii") as handle:
        handle.write(secrets.token_hex(32) + "\n")
    try:
        # A link never replaces: when two servers start at once, both end up with one key.
        os.link(draft, path)
    except FileExistsError:
        pass
    finally:
        draft.unlink()
    return _read_secret(path)


def secret_key(app: Flask) -> str:
    """$PLANTDB_SECRET_KEY, else the key in the app's instance folder."""
    return os.environ.get(ENV_SECRET) or instance_secret(Path(app.instance_path))


def _image_sources(tile_url: str | None) -> str:
    """'self', plus the base map's host when tiles come from elsewhere."""
    if not tile_url:
        return "'self'"
    parts = urlsplit(tile_url.replace("{s}", "*"))
    if not parts.scheme or not parts.netloc:
        return "'self'"
    return f"'self' {parts.scheme}://{parts.netloc}"


def content_policy(tile_url: str | None) -> str:
    """The Content-Security-Policy: only this server's own scripts, styles and images."""
    return "; ".join(
        [
            "default-src 'self'",
            "script-src 'self'",
            "style-src 'self'",
            f"img-src {_image_sources(tile_url)}",
            "object-src 'none'",
            "base-uri 'none'",
            "frame-ancestors 'none'",
            "form-action 'self'",
        ]
    )


def _add_headers(response: Response) -> Response:
    from flask import current_app

    headers = response.headers
    headers.setdefault("Content-Security-Policy", current_app.config["CONTENT_SECURITY_POLICY"])
    headers.setdefault("X-Content-Type-Options", "nosniff")
    headers.setdefault("Referrer-Policy", "same-origin")
    headers.setdefault("X-Frame-Options", "DENY")
    if request.is_secure:
        headers.setdefault("Strict-Transport-Security", "max-age=31536000")
    return response


def install(app: Flask) -> None:
    """Key, cookie flags, CSRF tokens, headers, and the proxy fix when BEHIND_PROXY is set."""
    for key, value in COOKIE_SETTINGS.items():
        app.config.setdefault(key, value)
    if not app.config.get("SECRET_KEY"):
        app.config["SECRET_KEY"] = secret_key(app)
    app.config.setdefault("CONTENT_SECURITY_POLICY", content_policy(app.config.get("TILE_URL")))
    app.session_interface = _SessionCookies()
    csrf.init_app(app)
    app.after_request(_add_headers)
    hops = int(app.config.get("BEHIND_PROXY") or 0)
    if hops:
        # Trust X-Forwarded-For/-Proto/-Host/-Prefix from exactly this many proxies.
        app.wsgi_app = ProxyFix(  # type: ignore[method-assign]
            app.wsgi_app, x_for=hops, x_proto=hops, x_host=hops, x_prefix=hops
        )
