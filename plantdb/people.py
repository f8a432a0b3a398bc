"""People, their API tokens and their web sessions: who may use a shared record, and how.

Services take the caller's session and never commit. Secrets leave here once (a new token,
a new session id) and are kept only as hashes. Disabling a person stamps `valid_after`, so
every session and token they had stops working at once, wherever it is being used.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import re
import secrets
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from sqlalchemy import func, select, update
from sqlalchemy.orm import Session

from plantdb.errors import NotFound, PlantError
from plantdb.model import ApiToken, Person, Role, WebSession
from plantdb.model.people import NAME_LENGTH
from plantdb.passwords import check_password_rules, hash_password

ROLES = tuple(role.value for role in Role)
# Letters, digits and . _ - @ (an e-mail address works as a name); no spaces or controls.
_NAME = re.compile(r"[\w.@-]+")
TOKEN_PREFIX = "pdb_"
# Last-seen and last-used stamps are written at most this often, not on every request.
TOUCH_EVERY = dt.timedelta(seconds=60)


def utc_now() -> dt.datetime:
    """Now, in UTC, zone-aware."""
    return dt.datetime.now(dt.UTC)


def secret_hash(secret: str) -> str:
    """The SHA-256 (hex) under which a token or session id is kept."""
    return hashlib.sha256(secret.encode("utf-8")).hexdigest()


@dataclass(frozen=True)
class Identity:
    """Who a request comes from: a person's name and role, and how they proved it."""

    name: str
    role: str
    how: str  # "session" | "token"
    person_id: int


@dataclass(frozen=True)
class SessionPolicy:
    """How long a web session lasts: since its last request, and in all."""

    idle: dt.timedelta = dt.timedelta(minutes=30)
    absolute: dt.timedelta = dt.timedelta(hours=12)


def check_name(name: str) -> None:
    """Refuse a name that is empty, too long, or holds anything but letters, digits, . _ - @."""
    if not name or len(name) > NAME_LENGTH or not _NAME.fullmatch(name):
        raise PlantError(
            f"person name {name!r}: use 1 to {NAME_LENGTH} letters, digits and . _ - @"
        )


def check_role(role: str) -> Role:
    """The role named, or a refusal listing the roles."""
    try:
        return Role(role)
    except ValueError:
        raise PlantError(f"role {role!r}: not one of {', '.join(ROLES)}") from None


def add_person(
    session: Session, name: str, role: str, password: str, *, now: dt.datetime | None = None
) -> Person:
    """Add a person with a role and a password (hashed with argon2id, never kept in clear)."""
    check_name(name)
    kind = check_role(role)
    if session.scalar(select(Person.id).where(Person.name == name)) is not None:
        raise PlantError(f"person {name}: already exists")
    check_password_rules(password, name)
    moment = now or utc_now()
    person = Person(
        name=name,
        role=kind,
        password_hash=hash_password(password),
        disabled=False,
        valid_after=moment,
        created=moment,
    )
    session.add(person)
    session.flush()
    return person


def find_person(session: Session, name: str) -> Person:
    """The person of that name, or NotFound."""
    person = session.scalar(select(Person).where(Person.name == name))
    if person is None:
        raise NotFound(f"no person is named {name}")
    return person


def anyone_defined(session: Session) -> bool:
    """True once any person exists (disabled or not): from then on, everything needs sign-in."""
    return session.scalar(select(Person.id).limit(1)) is not None


def revoke_everything(session: Session, person: Person, now: dt.datetime) -> None:
    """Make every session and token of the person unusable from now on."""
    person.valid_after = now
    session.execute(
        update(WebSession).where(WebSession.person_id == person.id).values(revoked=True)
    )
    session.execute(update(ApiToken).where(ApiToken.person_id == person.id).values(revoked=True))


def disable_person(session: Session, name: str, *, now: dt.datetime | None = None) -> Person:
    """Disable a person: refused at sign-in, and every session and token revoked at once."""
    person = find_person(session, name)
    person.disabled = True
    revoke_everything(session, person, now or utc_now())
    return person


def enable_person(session: Session, name: str) -> Person:
    """Let a disabled person sign in again (their old sessions and tokens stay revoked)."""
    person = find_person(session, name)
    person.disabled = False
    return person


def set_password(
    session: Session, name: str, password: str, *, now: dt.datetime | None = None
) -> Person:
    """Give a person a new password; their sessions and tokens are revoked."""
    person = find_person(session, name)
    check_password_rules(password, name)
    person.password_hash = hash_password(password)
    revoke_everything(session, person, now or utc_now())
    return person


