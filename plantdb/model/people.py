"""People who may use a shared record: their roles, API tokens, web sessions and sign-in tries.

None of this is part of the plant record (bundles never carry it). Every secret is kept only
as a hash: passwords as argon2id hashes, tokens and session ids as SHA-256 of random values.
"""

from __future__ import annotations

import datetime as dt
import enum
from typing import Any

from sqlalchemy import Boolean, DateTime, ForeignKey, Index, Integer, String, TypeDecorator
from sqlalchemy.engine import Dialect
from sqlalchemy.orm import Mapped, mapped_column

from plantdb.model.base import Base
from plantdb.model.types import enum_type

NAME_LENGTH = 64
# A SHA-256 digest in hex.
HASH_LENGTH = 64


class Role(enum.StrEnum):
    """What a person may do (the interface's roles)."""

    VIEWER = "viewer"
    CLERK = "clerk"
    DISPATCHER = "dispatcher"
    ENGINEER = "engineer"
    ADMIN = "admin"


class UtcDateTime(TypeDecorator[dt.datetime]):
    """A moment in UTC: stored without a zone (SQLite keeps none), read back zone-aware."""

    impl = DateTime
    cache_ok = True

    def process_bind_param(self, value: Any, dialect: Dialect) -> dt.datetime | None:
        if value is None:
            return None
        if not isinstance(value, dt.datetime) or value.tzinfo is None:
            raise ValueError(f"a UTC moment needs a zone-aware datetime, not {value!r}")
        return value.astimezone(dt.UTC).replace(tzinfo=None)

    def process_result_value(self, value: Any, dialect: Dialect) -> dt.datetime | None:
        if value is None:
            return None
        moment: dt.datetime = value
        return moment.replace(tzinfo=dt.UTC)


class Person(Base):
    """Someone who signs in to the web UI or holds API tokens."""

    __tablename__ = "person"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    role: Mapped[Role] = mapped_column(enum_type(Role, "role"))
    # argon2id in its PHC string form ($argon2id$v=19$m=...,t=...,p=...$salt$hash).
    password_hash: Mapped[str] = mapped_column(String(200))
    disabled: Mapped[bool] = mapped_column(Boolean, default=False)
    # Sessions and tokens made before this moment are refused: revocation in one stamp.
    valid_after: Mapped[dt.datetime] = mapped_column(UtcDateTime())
    created: Mapped[dt.datetime] = mapped_column(UtcDateTime())


class ApiToken(Base):
    """A bearer token for the JSON API, kept only as the SHA-256 of its random value."""

    __tablename__ = "api_token"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    person_id: Mapped[int] = mapped_column(ForeignKey("person.id", ondelete="CASCADE"), index=True)
    token_hash: Mapped[str] = mapped_column(String(HASH_LENGTH), unique=True)
    created: Mapped[dt.datetime] = mapped_column(UtcDateTime())
    last_used: Mapped[dt.datetime | None] = mapped_column(UtcDateTime())
    revoked: Mapped[bool] = mapped_column(Boolean, default=False)


class WebSession(Base):
    """A signed-in browser: the id is the SHA-256 of the random value its cookie carries."""

    __tablename__ = "web_session"

    id: Mapped[str] = mapped_column(String(HASH_LENGTH), primary_key=True)
    person_id: Mapped[int] = mapped_column(ForeignKey("person.id", ondelete="CASCADE"), index=True)
    created: Mapped[dt.datetime] = mapped_column(UtcDateTime())
    last_seen: Mapped[dt.datetime] = mapped_column(UtcDateTime())
    revoked: Mapped[bool] = mapped_column(Boolean, default=False)


class SignInAttempt(Base):
    """One try at signing in, kept for a while so that repeated failures slow down."""

    __tablename__ = "sign_in_attempt"
    __table_args__ = (
        Index("ix_sign_in_attempt_pair", "account", "address", "at"),
        Index("ix_sign_in_attempt_address", "address", "at"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    # The name typed, which may name nobody; cut to the column's length.
    account: Mapped[str] = mapped_column(String(NAME_LENGTH))
    address: Mapped[str] = mapped_column(String(64))
    at: Mapped[dt.datetime] = mapped_column(UtcDateTime(), index=True)
    ok: Mapped[bool] = mapped_column(Boolean)
