"""A soak: several clients at once against a real server on loopback, then the record checked.

The app runs under waitress (as `plantdb serve` runs it) on a free loopback port, on the demo
town plus a small yard of free cable ends. For a bounded time, writers POST splice rows to
/api/v1/splices (their own strands, and now and then an end every writer wants) while readers
ask for traces, live strands, cut impacts and break locations. Afterwards `plantdb check` must
pass, every accepted splice must be in the record exactly once with its two ends, and the audit
history must hold one row per accepted splice. No assertion is about timing: the clock only
bounds how much work is done.
"""

from __future__ import annotations

import json
import threading
import time
import urllib.error
import urllib.request
from collections import Counter
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any
from urllib.parse import quote

import pytest
from sqlalchemy import func, select
from waitress.server import create_server

from plantdb.db import Database
from plantdb.model import FiberEnd, Splice
from plantdb.model.history import Change, ChangeAction
from plantdb.records.bundle import dump_bundle
from seed_data.demo_town import build_demo_bundle
from tests.conftest import PlantCli
from tests.networks import SINGLE_MODE, Bundle
from tests.web.conftest import load_into, new_app

SOAK_SECONDS = 6.0  # per backend, after its setup: each backend's run stays near 20 s
WRITERS = 3
READERS = 3
STRANDS = 48  # each writer's own strands: more than it can post in SOAK_SECONDS on loopback
CONTESTED_EVERY = 4  # every 4th post, a writer also tries an end every writer wants
TIMEOUT_S = 60.0  # one request; generous, so a slow machine is not a failure


def soak_yard() -> Bundle:
    """Closure SK-C (manhole SK-MH, 6 trays of 48), far from the demo town: per writer w a
    feeder SK-A<w> and a drop SK-B<w> (48 strands each) and a drop SK-Y<w> (12); and SK-X (12),
    the feeder whose ends every writer tries to splice to its own SK-Y<w>."""
    b = Bundle().fiber_type({**SINGLE_MODE, "name": "SM-SOAK"})
    b.structure("SK-CO", 0, kind="central_office").structure("SK-MH", 300)
    b.structure("SK-PR", 300, 200, kind="customer_premises")
    b.span("SK-1", "SK-CO", "SK-MH", 300.0).span("SK-2", "SK-MH", "SK-PR", 200.0)
    b.closure("SK-C", "SK-MH", trays=6, slots=48)
    b.panel("SK-P1", "SK-CO", ports=24).panel("SK-P2", "SK-PR", ports=24)

    def cable(label: str, toward_premises: bool, units: int) -> None:
        if toward_premises:
            stations = [("SK-C", 0.0), ("SK-P2", 205.0)]
            b.cable(label, ["SK-2"], stations, units=units, fiber_type="SM-SOAK")
        else:
            stations = [("SK-P1", 0.0), ("SK-C", 305.0)]
            b.cable(label, ["SK-1"], stations, units=units, fiber_type="SM-SOAK")

    cable("SK-X", False, 1)
    for w in range(WRITERS):
        cable(f"SK-A{w}", False, 4)
        cable(f"SK-B{w}", True, 4)
        cable(f"SK-Y{w}", True, 1)
    return b


@dataclass
class Tally:
    """What the clients saw: status codes per kind of request, and what was accepted."""

    statuses: Counter[tuple[str, int]] = field(default_factory=Counter)
    accepted: list[tuple[str, str]] = field(default_factory=list)
    contested: dict[int, list[int]] = field(default_factory=dict)
    refusals: list[str] = field(default_factory=list)
    failures: list[str] = field(default_factory=list)
    lock: threading.Lock = field(default_factory=threading.Lock)