def list_people(session: Session) -> list[dict[str, Any]]:
    """Every person: name, role, whether disabled, when added, how many tokens still work."""
    tokens = (
        select(ApiToken.person_id, func.count().label("n"))
        .join(Person, Person.id == ApiToken.person_id)
        .where(ApiToken.revoked.is_(False), ApiToken.created >= Person.valid_after)
        .group_by(ApiToken.person_id)
        .subquery()
    )
    rows = session.execute(
        select(Person, func.coalesce(tokens.c.n, 0))
        .outerjoin(tokens, tokens.c.person_id == Person.id)
        .order_by(Person.name)
    ).all()
    return [
        {
            "name": person.name,
            "role": person.role.value,
            "disabled": person.disabled,
            "created": person.created.isoformat(),
            "tokens": int(count),
        }
        for person, count in rows
    ]


def add_token(session: Session, name: str, *, now: dt.datetime | None = None) -> str:
    """A new API token for the person, returned once; only its hash is kept."""
    person = find_person(session, name)
    if person.disabled:
        raise PlantError(f"person {name}: disabled; enable them before adding a token")
    token = TOKEN_PREFIX + secrets.token_urlsafe(32)
    session.add(
        ApiToken(person_id=person.id, token_hash=secret_hash(token), created=now or utc_now())
    )
    session.flush()
    return token


def _usable(person: Person, created: dt.datetime, revoked: bool) -> bool:
    return not revoked and not person.disabled and created >= person.valid_after


@dataclass(frozen=True)
class Check:
    """Who a token or session id belongs to (None: nobody), and a stamp to write afterwards.

    The check reads only; `stamp`, when not None, is a small write (last seen, last used, a
    stale session ended) for the caller to run in a writing transaction of its own, so that
    most requests never take the write lock.
    """

    identity: Identity | None
    stamp: Callable[[Session], None] | None = None


def _set_values(table: Any, key: Any, **values: Any) -> Callable[[Session], None]:
    def write(session: Session) -> None:
        session.execute(update(table).where(key).values(**values))

    return write


def check_token(session: Session, token: str, *, now: dt.datetime | None = None) -> Check:
    """Who holds this API token; nobody for an unknown, revoked or disabled one."""
    digest = secret_hash(token)
    row = session.execute(
        select(ApiToken, Person)
        .join(Person, Person.id == ApiToken.person_id)
        .where(ApiToken.token_hash == digest)
    ).first()
    if row is None or not _usable(row[1], row[0].created, row[0].revoked):
        return Check(None)
    stored, person = row
    moment = now or utc_now()
    stamp = None
    if stored.last_used is None or moment - stored.last_used >= TOUCH_EVERY:
        stamp = _set_values(ApiToken, ApiToken.id == stored.id, last_used=moment)
    return Check(Identity(person.name, person.role.value, "token", person.id), stamp)


def authenticate_token(
    session: Session, token: str, *, now: dt.datetime | None = None
) -> Identity | None:
    """Who holds this token (None: nobody), marking it used; call it in a writing session."""
    check = check_token(session, token, now=now)
    if check.stamp is not None:
        check.stamp(session)
    return check.identity


def start_session(session: Session, person_id: int, *, now: dt.datetime | None = None) -> str:
    """A new web session for the person; returns the random id its cookie carries."""
    token = secrets.token_urlsafe(32)
    moment = now or utc_now()
    session.add(
        WebSession(id=secret_hash(token), person_id=person_id, created=moment, last_seen=moment)
    )
    session.flush()
    return token


def check_session(
    session: Session,
    token: str,
    *,
    policy: SessionPolicy | None = None,
    now: dt.datetime | None = None,
) -> Check:
    """Whose web session this is; nobody when it is unknown, ended, revoked or timed out."""
    rules = policy or SessionPolicy()
    moment = now or utc_now()
    digest = secret_hash(token)
    row = session.execute(
        select(WebSession, Person)
        .join(Person, Person.id == WebSession.person_id)
        .where(WebSession.id == digest)
    ).first()
    if row is None or not _usable(row[1], row[0].created, row[0].revoked):
        return Check(None)
    stored, person = row
    if moment - stored.last_seen > rules.idle or moment - stored.created > rules.absolute:
        return Check(None, _set_values(WebSession, WebSession.id == digest, revoked=True))
    stamp = None
    if moment - stored.last_seen >= TOUCH_EVERY:
        stamp = _set_values(WebSession, WebSession.id == digest, last_seen=moment)
    return Check(Identity(person.name, person.role.value, "session", person.id), stamp)


def end_session(session: Session, token: str) -> None:
    """Sign a web session out: its id is refused from now on."""
    session.execute(
        update(WebSession).where(WebSession.id == secret_hash(token)).values(revoked=True)
    )
