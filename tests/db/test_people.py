"""People, tokens, web sessions and sign-in limits, on SQLite and PostgreSQL; and the
`plantdb user` and `plantdb token` commands."""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import pytest
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from plantdb.db import Database, run_in_transaction
from plantdb.errors import NotFound, PlantError
from plantdb.model import ApiToken, Person, SignInAttempt, WebSession
from plantdb.people import (
    SessionPolicy,
    add_person,
    add_token,
    authenticate_token,
    check_session,
    disable_person,
    enable_person,
    list_people,
    secret_hash,
    set_password,
    start_session,
)
from plantdb.sign_in import Limits, try_sign_in, wait_before_try
from tests.conftest import PlantCli

PASSWORD = "heron-lock 7 quay"
T0 = dt.datetime(2026, 3, 2, 9, 0, tzinfo=dt.UTC)


def _add(database: Database, name: str, role: str = "clerk", password: str = PASSWORD) -> None:
    run_in_transaction(database, lambda s: add_person(s, name, role, password, now=T0))


def test_a_person_is_kept_with_a_hash_never_the_password(database: Database) -> None:
    _add(database, "ann.teller", "dispatcher")
    with database.read() as session:
        person = session.scalars(select(Person)).one()
        assert person.role.value == "dispatcher" and not person.disabled
        assert person.password_hash.startswith("$argon2id$")
        assert PASSWORD not in person.password_hash
        assert person.created == T0 and person.valid_after == T0  # read back in UTC


@pytest.mark.parametrize(
    ("name", "role", "password", "words"),
    [
        ("ann", "clerk", PASSWORD, "person ann: already exists"),
        ("bo b", "clerk", PASSWORD, "use 1 to 64 letters"),
        ("bob\n", "clerk", PASSWORD, "use 1 to 64 letters"),
        ("bob", "janitor", PASSWORD, "role 'janitor': not one of viewer, clerk"),
        ("bob", "clerk", "short1!", "too short"),
        ("bob", "clerk", "password123", "common passwords"),
    ],
)
def test_bad_people_are_refused_naming_what(
    database: Database, name: str, role: str, password: str, words: str
) -> None:
    _add(database, "ann")
    with pytest.raises(PlantError, match=words):
        _add(database, name, role, password)
    with database.read() as session:
        assert session.scalar(select(func.count()).select_from(Person)) == 1


def test_tokens_are_shown_once_and_kept_as_a_hash(database: Database) -> None:
    _add(database, "ann")
    token = run_in_transaction(database, lambda s: add_token(s, "ann", now=T0))
    assert token.startswith("pdb_") and len(token) > 40
    with database.read() as session:
        stored = session.scalars(select(ApiToken)).one()
        assert stored.token_hash == secret_hash(token) and token not in stored.token_hash
    later = T0 + dt.timedelta(minutes=5)
    who = run_in_transaction(database, lambda s: authenticate_token(s, token, now=later))
    assert who is not None and (who.name, who.role, who.how) == ("ann", "clerk", "token")
    assert run_in_transaction(database, lambda s: authenticate_token(s, token + "x")) is None
    with database.read() as session:
        assert session.scalars(select(ApiToken)).one().last_used == later
    with pytest.raises(NotFound, match="no person is named nobody"):
        run_in_transaction(database, lambda s: add_token(s, "nobody"))


def _session_owner(database: Database, token: str, now: dt.datetime) -> str | None:
    def work(session: Session) -> str | None:
        check = check_session(session, token, now=now)
        if check.stamp is not None:
            check.stamp(session)
        return check.identity.name if check.identity else None

    return run_in_transaction(database, work)


def test_sessions_time_out_when_idle_and_in_all(database: Database) -> None:
    _add(database, "ann")
    with database.read() as session:
        ann = session.scalars(select(Person)).one().id
    token = run_in_transaction(database, lambda s: start_session(s, ann, now=T0))
    policy = SessionPolicy()
    assert (policy.idle, policy.absolute) == (dt.timedelta(minutes=30), dt.timedelta(hours=12))
    # Used every 25 minutes, the session lives until its twelve hours are up.
    moment = T0
    while moment + dt.timedelta(minutes=25) <= T0 + dt.timedelta(hours=12):
        moment += dt.timedelta(minutes=25)
        assert _session_owner(database, token, moment) == "ann", moment
    assert _session_owner(database, token, T0 + dt.timedelta(hours=12, minutes=1)) is None
    # A second session left alone for 31 minutes is over, and stays over.
    other = run_in_transaction(database, lambda s: start_session(s, ann, now=T0))
    assert _session_owner(database, other, T0 + dt.timedelta(minutes=31)) is None
    assert _session_owner(database, other, T0 + dt.timedelta(minutes=32)) is None
    with database.read() as session:
        ended = session.get(WebSession, secret_hash(other))
        assert ended is not None and ended.revoked


