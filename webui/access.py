"""The one gate every change to the record passes: `@writes` on each state-changing view.

Changes happen only on POST and only in views marked `@writes`; a request that would change
something anywhere else is refused before it reaches a view. Sign-in, roles and CSRF checks
belong in `check_may_write`, so they can be added in this one place.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from typing import Any, TypeVar

from flask import Flask, current_app, request
from werkzeug.exceptions import Forbidden, MethodNotAllowed

F = TypeVar("F", bound=Callable[..., Any])

WRITE_MARK = "plantdb_writes"
SAFE_METHODS = frozenset({"GET", "HEAD", "OPTIONS"})


def writes(view: F) -> F:
    """Mark a view as changing the record: it answers POST only, after `check_may_write`."""

    @functools.wraps(view)
    def guarded(*args: Any, **kwargs: Any) -> Any:
        if request.method != "POST":
            raise MethodNotAllowed(valid_methods=["POST"])
        check_may_write()
        return view(*args, **kwargs)

    setattr(guarded, WRITE_MARK, True)
    return guarded  # type: ignore[return-value]


def check_may_write() -> None:
    """Refuse a change this server may not make (a read-only server refuses them all)."""
    if current_app.config.get("READ_ONLY"):
        raise Forbidden("this server is read-only: the record cannot be changed here")


def is_writing_view(view: Callable[..., Any] | None) -> bool:
    """True when a view function was marked with `@writes`."""
    return bool(view is not None and getattr(view, WRITE_MARK, False))


def _refuse_unmarked_writes() -> None:
    if request.method in SAFE_METHODS or request.endpoint is None:
        return
    view = current_app.view_functions.get(request.endpoint)
    if not is_writing_view(view):
        raise MethodNotAllowed(valid_methods=sorted(SAFE_METHODS))


def install(app: Flask) -> None:
    """Refuse any request that could change state unless its view is marked `@writes`."""
    app.before_request(_refuse_unmarked_writes)
