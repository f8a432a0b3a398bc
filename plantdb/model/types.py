"""Column types shared by the model modules."""

from __future__ import annotations

import enum

from sqlalchemy import Enum


def enum_type(enum_class: type[enum.Enum], name: str) -> Enum:
    """A portable enum column: VARCHAR plus a named CHECK constraint, stored by `.value`."""
    return Enum(
        enum_class,
        name=name,
        native_enum=False,
        create_constraint=True,
        validate_strings=True,
        length=max(len(str(m.value)) for m in enum_class),
        values_callable=lambda members: [str(m.value) for m in members],
    )