def test_disabling_revokes_every_session_and_token_at_once(database: Database) -> None:
    _add(database, "ann")
    _add(database, "bo", "viewer")
    with database.read() as session:
        ids = {p.name: p.id for p in session.scalars(select(Person))}
    ann_sessions = [
        run_in_transaction(database, lambda s: start_session(s, ids["ann"], now=T0))
        for _ in range(2)
    ]
    ann_token = run_in_transaction(database, lambda s: add_token(s, "ann", now=T0))
    bo_session = run_in_transaction(database, lambda s: start_session(s, ids["bo"], now=T0))
    later = T0 + dt.timedelta(minutes=1)
    run_in_transaction(database, lambda s: disable_person(s, "ann", now=later))
    for token in ann_sessions:
        assert _session_owner(database, token, later) is None
    assert run_in_transaction(database, lambda s: authenticate_token(s, ann_token)) is None
    assert _session_owner(database, bo_session, later) == "bo"  # someone else's: untouched
    # Enabled again, ann may sign in, but what was revoked stays revoked.
    run_in_transaction(database, lambda s: enable_person(s, "ann"))
    assert _session_owner(database, ann_sessions[0], later) is None
    with database.read() as session:
        listed = {p["name"]: p for p in list_people(session)}
    assert listed["ann"]["tokens"] == 0 and not listed["ann"]["disabled"]
    assert listed["bo"]["role"] == "viewer"


def test_a_new_password_revokes_sessions(database: Database) -> None:
    _add(database, "ann")
    result = try_sign_in(database, "ann", PASSWORD, "192.0.2.7")
    assert result.ok and result.session_token
    run_in_transaction(database, lambda s: set_password(s, "ann", "cormorant ledge 19"))
    assert _session_owner(database, result.session_token, dt.datetime.now(dt.UTC)) is None
    assert not try_sign_in(database, "ann", PASSWORD, "192.0.2.7").ok
    assert try_sign_in(database, "ann", "cormorant ledge 19", "192.0.2.7").ok


def test_sign_in_starts_a_new_session_each_time(database: Database) -> None:
    _add(database, "ann", "engineer")
    first = try_sign_in(database, "ann", PASSWORD, "192.0.2.7")
    second = try_sign_in(database, "ann", PASSWORD, "192.0.2.7")
    assert first.ok and second.ok and first.role == "engineer"
    assert first.session_token != second.session_token
    refused = try_sign_in(database, "ann", "not the password", "192.0.2.7")
    unknown = try_sign_in(database, "zed", PASSWORD, "192.0.2.7")
    assert (refused.ok, refused.reason) == (False, "wrong password")
    assert (unknown.ok, unknown.reason) == (False, "unknown name")
    run_in_transaction(database, lambda s: disable_person(s, "ann"))
    disabled = try_sign_in(database, "ann", PASSWORD, "192.0.2.7")
    assert (disabled.ok, disabled.reason) == (False, "disabled")


def _fail(database: Database, name: str, address: str, at: dt.datetime, times: int) -> None:
    def work(session: Session) -> None:
        for n in range(times):
            session.add(
                SignInAttempt(
                    account=name, address=address, at=at + dt.timedelta(seconds=n), ok=False
                )
            )

    run_in_transaction(database, work)


def _wait(database: Database, name: str, address: str, now: dt.datetime) -> float:
    with database.read() as session:
        return wait_before_try(session, name, address, now, Limits()).total_seconds()


def test_failures_from_one_address_slow_that_address_down(database: Database) -> None:
    _add(database, "ann")
    _fail(database, "ann", "198.51.100.9", T0, 2)
    assert _wait(database, "ann", "198.51.100.9", T0 + dt.timedelta(seconds=2)) == 0
    _fail(database, "ann", "198.51.100.9", T0 + dt.timedelta(seconds=2), 1)
    # Past the three free tries of the pair: one second, then doubling.
    assert _wait(database, "ann", "198.51.100.9", T0 + dt.timedelta(seconds=2)) == 1
    _fail(database, "ann", "198.51.100.9", T0 + dt.timedelta(seconds=3), 5)
    assert _wait(database, "ann", "198.51.100.9", T0 + dt.timedelta(seconds=7)) == 32
    # The waits stop growing, and failures older than the window are forgotten.
    _fail(database, "ann", "198.51.100.9", T0 + dt.timedelta(seconds=8), 30)
    assert _wait(database, "ann", "198.51.100.9", T0 + dt.timedelta(seconds=37)) == 15 * 60
    assert _wait(database, "ann", "198.51.100.9", T0 + dt.timedelta(minutes=16)) == 0


