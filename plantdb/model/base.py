"""Declarative base with named constraints, so migrations can alter them on SQLite too."""

from __future__ import annotations

from sqlalchemy import MetaData
from sqlalchemy.orm import DeclarativeBase

# Every constraint gets a predictable name: Alembic's batch mode on SQLite recreates tables and
# can only drop or alter a constraint it can name.
NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_N_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}

LABEL_LENGTH = 64


class Base(DeclarativeBase):
    """Base of every mapped class of the plant record."""

    metadata = MetaData(naming_convention=NAMING_CONVENTION)
