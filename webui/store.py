"""The app's database: a reading session per request, one transaction per change."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import TypeVar

from flask import current_app
from sqlalchemy.orm import Session

from plantdb.db import Database, run_in_transaction

T = TypeVar("T")


def database() -> Database:
    """The current app's database."""
    found: Database = current_app.extensions["plantdb.database"]
    return found


@contextmanager
def reading() -> Iterator[Session]:
    """A session for reads, in one transaction, closed when the block ends."""
    with database().read() as session:
        yield session


def write(work: Callable[[Session], T]) -> T:
    """Run a service in one write transaction (committed once, retried on a lost race)."""
    return run_in_transaction(database(), work)
