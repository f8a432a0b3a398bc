"""Circuits: named services over the plant, with their ends and status."""

from __future__ import annotations

import enum

from sqlalchemy import ForeignKey, Integer, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from plantdb.model.base import LABEL_LENGTH, Base
from plantdb.model.types import enum_type


class CircuitStatus(enum.StrEnum):
    PLANNED = "planned"
    RESERVED = "reserved"
    ACTIVE = "active"
    OUT_OF_SERVICE = "out_of_service"
    RETIRED = "retired"


class Circuit(Base):
    """A service over the plant: a backbone link, a dark-fiber lease, a PON feeder, a drop."""

    __tablename__ = "circuit"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    label: Mapped[str] = mapped_column(String(LABEL_LENGTH), unique=True)
    kind: Mapped[str] = mapped_column(String(40))
    status: Mapped[CircuitStatus] = mapped_column(enum_type(CircuitStatus, "status"), index=True)
    a_port_id: Mapped[int] = mapped_column(ForeignKey("port.id"), index=True)
    z_port_id: Mapped[int | None] = mapped_column(ForeignKey("port.id"), index=True)
    customer: Mapped[str | None] = mapped_column(String(200))
    notes: Mapped[str | None] = mapped_column(Text)
