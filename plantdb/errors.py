"""The project's error types: a refusal the user can act on, never a traceback."""

from __future__ import annotations


class PlantError(Exception):
    """A request understood but refused: unknown label, bad input, a records error.

    The message is one clear line naming what and where; `details` may hold more lines
    (every problem of a bundle or a splice sheet, not just the first).
    """

    def __init__(self, message: str, details: list[str] | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.details = list(details or [])


class UsageProblem(PlantError):
    """A request put together wrongly (options missing or clashing): exit status 2."""


class NotFound(PlantError):
    """A label or address that names nothing in the record."""


class RecordsError(PlantError):
    """The record contradicts itself: a loop, a path mixing fiber modes, a broken rule."""


class SchemaError(PlantError):
    """The database is not initialised, or its schema is behind (or ahead of) the code."""


class ConflictError(PlantError):
    """Someone else changed the record first (a lost race or a stale edit)."""


class RaceLost(ConflictError):
    """Another transaction took the same row first. Running the work again either succeeds or
    refuses by name once its checks see that row, so `run_in_transaction` retries it."""
