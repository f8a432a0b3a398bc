"""Several clerks at once, on SQLite and PostgreSQL, with real threads and real processes.

Two clerks splicing the same fiber end (or into the same tray slot) at the same moment: exactly
one wins, the other is refused by name and nothing of theirs is written. Several writers on
one SQLite file never see "database is locked". On PostgreSQL a serialization failure and a
deadlock are retried by `run_in_transaction`, and the work is done exactly once.

No test waits on the clock: threads and processes start together on a barrier, and on
PostgreSQL a second barrier holds both clerks after their checks and before their first write
(on SQLite writers are serialised by BEGIN IMMEDIATE, so a gate there would only deadlock).
"""

from __future__ import annotations

import multiprocessing
import threading
import traceback
from collections import Counter
from collections.abc import Callable, Iterator
from typing import Any

import pytest
from sqlalchemy import event, func, select, text
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from plantdb.bulk import COPY_ROWS, BulkWriter
from plantdb.db import Database, racing_for, run_in_transaction
from plantdb.errors import PlantError, RaceLost
from plantdb.model import Cut, FiberEnd, Setting, Splice
from plantdb.records.bundle import dump_bundle, load_bundle
from plantdb.records.sheet_files import COLUMNS, read_csv_sheet
from plantdb.records.sheet_import import import_sheet
from plantdb.records.splicing import SpliceReport, SpliceRequest, end_group, record_splices
from plantdb.trace.dispatch import live_document
from tests.conftest import PlantCli
from tests.networks import SINGLE_MODE, Bundle

TIMEOUT_S = 120  # generous: a barrier that times out means a hang, not a slow machine
ROUNDS = 6  # races of two clerks, alternately over one fiber end and over one tray slot
WRITERS = 4
SHEETS = 2  # sheets of four rows each writer imports
SINGLES = 6  # single splices each writer records after its sheets
# Ends every writer process tries to splice, each to a strand of its own (the same splice
# entered twice is merely "already recorded"): exactly one wins each.
CONTESTED = 4


def clerks_yard() -> Bundle:
    """Closure RC-1 (manhole RY-MH, 6 trays of 24) where many 24-strand cables end.

    From panel RP-1: K-1, K-4, K-6, X-A and W0-A..W3-A; toward panel RP-2: K-2, K-3, K-5,
    K-7 and W0-B..W3-B. Nothing is spliced yet.
    """
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("RY-CO", 0, kind="central_office").structure("RY-MH", 250)
    b.structure("RY-PR", 250, 150, kind="customer_premises")
    b.span("RY-1", "RY-CO", "RY-MH", 250.0).span("RY-2", "RY-MH", "RY-PR", 150.0)
    b.closure("RC-1", "RY-MH", trays=6, slots=24)
    b.panel("RP-1", "RY-CO", ports=24).panel("RP-2", "RY-PR", ports=24)
    feeders = ["K-1", "K-4", "K-6", "X-A", *(f"W{w}-A" for w in range(WRITERS))]
    drops = ["K-2", "K-3", "K-5", "K-7", *(f"W{w}-B" for w in range(WRITERS))]
    for label in feeders:
        b.cable(label, ["RY-1"], [("RP-1", 0.0), ("RC-1", 255.0)])
    for label in drops:
        b.cable(label, ["RY-2"], [("RC-1", 0.0), ("RP-2", 155.0)])
    return b


@pytest.fixture
def yard(database: Database) -> Database:
    run_in_transaction(database, lambda s: load_bundle(s, clerks_yard().data))
    return database


def one_splice(a: str, b: str, tray: int, slot: int, where: str = "") -> SpliceRequest:
    return SpliceRequest("RC-1", tray, slot, end_group(a), end_group(b), where=where)


def splice_now(session: Session, *requests: SpliceRequest) -> SpliceReport:
    """What a clerk's form does: record, and refuse the whole request on any problem."""
    report = record_splices(session, list(requests))
    report.refuse_if_problems("splice")
    return report


