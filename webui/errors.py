"""Refusals as answers: JSON `{"error": ..., "details": [...]}` for the API, a page for people.

An unknown label is 404; a request the server cannot read (a missing or malformed parameter)
400; a request understood but refused by the record's rules 422; a lost race 409.
"""

from __future__ import annotations

from typing import Any

from flask import Flask, Response, jsonify, render_template, request
from werkzeug.exceptions import HTTPException

from plantdb.errors import ConflictError, NotFound, PlantError, SchemaError
from plantdb.records.splicing import SpliceRefused

API_PREFIX = "/api/"


def status_of(error: PlantError) -> int:
    """The HTTP status of a refusal."""
    if isinstance(error, NotFound):
        return 404
    if isinstance(error, ConflictError):
        return 409
    if isinstance(error, SchemaError):
        return 503
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


def _http_error(error: HTTPException) -> Any:
    status = error.code or 500
    message = error.description or error.name
    if wants_json():
        response = api_error(status, message)
        if status == 405 and error.get_headers():
            for name, value in error.get_headers():
                if name.lower() == "allow":
                    response.headers[name] = value
        return response
    return render_template("error.html", status=status, message=message, details=[]), status


def install(app: Flask) -> None:
    """Register the handlers for refusals and HTTP errors."""
    app.register_error_handler(PlantError, _plant_error)
    app.register_error_handler(HTTPException, _http_error)