def test_the_right_password_from_a_fresh_address_always_gets_in(database: Database) -> None:
    _add(database, "ann")
    now = dt.datetime.now(dt.UTC)
    # Hundreds of failures for ann, from one address and from many.
    _fail(database, "ann", "203.0.113.66", now - dt.timedelta(minutes=5), 200)
    for n in range(40):
        _fail(database, "ann", f"203.0.113.{n}", now - dt.timedelta(minutes=2), 1)
    assert _wait(database, "ann", "203.0.113.66", now) > 60
    # One failure here: within its own free tries, so the failures elsewhere do not count.
    assert _wait(database, "ann", "203.0.113.5", now) == 0
    result = try_sign_in(database, "ann", PASSWORD, "192.0.2.200")
    assert result.ok, result
    blocked = try_sign_in(database, "ann", PASSWORD, "203.0.113.66")
    assert not blocked.ok and blocked.retry_after > 60
    assert blocked.reason == "waiting after failures"


def test_a_typo_at_her_desk_and_guessing_elsewhere_do_not_keep_her_out(
    database: Database,
) -> None:
    _add(database, "ann")
    desk = "192.0.2.10"
    typo = try_sign_in(database, "ann", "heron-lock 7 quya", desk)
    assert (typo.ok, typo.reason) == (False, "wrong password")
    # Then 30 guesses at her password from 10 other addresses, three from each.
    now = dt.datetime.now(dt.UTC)
    guessers = [f"203.0.113.{n}" for n in range(10)]
    for address in guessers:
        _fail(database, "ann", address, now - dt.timedelta(seconds=20), 3)
    assert _wait(database, "ann", desk, dt.datetime.now(dt.UTC)) == 0
    result = try_sign_in(database, "ann", PASSWORD, desk)
    assert result.ok, result
    # The guessers are past their own free tries: the name's count (31 failures) slows them
    # far beyond their own pair's wait (1 s after three failures).
    assert _wait(database, "ann", guessers[0], now) > 60
    # A guesser on a fresh address is not slowed by the name's count: guessing spread over
    # many addresses costs one new address every three tries.
    assert _wait(database, "ann", "198.51.100.200", now) == 0


def test_only_her_own_failures_count_where_she_signed_in_lately(database: Database) -> None:
    _add(database, "ann")
    desk = "192.0.2.11"
    now = dt.datetime.now(dt.UTC)
    run_in_transaction(
        database,
        lambda s: s.add(
            SignInAttempt(account="ann", address=desk, at=now - dt.timedelta(hours=3), ok=True)
        ),
    )
    for n in range(20):
        _fail(database, "ann", f"203.0.113.{n}", now - dt.timedelta(minutes=1), 5)
    # Four typos at her desk: past the pair's three free tries, so its own wait (2 s after
    # the fourth), but not the name's, which 100 failures elsewhere have made 15 minutes.
    _fail(database, "ann", desk, now - dt.timedelta(seconds=30), 4)
    assert _wait(database, "ann", desk, now - dt.timedelta(seconds=27)) == 2
    assert _wait(database, "ann", desk, now) == 0
    assert _wait(database, "ann", "203.0.113.3", now) > 10 * 60
    # A sign-in more than a day old makes the address a stranger again.
    stale = now + dt.timedelta(hours=22)
    _fail(database, "ann", "203.0.113.40", stale - dt.timedelta(minutes=2), 30)
    _fail(database, "ann", desk, stale - dt.timedelta(minutes=1), 3)
    assert _wait(database, "ann", desk, stale) > 60


def test_one_address_trying_many_names_is_slowed(database: Database) -> None:
    now = dt.datetime.now(dt.UTC)
    for n in range(25):
        _fail(database, f"guess{n}", "198.51.100.77", now - dt.timedelta(seconds=30), 1)
    assert _wait(database, "someone-new", "198.51.100.77", now) > 0
    assert _wait(database, "someone-new", "198.51.100.78", now) == 0