def splice_count(database: Database) -> int:
    with database.read() as session:
        return session.scalar(select(func.count()).select_from(Splice)) or 0


def assert_record_intact(database: Database, url: str, splices: int) -> None:
    """`splices` splices, each joining exactly two ends, no stray end; `plantdb check` passes."""
    with database.read() as session:
        assert session.scalar(select(func.count()).select_from(Splice)) == splices
        spliced_ends = select(func.count()).where(FiberEnd.splice_id.is_not(None))
        assert session.scalar(spliced_ends) == 2 * splices
        sides = session.execute(
            select(FiberEnd.splice_id, func.count())
            .where(FiberEnd.splice_id.is_not(None))
            .group_by(FiberEnd.splice_id)
            .having(func.count() != 2)
        ).all()
        assert sides == []
    result = PlantCli(url)("check")
    assert result.exit_code == 0, result.output + (result.stderr or "")


# -- two clerks, one end ------------------------------------------------------------------


class WriteGate:
    """On PostgreSQL, holds each thread at its first INSERT until the other arrives too, so
    both clerks have checked the record before either writes (their first attempt only)."""

    def __init__(self, database: Database) -> None:
        self.barrier = threading.Barrier(2)
        self.local = threading.local()
        self.engine = database.engine
        self.active = database.dialect == "postgresql"
        if self.active:
            event.listen(self.engine, "before_cursor_execute", self._before)

    def _before(self, _conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        if getattr(self.local, "armed", False) and statement.lstrip().upper().startswith("INSERT"):
            self.local.armed = False
            self.barrier.wait(timeout=TIMEOUT_S)

    def arm(self) -> None:
        self.local.armed = self.active

    def close(self) -> None:
        if self.active:
            event.remove(self.engine, "before_cursor_execute", self._before)


def race(
    database: Database, requests: dict[str, SpliceRequest]
) -> tuple[dict[str, object], Counter[str]]:
    """Two clerks' splices started together; each one's report or refusal, and attempts."""
    start = threading.Barrier(len(requests))
    gate = WriteGate(database)
    outcomes: dict[str, object] = {}
    attempts: Counter[str] = Counter()

    def clerk(name: str, request: SpliceRequest) -> None:
        def work(session: Session) -> SpliceReport:
            attempts[name] += 1
            return splice_now(session, request)

        gate.arm()
        start.wait(timeout=TIMEOUT_S)
        try:
            outcomes[name] = run_in_transaction(database, work)
        except Exception as exc:  # noqa: BLE001 - the test sorts every outcome below
            outcomes[name] = exc

    threads = [threading.Thread(target=clerk, args=item) for item in requests.items()]
    try:
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join(TIMEOUT_S)
    finally:
        gate.close()
    assert not any(thread.is_alive() for thread in threads)
    return outcomes, attempts


def refusal_text(error: object) -> str:
    assert isinstance(error, PlantError), f"not a clean refusal: {error!r}"
    return " ".join([error.message, *error.details])


def test_two_clerks_splicing_one_end_at_once_exactly_one_wins(yard: Database, db_url: str) -> None:
    for n in range(1, ROUNDS + 1):
        if n % 2:  # both want strand n of K-1, each to a different drop and slot
            contested = f"K-1:{n}"
            requests = {
                "one": one_splice(f"K-1:{n}", f"K-2:{n}", tray=1, slot=n),
                "two": one_splice(f"K-1:{n}", f"K-3:{n}", tray=2, slot=n),
            }
        else:  # different strands, both into slot n of tray 3
            contested = f"tray 3 slot {n}"
            requests = {
                "one": one_splice(f"K-4:{n}", f"K-5:{n}", tray=3, slot=n),
                "two": one_splice(f"K-6:{n}", f"K-7:{n}", tray=3, slot=n),
            }
        outcomes, attempts = race(yard, requests)
        won = [name for name, got in outcomes.items() if isinstance(got, SpliceReport)]
        assert len(won) == 1, outcomes
        assert outcomes[won[0]].added == 1  # type: ignore[union-attr]
        (lost,) = set(requests) - set(won)
        words = refusal_text(outcomes[lost])
        assert contested in words and "nothing was written" in words, words
        if yard.dialect == "postgresql":
            # Both checked before either wrote, so the loser met the winner's row at its
            # insert, and its second attempt refused by name: a retry, not a traceback.
            assert attempts[lost] == 2 and attempts[won[0]] == 1, attempts
        with yard.read() as session:
            recorded = dump_bundle(session).get("splices", [])
        holding = [s for s in recorded if contested in (s["a"], s["b"])]
        holding += [s for s in recorded if f"tray {s['tray']} slot {s['slot']}" == contested]
        assert len(holding) == 1, holding
    assert_record_intact(yard, db_url, splices=ROUNDS)


def test_two_pieces_of_one_strand_spliced_at_once_both_succeed(database: Database) -> None:
    """Splicing /A and /B of one mid-span strand together: both cut the strand, so on
    PostgreSQL one meets the other's cut; its retry sees the cut and goes through."""
    b = clerks_yard()
    b.structure("RY-BLD", 500, kind="building_entrance").span("RY-3", "RY-MH", "RY-BLD", 250.0)
    b.panel("RP-3", "RY-BLD")
    b.cable("M-1", ["RY-1", "RY-3"], [("RP-1", 0.0), ("RC-1", 254.0), ("RP-3", 506.0)])
    run_in_transaction(database, lambda s: load_bundle(s, b.data))
    outcomes, _attempts = race(
        database,
        {
            "one": one_splice("M-1:1/A", "K-2:1", tray=1, slot=1),
            "two": one_splice("M-1:1/B", "K-1:1", tray=1, slot=2),
        },
    )
    assert all(isinstance(got, SpliceReport) for got in outcomes.values()), outcomes
    with database.read() as session:
        bundle = dump_bundle(session)
    assert sorted((s["a"], s["b"]) for s in bundle["splices"]) == [
        ("M-1:1/A", "K-2:1"),
        ("M-1:1/B", "K-1:1"),
    ]
    with database.read() as session:
        assert session.scalar(select(func.count()).select_from(Cut)) == 1  # M-1:1, once
    assert_record_intact(database, database.url, splices=2)


# -- several writers on one database --------------------------------------------------------


def _sheet(writer: int, part: int) -> bytes:
    """Four rows: strands 4p+1..4p+4 of W<w>-A to the same of W<w>-B, in tray w+1."""
    lines = [",".join(COLUMNS)]
    for n in range(4 * part + 1, 4 * part + 5):
        cells = ["RC-1", str(writer + 1), str(n), f"W{writer}-A", str(n), ""]
        lines.append(",".join([*cells, f"W{writer}-B", str(n), "", "fusion", "", "", ""]))
    return ("\n".join(lines) + "\n").encode()


def _outcome(what: str, action: Callable[[], object]) -> tuple[str, str, str]:
    """(what, "ok" | "refused" | "error", message): every outcome of one writer's step."""
    try:
        action()
    except PlantError as exc:
        return what, "refused", " ".join([exc.message, *exc.details])
    except Exception:  # noqa: BLE001 - reported to the test, which fails on it
        return what, "error", traceback.format_exc()
    return what, "ok", ""


def writer_steps(database: Database, writer: int) -> list[tuple[str, Callable[[], object]]]:
    """One clerk's session of work in tray w+1: two sheets (slots 1-8), six single splices
    (9-14), the contested ends X-A:1-4 (15-18), and a look at the closure between steps."""

    def write(a: str, b: str, slot: int) -> Callable[[], object]:
        request = one_splice(a, b, writer + 1, slot)
        return lambda: run_in_transaction(database, lambda s: splice_now(s, request))

    def imported(part: int) -> Callable[[], object]:
        sheet = read_csv_sheet(_sheet(writer, part), f"w{writer}-{part}.csv")

        def work(session: Session) -> SpliceReport:
            report = import_sheet(session, sheet)
            report.refuse_if_problems(f"splice sheet {sheet.name}")
            return report

        return lambda: run_in_transaction(database, work)

    def look() -> object:
        with database.read() as session:
            return live_document(session, "RC-1")

    steps: list[tuple[str, Callable[[], object]]] = []
    for part in range(SHEETS):
        steps += [(f"sheet {part}", imported(part)), ("look", look)]
    own_a, own_b = f"W{writer}-A", f"W{writer}-B"
    singles = range(4 * SHEETS + 1, 4 * SHEETS + SINGLES + 1)
    steps += [(f"single {n}", write(f"{own_a}:{n}", f"{own_b}:{n}", n)) for n in singles]
    for n in range(1, CONTESTED + 1):
        slot = singles[-1] + n
        steps += [(f"contested {n}", write(f"X-A:{n}", f"{own_b}:{slot}", slot))]
        steps += [("look", look)]
    return steps


def writer_process(url: str, writer: int, start: Any, results: Any) -> None:
    """Runs one writer's steps in a process of its own, started with the others."""
    database = Database(url)
    found: list[tuple[str, str, str]] = []
    try:
        steps = writer_steps(database, writer)
        start.wait(TIMEOUT_S)
        found = [_outcome(what, action) for what, action in steps]
    except Exception:  # noqa: BLE001 - reported to the test, which fails on it
        found.append(("start", "error", traceback.format_exc()))
    finally:
        database.dispose()
        results.put((writer, found))


def test_several_writers_never_see_database_is_locked(yard: Database, db_url: str) -> None:
    context = multiprocessing.get_context("spawn")
    start = context.Barrier(WRITERS)
    results = context.Queue()
    processes = [
        context.Process(target=writer_process, args=(db_url, w, start, results))
        for w in range(WRITERS)
    ]
    for process in processes:
        process.start()
    outcomes = dict(results.get(timeout=TIMEOUT_S * 2) for _ in processes)
    for process in processes:
        process.join(TIMEOUT_S)
        assert process.exitcode == 0
    everything = [step for steps in outcomes.values() for step in steps]
    assert not [step for step in everything if "locked" in step[2].lower()], everything
    assert not [step for step in everything if step[1] == "error"], everything
    for steps in outcomes.values():
        own = [step for step in steps if not step[0].startswith("contested")]
        assert {status for _what, status, _ in own} == {"ok"}, own
    for n in range(1, CONTESTED + 1):
        tries = [step for step in everything if step[0] == f"contested {n}"]
        assert len(tries) == WRITERS
        assert sorted(status for _what, status, _ in tries) == ["ok"] + ["refused"] * (WRITERS - 1)
        for _what, status, words in tries:
            if status == "refused":
                assert f"X-A:{n}" in words and "nothing was written" in words, words
    assert_record_intact(yard, db_url, splices=WRITERS * (4 * SHEETS + SINGLES) + CONTESTED)


# -- what run_in_transaction retries ---------------------------------------------------------


def _make_probe(database: Database) -> Iterator[Database]:
    """A scratch table of counters, dropped afterwards (the record's tables stay untouched)."""
    with database.engine.begin() as connection:
        connection.exec_driver_sql("DROP TABLE IF EXISTS race_probe")
        connection.exec_driver_sql(
            "CREATE TABLE race_probe (name VARCHAR(20) PRIMARY KEY, n INTEGER NOT NULL)"
        )
        connection.exec_driver_sql("INSERT INTO race_probe VALUES ('a', 0), ('b', 0)")
    yield database
    with database.engine.begin() as connection:
        connection.exec_driver_sql("DROP TABLE race_probe")


@pytest.fixture
def probe(database: Database) -> Iterator[Database]:
    """Counters on either backend."""
    yield from _make_probe(database)


@pytest.fixture
def pg_probe(postgres_schema_url: str) -> Iterator[Database]:
    """Counters on PostgreSQL only: SQLite serialises writers up front (BEGIN IMMEDIATE), so
    it has no serialization failure or deadlock to retry."""
    database = Database(postgres_schema_url)
    try:
        yield from _make_probe(database)
    finally:
        database.dispose()


def counters(database: Database) -> dict[str, int]:
    with database.read() as session:
        rows = session.execute(text("SELECT name, n FROM race_probe ORDER BY name"))
        return {name: n for name, n in rows}


def together(*works: Callable[[Session], object], database: Database) -> list[object]:
    """Run each work in its own thread's `run_in_transaction`, started at once."""
    start = threading.Barrier(len(works))
    outcomes: list[object] = [None] * len(works)

    def run(i: int) -> None:
        start.wait(timeout=TIMEOUT_S)
        try:
            outcomes[i] = run_in_transaction(database, works[i])
        except Exception as exc:  # noqa: BLE001 - the test looks at every outcome
            outcomes[i] = exc

    threads = [threading.Thread(target=run, args=(i,)) for i in range(len(works))]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(TIMEOUT_S)
    assert not any(thread.is_alive() for thread in threads)
    return outcomes


@pytest.mark.postgres
def test_a_serialization_failure_is_retried_and_the_work_done_once(
    pg_probe: Database,
) -> None:
    """Write skew under SERIALIZABLE: each reads the total and adds a counter of total + 1."""
    gate = threading.Barrier(2)
    attempts: Counter[str] = Counter()

    def adder(name: str) -> Callable[[Session], None]:
        def work(session: Session) -> None:
            attempts[name] += 1
            session.connection(execution_options={"isolation_level": "SERIALIZABLE"})
            total = session.execute(text("SELECT sum(n) FROM race_probe")).scalar_one()
            if attempts[name] == 1:
                gate.wait(timeout=TIMEOUT_S)  # both have read before either writes
            session.execute(
                text("INSERT INTO race_probe VALUES (:name, :n)"), {"name": name, "n": total + 1}
            )

        return work

    outcomes = together(adder("one"), adder("two"), database=pg_probe)
    assert outcomes == [None, None]
    assert sorted(attempts.values()) == [1, 2]  # exactly one lost and was run again
    found = counters(pg_probe)
    # Run one after the other, the second sees the first's counter: 1 then 2, once each.
    assert sorted([found["one"], found["two"]]) == [1, 2] and len(found) == 4


@pytest.mark.postgres
def test_a_deadlock_is_retried_and_the_work_done_once(pg_probe: Database) -> None:
    """Two transactions take the same two rows' locks in opposite orders."""
    gate = threading.Barrier(2)
    attempts: Counter[str] = Counter()

    def crossing(first: str, second: str) -> Callable[[Session], None]:
        def work(session: Session) -> None:
            attempts[first] += 1
            bump = text("UPDATE race_probe SET n = n + 1 WHERE name = :name")
            session.execute(bump, {"name": first})
            if attempts[first] == 1:
                gate.wait(timeout=TIMEOUT_S)  # each holds its first row's lock
            session.execute(bump, {"name": second})

        return work

    outcomes = together(crossing("a", "b"), crossing("b", "a"), database=pg_probe)
    assert outcomes == [None, None]
    assert sorted(attempts.values()) == [1, 2]
    assert counters(pg_probe) == {"a": 2, "b": 2}  # each bumped both rows exactly once


def test_work_that_fails_for_its_own_reasons_is_not_retried(probe: Database) -> None:
    runs: Counter[str] = Counter()

    def refused(session: Session) -> None:
        runs["refused"] += 1
        session.execute(text("UPDATE race_probe SET n = 9"))
        raise PlantError("closure RC-9: no closure is labelled RC-9")

    with pytest.raises(PlantError, match="RC-9"):
        run_in_transaction(probe, refused)
    assert runs["refused"] == 1 and counters(probe) == {"a": 0, "b": 0}

    def duplicate(session: Session) -> None:
        runs["duplicate"] += 1
        session.execute(text("INSERT INTO race_probe VALUES ('a', 1)"))

    # Outside `racing_for` a unique violation is a mistake of the work's own, not a race.
    with pytest.raises(IntegrityError):
        run_in_transaction(probe, duplicate)
    assert runs["duplicate"] == 1 and counters(probe) == {"a": 0, "b": 0}


def test_a_race_lost_at_a_unique_row_is_run_again(probe: Database) -> None:
    runs: Counter[str] = Counter()

    def claim(session: Session) -> None:
        runs["claim"] += 1
        session.execute(text("UPDATE race_probe SET n = n + 1 WHERE name = 'a'"))
        if runs["claim"] == 1:
            raise RaceLost("another clerk recorded a splice on C-1:1 just now")

    run_in_transaction(probe, claim)
    assert runs["claim"] == 2 and counters(probe) == {"a": 1, "b": 0}

    def always_lost(session: Session) -> None:
        runs["lost"] += 1
        raise RaceLost("another clerk recorded a splice on C-1:1 just now")

    with pytest.raises(RaceLost, match="C-1:1 just now"):
        run_in_transaction(probe, always_lost, attempts=3)
    assert runs["lost"] == 3


def test_only_a_unique_violation_is_a_lost_race(probe: Database) -> None:
    def insert(session: Session, values: str) -> None:
        with racing_for("someone else took counter a"):
            session.execute(text(f"INSERT INTO race_probe VALUES {values}"))

    if probe.dialect == "postgresql":
        with pytest.raises(RaceLost, match="someone else took counter a just now; nothing"):
            run_in_transaction(probe, lambda s: insert(s, "('a', 1)"), attempts=2)
    else:  # SQLite writers are serialised: a violation there is never a race
        with pytest.raises(IntegrityError):
            run_in_transaction(probe, lambda s: insert(s, "('a', 1)"))
    with pytest.raises(IntegrityError):  # NOT NULL: no race on any backend
        run_in_transaction(probe, lambda s: insert(s, "('c', NULL)"))
    assert counters(probe) == {"a": 0, "b": 0}


SETTING = ("key", "value")


@pytest.mark.parametrize("rows", [3, COPY_ROWS + 5], ids=["insert", "copy"])
def test_a_bulk_write_meeting_a_unique_row_is_a_lost_race(database: Database, rows: int) -> None:
    """A splice-sheet import writes its rows in bulk (COPY on PostgreSQL from COPY_ROWS rows):
    a row another clerk committed first must still surface as SQLAlchemy's IntegrityError,
    and inside `racing_for` as a lost race, as an ordinary INSERT's would."""
    run_in_transaction(database, lambda s: s.add(Setting(key="k-1", value="theirs")))
    batch = [(f"k-{n}", "mine") for n in range(rows, 0, -1)]  # "k-1" last: after many rows

    def write(session: Session) -> None:
        BulkWriter(session.connection(), page_cache=False).write("setting", SETTING, batch)

    with pytest.raises(IntegrityError):
        run_in_transaction(database, write)
    if database.dialect == "postgresql":

        def raced(session: Session) -> None:
            with racing_for("another clerk recorded these"):
                write(session)

        with pytest.raises(RaceLost, match="another clerk recorded these just now"):
            run_in_transaction(database, raced, attempts=2)
    with database.read() as session:  # nothing of the refused batch was written
        assert session.scalars(select(Setting.value)).all() == ["theirs"]
