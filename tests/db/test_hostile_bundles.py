"""Hostile bundles against a real database, SQLite and PostgreSQL: random mutations of a valid
bundle (values replaced, keys dropped or added, items doubled, labels swapped with the record's
own) load cleanly or are refused with a `PlantError` naming the item; nothing else escapes, and
a refused load leaves the record as it was."""

from __future__ import annotations

from typing import Any

import pytest
from hypothesis import HealthCheck, event, given, settings

from plantdb.db import Database, run_in_transaction
from plantdb.errors import PlantError
from plantdb.records.bundle import dump_bundle, load_bundle
from tests.mutations import labels_of, mutations
from tests.networks import SINGLE_MODE, Bundle, ashgrove


def other_network() -> dict[str, Any]:
    """What the database holds before each load: a little network sharing no label with it."""
    b = Bundle().fiber_type({**SINGLE_MODE, "name": "SM-HELD"})
    b.structure("HELD-CO", -500, kind="central_office").structure("HELD-MH", -800)
    b.span("HELD-S", "HELD-CO", "HELD-MH", 310.0)
    b.closure("HELD-C", "HELD-MH").panel("HELD-P", "HELD-CO", ports=4)
    b.splitter("HELD-SPL", "HELD-C", "1x4")
    stations = [("HELD-P", 0.0), ("HELD-C", 312.0)]
    b.cable("HELD-CBL", ["HELD-S"], stations, units=1, per_unit=4, fiber_type="SM-HELD")
    b.terminate("HELD-CBL:1", "HELD-P:1").splice("HELD-C", "HELD-CBL:1", "HELD-SPL:in")
    b.circuit("HELD-CKT", "HELD-P:1", "HELD-P:2", status="planned")
    return b.data


VALID = ashgrove().data
RECORDED = other_network()
# Labels of the bundle and of the record already there: a swap makes duplicates and
# references that name the wrong kind of thing.
LABELS = labels_of(VALID) + labels_of(RECORDED)


@pytest.fixture
def recorded(database: Database) -> Database:
    """A database already holding another small network."""
    run_in_transaction(database, lambda session: load_bundle(session, RECORDED))
    return database


def load_and_roll_back(database: Database, data: Any) -> str:
    """Load a bundle in a transaction that is always rolled back: "loaded" or "refused"."""
    with database.writing() as session:
        transaction = session.begin()
        try:
            load_bundle(session, data)
        except PlantError as exc:
            assert exc.message.strip(), exc
            if exc.details:
                assert all(": " in line for line in exc.details), exc.details
            return "refused"
        finally:
            transaction.rollback()
    return "loaded"


@settings(
    max_examples=60,
    derandomize=True,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
@given(data=mutations(VALID, LABELS))
def test_any_mutated_bundle_loads_or_is_refused_cleanly(recorded: Database, data: Any) -> None:
    event(load_and_roll_back(recorded, data))


def test_the_unchanged_bundle_loads(recorded: Database) -> None:
    assert load_and_roll_back(recorded, VALID) == "loaded"  # so mutations start from a load


def test_the_record_is_as_it_was_after_every_refusal(recorded: Database) -> None:
    with recorded.read() as session:
        before = dump_bundle(session)
    duplicate = {**VALID, "closures": [*VALID["closures"], *RECORDED["closures"]]}
    assert load_and_roll_back(recorded, duplicate) == "refused"
    with recorded.read() as session:
        assert dump_bundle(session) == before