def test_the_user_commands(plant: PlantCli) -> None:
    assert plant("init").exit_code == 0
    added = plant("user", "add", "ann", "--role", "clerk", input=PASSWORD + "\n")
    assert added.exit_code == 0, added.output
    assert added.stdout.strip() == "added ann (clerk)"
    assert PASSWORD not in added.output
    # Someone exists now: changing people takes an administrator's token, or the database
    # owner's word (--database-owner), as every command that writes does.
    token = plant("token", "add", "ann", "--database-owner").stdout.strip()
    assert token.startswith("pdb_")
    listed = plant.json("user", "list")["people"]
    assert [(p["name"], p["role"], p["disabled"], p["tokens"]) for p in listed] == [
        ("ann", "clerk", False, 1)
    ]
    assert plant("user", "disable", "ann", "--database-owner").exit_code == 0
    assert plant.json("user", "list")["people"][0]["disabled"] is True
    assert plant("user", "list").stdout.strip() == "ann  clerk  disabled"
    again = plant("--database-owner", "token", "add", "ann", "--json")
    assert again.exit_code == 1 and "disabled" in again.stderr


def _security_lines(text: str) -> list[str]:
    return [line for line in text.splitlines() if line.startswith("plantdb.security ")]


def test_the_people_commands_write_the_security_log(
    plant: PlantCli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    assert plant("init").exit_code == 0
    added = plant("user", "add", "ann", "--role", "clerk", input=PASSWORD + "\n")
    assert added.exit_code == 0, added.output
    (line,) = _security_lines(added.stderr)
    assert line.startswith("plantdb.security INFO person added at=")
    assert 'from="command line" what="ann" role="clerk"' in line
    assert PASSWORD not in added.stderr
    assert added.stdout.strip() == "added ann (clerk)"  # standard output keeps the answer only
    # With $PLANTDB_SECURITY_LOG, where `plantdb serve` writes its log, appended to.
    log = tmp_path / "security.log"
    monkeypatch.setenv("PLANTDB_SECURITY_LOG", str(log))
    token = plant("token", "add", "ann", "--database-owner")
    assert plant("user", "disable", "ann", "--database-owner").exit_code == 0
    assert not _security_lines(token.stderr)
    assert token.stdout.strip().startswith("pdb_")
    lines = _security_lines(log.read_text(encoding="utf-8"))
    owner = [line for line in lines if "database owner acts as administrator" in line]
    assert len(owner) == 2 and all(" WARNING " in line for line in owner)
    assert 'what="token add"' in owner[0] and 'what="user disable"' in owner[1]
    token_line, disabled_line = [line for line in lines if line not in owner]
    assert token_line.startswith("plantdb.security INFO token added at=")
    assert 'what="ann"' in token_line and token.stdout.strip() not in token_line
    assert disabled_line.startswith("plantdb.security INFO person disabled at=")
    # A log that cannot be written is refused before anything changes.
    monkeypatch.setenv("PLANTDB_SECURITY_LOG", str(tmp_path / "no such folder" / "x.log"))
    refused = plant(
        "user", "add", "bo", "--role", "viewer", "--database-owner", input=PASSWORD + "\n"
    )
    assert refused.exit_code == 1 and "no such folder" in refused.stderr
    monkeypatch.delenv("PLANTDB_SECURITY_LOG")
    assert [p["name"] for p in plant.json("user", "list")["people"]] == ["ann"]


@pytest.mark.parametrize(
    ("argv", "stdin", "words"),
    [
        (["user", "add", "bo", "--role", "clerk"], "12345678\n", "common passwords"),
        (["user", "add", "bo", "--role", "clerk"], "", "no password on standard input"),
        (["user", "disable", "nobody"], None, "no person is named nobody"),
        (["token", "add", "nobody"], None, "no person is named nobody"),
    ],
)
def test_user_command_refusals_exit_1_naming_what(
    plant: PlantCli, argv: list[str], stdin: str | None, words: str
) -> None:
    assert plant("init").exit_code == 0
    result = plant(*argv, input=stdin)
    assert result.exit_code == 1
    assert result.stderr.startswith("plantdb: ") and words in result.stderr
    assert "Traceback" not in result.output


def test_an_unknown_role_is_a_usage_error(plant: PlantCli) -> None:
    assert plant("init").exit_code == 0
    result = plant("user", "add", "bo", "--role", "janitor", input=PASSWORD + "\n")
    assert result.exit_code == 2 and "janitor" in result.stderr
    assert json.loads(plant("user", "list", "--json").stdout) == {"people": []}