def ask(base: str, path: str, rows: list[dict[str, Any]] | None = None) -> tuple[int, Any]:
    """One HTTP request: (status, JSON body or page text)."""
    data = None if rows is None else json.dumps(rows).encode()
    request = urllib.request.Request(
        base + path, data=data, method="GET" if rows is None else "POST"
    )
    if rows is not None:
        request.add_header("Content-Type", "application/json")
    try:
        with urllib.request.urlopen(request, timeout=TIMEOUT_S) as response:
            status, body, kind = (
                response.status,
                response.read(),
                response.headers.get_content_type(),
            )
    except urllib.error.HTTPError as error:
        status, body, kind = error.code, error.read(), error.headers.get_content_type()
    return status, json.loads(body) if kind == "application/json" else body.decode()


def row(a: str, b: str, tray: int, slot: int) -> dict[str, Any]:
    cable_a, strand_a = a.split(":")
    cable_b, strand_b = b.split(":")
    return {
        "closure": "SK-C", "tray": tray, "slot": slot, "a_cable": cable_a, "a_strand": strand_a,
        "b_cable": cable_b, "b_strand": strand_b, "method": "fusion", "spliced_by": "soak crew",
    }  # fmt: skip


def post(base: str, tally: Tally, what: str, item: dict[str, Any]) -> int:
    """POST one splice row; tally its answer. Only 201 or a clean refusal (409, 422) is right."""
    status, body = ask(base, "/api/v1/splices", [item])
    with tally.lock:
        tally.statuses[(what, status)] += 1
        if status == 201:
            tally.accepted += [(s["a"], s["b"]) for s in body["splices"]]
        elif status in (409, 422) and isinstance(body, dict):
            tally.refusals.append(" ".join([body["error"], *body.get("details", [])]))
        else:
            tally.failures.append(f"{what} {item}: {status} {body}")
    return status


def writer(base: str, w: int, deadline: float, tally: Tally) -> None:
    """Splices its own strands one POST at a time; every few posts, a contested end too."""
    for n in range(1, STRANDS + 1):
        if time.monotonic() > deadline:
            return
        own = row(f"SK-A{w}:{n}", f"SK-B{w}:{n}", tray=w + 1, slot=n)
        if post(base, tally, "own splice", own) != 201:
            with tally.lock:
                tally.failures.append(f"writer {w}: its own strand {n} was not spliced")
        if n % CONTESTED_EVERY == 0:
            k = n // CONTESTED_EVERY
            contested = row(f"SK-X:{k}", f"SK-Y{w}:{k}", tray=4 + w, slot=k)
            status = post(base, tally, "contested splice", contested)
            with tally.lock:
                tally.contested.setdefault(k, []).append(status)


def reader(
    base: str, paths: list[str], deadline: float, stop: threading.Event, tally: Tally
) -> None:
    """Asks its questions round and round until the writers are done or time is up."""
    n = 0
    while time.monotonic() < deadline and not stop.is_set():
        path = paths[n % len(paths)]
        status, body = ask(base, path)
        with tally.lock:
            tally.statuses[(path.split("?")[0], status)] += 1
            if status != 200:
                tally.failures.append(f"reader {path}: {status} {body}")
        n += 1


def read_paths(bundle: dict[str, Any]) -> list[str]:
    """Questions about the demo town and the yard being spliced."""
    circuits = [c["label"] for c in bundle["circuits"] if c["status"] == "active"][:3]
    closures = [c["label"] for c in bundle["closures"]][:3]
    spans = [s["label"] for s in bundle["spans"]][:3]
    panels = {p["label"] for p in bundle["panels"]}
    port = next(c["a"] for c in bundle["circuits"] if c["a"].split(":")[0] in panels)
    paths = [f"/api/v1/trace?circuit={quote(c)}" for c in circuits]
    paths += [f"/api/v1/live?closure={quote(c)}" for c in [*closures, "SK-C"]]
    paths += [f"/api/v1/impact?span={quote(s)}" for s in spans]
    paths += [f"/api/v1/locate?port={quote(port)}&distance_m=150", "/closures/SK-C"]
    return paths


