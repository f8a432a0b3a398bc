"""Signing in with a name and password, slowed down after failures but never locked out.

Failed tries are counted over a window. Three counts each impose a growing wait (doubling
from one second, capped) once past their free allowance:

- the (name, address) pair: someone guessing one person's password from one place;
- the address: someone trying many names from one place;
- the name, across all addresses: guessing spread over many places. This one applies only
  to an address that has used up its own free tries for this name in the window (as many as
  the pair's), and never to an address this name has signed in from in the last day.

So failures made elsewhere never slow a person at a fresh address, at an address where she
has failed fewer than `pair_free` times, or at one she signed in from in the last day: only
that address's own failures count against her there. Guessing spread over many addresses
still meets the name's count at each address once that address has had its free tries.

A try made during a wait is refused without checking the password. There is no hard lockout
of an account: a flood of failures from elsewhere cannot keep its owner out.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from sqlalchemy import ColumnElement, delete, func, select, update
from sqlalchemy.orm import Session

from plantdb.db import Database, run_in_transaction
from plantdb.model import Person, SignInAttempt
from plantdb.model.people import NAME_LENGTH
from plantdb.passwords import hash_password, needs_rehash, spend_verify_time, verify_password
from plantdb.people import start_session, utc_now

ADDRESS_LENGTH = 64
# Old tries are deleted once they can no longer count toward any wait.
KEEP_ATTEMPTS = dt.timedelta(days=1)


@dataclass(frozen=True)
class Limits:
    """How failures slow sign-in down."""

    window: dt.timedelta = dt.timedelta(minutes=15)
    pair_free: int = 3
    address_free: int = 20
    account_free: int = 10
    first_wait: dt.timedelta = dt.timedelta(seconds=1)
    longest_wait: dt.timedelta = dt.timedelta(minutes=15)

    def wait_after(self, failures: int, free: int) -> dt.timedelta:
        """The wait imposed after `failures` failures when `free` of them cost nothing."""
        if failures < free:
            return dt.timedelta(0)
        doubled = self.first_wait * 2 ** min(failures - free, 20)
        return min(doubled, self.longest_wait)


@dataclass(frozen=True)
class SignInResult:
    """What came of a try: a new session id on success, else why not and how long to wait."""

    ok: bool
    name: str
    role: str | None = None
    session_token: str | None = None
    reason: str = ""
    retry_after: int = 0


def _failures(
    session: Session, since: dt.datetime, *where: ColumnElement[bool]
) -> tuple[int, dt.datetime | None]:
    row = session.execute(
        select(func.count(), func.max(SignInAttempt.at)).where(
            SignInAttempt.ok.is_(False), SignInAttempt.at > since, *where
        )
    ).one()
    return int(row[0]), row[1]


def _last_success(
    session: Session, account: str, address: str, since: dt.datetime
) -> dt.datetime | None:
    """When this name last signed in from this address after `since` (None: not since)."""
    return session.scalar(
        select(func.max(SignInAttempt.at)).where(
            SignInAttempt.ok.is_(True),
            SignInAttempt.account == account,
            SignInAttempt.address == address,
            SignInAttempt.at > since,
        )
    )


def wait_before_try(
    session: Session, account: str, address: str, now: dt.datetime, limits: Limits
) -> dt.timedelta:
    """How long this (name, address) must still wait before its next try (zero: go ahead)."""
    account, address = account[:NAME_LENGTH], address[:ADDRESS_LENGTH]
    since = now - limits.window
    success = _last_success(session, account, address, now - KEEP_ATTEMPTS)
    pair_since = max(since, success) if success else since
    same_account = SignInAttempt.account == account
    same_address = SignInAttempt.address == address
    pair = _failures(session, pair_since, same_account, same_address)
    counts = [
        (pair, limits.pair_free),
        (_failures(session, since, same_address), limits.address_free),
    ]
    if success is None and pair[0] >= limits.pair_free:
        # Only here do failures made elsewhere count: see the module's docstring.
        counts.append((_failures(session, since, same_account), limits.account_free))
    wait = dt.timedelta(0)
    for (failures, last), free in counts:
        if last is not None:
            wait = max(wait, last + limits.wait_after(failures, free) - now)
    return wait


def record_attempt(session: Session, account: str, address: str, ok: bool, now: dt.datetime) -> int:
    """Keep a try for the counts (its id), and forget tries too old to count."""
    session.execute(delete(SignInAttempt).where(SignInAttempt.at < now - KEEP_ATTEMPTS))
    attempt = SignInAttempt(
        account=account[:NAME_LENGTH], address=address[:ADDRESS_LENGTH], at=now, ok=ok
    )
    session.add(attempt)
    session.flush()
    return attempt.id


@dataclass(frozen=True)
class _Stored:
    person_id: int
    role: str
    password_hash: str
    disabled: bool


def _lookup(session: Session, name: str) -> _Stored | None:
    person = session.scalar(select(Person).where(Person.name == name))
    if person is None:
        return None
    return _Stored(person.id, person.role.value, person.password_hash, person.disabled)


def _verdict(stored: _Stored | None, password: str) -> str:
    """Why a try fails ("" when it succeeds); the password is checked outside any transaction
    (argon2id takes a good fraction of a second and must not hold the write lock)."""
    if stored is None:
        spend_verify_time(password)
        return "unknown name"
    if not verify_password(stored.password_hash, password):
        return "wrong password"
    return "disabled" if stored.disabled else ""


def try_sign_in(
    database: Database,
    name: str,
    password: str,
    address: str,
    *,
    now: dt.datetime | None = None,
    limits: Limits | None = None,
) -> SignInResult:
    """Try a name and password from an address; on success, start a web session.

    The try is counted as a failure before the password is checked, in the transaction that
    checks the wait, so tries sent side by side cannot all slip through one free moment.
    """
    rules = limits or Limits()
    moment = now or utc_now()

    def begin(session: Session) -> tuple[dt.timedelta, _Stored | None, int | None]:
        wait = wait_before_try(session, name, address, moment, rules)
        if wait > dt.timedelta(0):
            return wait, None, None
        return wait, _lookup(session, name), record_attempt(session, name, address, False, moment)

    wait, stored, attempt = run_in_transaction(database, begin)
    if attempt is None:
        seconds = max(1, int(wait.total_seconds() + 0.999))
        return SignInResult(False, name, reason="waiting after failures", retry_after=seconds)
    reason = _verdict(stored, password)
    if reason or stored is None:
        return SignInResult(False, name, reason=reason)
    fresh_hash = hash_password(password) if needs_rehash(stored.password_hash) else None

    def finish(session: Session) -> str:
        session.execute(update(SignInAttempt).where(SignInAttempt.id == attempt).values(ok=True))
        if fresh_hash is not None:
            session.execute(
                update(Person).where(Person.id == stored.person_id).values(password_hash=fresh_hash)
            )
        return start_session(session, stored.person_id, now=moment)

    token = run_in_transaction(database, finish)
    return SignInResult(True, name, role=stored.role, session_token=token)
