"""Refusals as answers: JSON `{"error": ..., "details": [...]}` for the API, a page for people.

An unknown label is 404; a request the server cannot read (a missing or malformed parameter)
400; a request understood but refused by the record's rules 422; a lost race 409.
"""

from __future__ import annotations

from typing import Any

from flask import Flask, Response, current_app, jsonify, render_template, request
from werkzeug.exceptions import HTTPException, RequestEntityTooLarge

from plantdb.errors import ConflictError, NotFound, PlantError, SchemaError, UsageProblem
from plantdb.records.splicing import SpliceRefused
from webui.params import refuse_nul_characters

API_PREFIX = "/api/"


def status_of(error: PlantError) -> int:
    """The HTTP status of a refusal."""
    if isinstance(error, NotFound):
        return 404
    if isinstance(error, ConflictError):
        return 409
    if isinstance(error, SchemaError):
        return 503
    if isinstance(error, UsageProblem):
        return 400
    return 422


def wants_json() -> bool:
    return request.path.startswith(API_PREFIX)


def api_error(status: int, message: str, details: list[str] | None = None, **extra: Any) -> Any:
    """A JSON refusal: {"error": message, "details": [...]} with the given status."""
    body: dict[str, Any] = {"error": message, "details": list(details or [])}
    body.update(extra)
    response: Response = jsonify(body)
    response.status_code = status
    return response


def _plant_error(error: PlantError) -> Any:
    status = status_of(error)
    if wants_json():
        extra = {"report": error.report.document()} if isinstance(error, SpliceRefused) else {}
        return api_error(status, error.message, error.details, **extra)
    page = render_template(
        "error.html", status=status, message=error.message, details=error.details
    )
    return page, status


# Headers an HTTP error carries that the answer must keep (which methods, how to sign in).
KEPT_HEADERS = frozenset({"allow", "www-authenticate", "retry-after"})


def _http_error(error: HTTPException) -> Any:
    status = error.code or 500
    message = error.description or error.name
    kept = [(k, v) for k, v in error.get_headers() if k.lower() in KEPT_HEADERS]
    if wants_json():
        response = api_error(status, message)
        for name, value in kept:
            response.headers[name] = value
        return response
    page = render_template("error.html", status=status, message=message, details=[])
    return page, status, kept


def _size(limit: int) -> str:
    for unit, size in (("MiB", 1024 * 1024), ("KiB", 1024)):
        if limit >= size:
            return f"{limit / size:g} {unit}"
    return f"{limit} bytes"


def _too_large(error: RequestEntityTooLarge) -> Any:
    """A body over MAX_CONTENT_LENGTH: name the limit and what to do instead."""
    limit = current_app.config.get("MAX_CONTENT_LENGTH")
    took = f"at most {_size(limit)}" if isinstance(limit, int) else "less"
    error.description = (
        f"the request is larger than this server takes ({took}); split the splice sheet into"
        " parts, or import it with `plantdb import splices`, which takes larger sheets"
    )
    return _http_error(error)


def install(app: Flask) -> None:
    """Register the handlers for refusals and HTTP errors, and refuse NUL characters."""
    app.register_error_handler(PlantError, _plant_error)
    app.register_error_handler(HTTPException, _http_error)
    app.register_error_handler(RequestEntityTooLarge, _too_large)
    app.before_request(refuse_nul_characters)