@pytest.fixture
def served(db_url: str) -> Iterator[str]:
    """The demo town and the yard, served under waitress on a free loopback port."""
    load_into(db_url, build_demo_bundle())
    load_into(db_url, soak_yard().data)
    app = new_app(db_url)
    server = create_server(app, host="127.0.0.1", port=0, threads=8, ident="plantdb")
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.effective_port}"  # type: ignore[union-attr]
    finally:
        server.close()
        thread.join(TIMEOUT_S)
        server.task_dispatcher.shutdown()
        app.extensions["plantdb.database"].dispose()


def spliced(database: Database) -> tuple[list[tuple[str, str]], int]:
    """The record's splices (a, b) and how many splices do not join exactly two ends."""
    with database.read() as session:
        pairs = [(s["a"], s["b"]) for s in dump_bundle(session).get("splices", [])]
        broken = session.execute(
            select(Splice.id)
            .outerjoin(FiberEnd, FiberEnd.splice_id == Splice.id)
            .group_by(Splice.id)
            .having(func.count(FiberEnd.id) != 2)
        ).all()
    return pairs, len(broken)


def splice_history(database: Database) -> Counter[int]:
    """How many history rows record the insertion of each splice id."""
    with database.read() as session:
        ids = session.scalars(
            select(Change.entity_id).where(
                Change.entity == "splice", Change.action == ChangeAction.INSERT
            )
        )
        return Counter(i for i in ids if i is not None)


def crowd(base: str, paths: list[str]) -> Tally:
    """Writers and readers at once until SOAK_SECONDS have passed (or the writers are done)."""
    tally = Tally()
    deadline = time.monotonic() + SOAK_SECONDS
    stop = threading.Event()
    writers = [
        threading.Thread(target=writer, args=(base, w, deadline, tally)) for w in range(WRITERS)
    ]
    readers = [
        threading.Thread(target=reader, args=(base, paths[i::READERS], deadline, stop, tally))
        for i in range(READERS)
    ]
    for thread in writers + readers:
        thread.start()
    for thread in writers:
        thread.join(SOAK_SECONDS + TIMEOUT_S * 2)
    stop.set()
    for thread in readers:
        thread.join(TIMEOUT_S * 2)
    assert not any(t.is_alive() for t in writers + readers)
    return tally


def assert_every_answer_clean(tally: Tally) -> None:
    assert tally.failures == []
    assert not [key for key in tally.statuses if key[1] >= 500]
    assert tally.statuses[("own splice", 201)] > 0
    assert sum(n for (what, _status), n in tally.statuses.items() if what.startswith("/")) > 0
    for k, statuses in tally.contested.items():
        # Exactly one writer gets each contested end; the others a clean refusal.
        assert statuses.count(201) == 1 and set(statuses) <= {201, 409, 422}, (k, statuses)
    assert all("nothing was written" in words for words in tally.refusals), tally.refusals


@pytest.mark.soak
def test_many_clients_at_once_leave_the_record_intact(served: str, db_url: str) -> None:
    database = Database(db_url)
    try:
        with database.read() as session:
            before = dump_bundle(session)
        history_before = splice_history(database)
        paths = read_paths(before)
        for path in paths:  # every question has an answer before the crowd arrives
            assert ask(served, path)[0] == 200, path
        tally = crowd(served, paths)
        assert_every_answer_clean(tally)

        result = PlantCli(db_url)("check")
        assert result.exit_code == 0, result.output + (result.stderr or "")
        pairs, broken = spliced(database)
        assert broken == 0
        earlier = Counter((s["a"], s["b"]) for s in before.get("splices", []))
        assert len(pairs) == sum(earlier.values()) + len(tally.accepted)
        assert Counter(pairs) - earlier == Counter(tally.accepted)

        # The audit history: one insert row per accepted splice, written with it.
        new_history = splice_history(database) - history_before
        assert sum(new_history.values()) == len(tally.accepted)
        assert set(new_history.values()) == {1}
        with database.read() as session:
            soaked = select(Splice.id).where(Splice.spliced_by == "soak crew")
            assert set(new_history) == set(session.scalars(soaked))
    finally:
        database.dispose()
