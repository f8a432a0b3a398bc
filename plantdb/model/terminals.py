"""Where fiber meets people and gear: panels, equipment, their ports, and jumpers."""

from __future__ import annotations

import enum

from sqlalchemy import CheckConstraint, Float, ForeignKey, Integer, String, Text, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column

from plantdb.model.base import LABEL_LENGTH, Base
from plantdb.model.types import enum_type


class EquipmentRole(enum.StrEnum):
    OLT = "olt"
    ONT = "ont"
    SWITCH = "switch"
    ROUTER = "router"
    TRANSCEIVER = "transceiver"
    # Active gear in the middle of a long route: light continues through its two ports, and
    # the loss report splits into sections between them.
    REGENERATOR = "regenerator"
    AMPLIFIER = "amplifier"
    OTHER = "other"

    @property
    def inline(self) -> bool:
        return self in (EquipmentRole.REGENERATOR, EquipmentRole.AMPLIFIER)


class Panel(Base):
    """A patch panel (fiber distribution frame) at a structure, with numbered ports."""

    __tablename__ = "panel"
    __table_args__ = (CheckConstraint("port_count >= 1", name="port_count_positive"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    label: Mapped[str] = mapped_column(String(LABEL_LENGTH), unique=True)
    structure_id: Mapped[int] = mapped_column(ForeignKey("structure.id"), index=True)
    rack: Mapped[str | None] = mapped_column(String(64))
    port_count: Mapped[int] = mapped_column(Integer)
    connector: Mapped[str | None] = mapped_column(String(16))
    polish: Mapped[str | None] = mapped_column(String(8))
    notes: Mapped[str | None] = mapped_column(Text)


class Equipment(Base):
    """Active gear where the plant ends (an OLT, a switch) or passes through (a regenerator)."""

    __tablename__ = "equipment"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    label: Mapped[str] = mapped_column(String(LABEL_LENGTH), unique=True)
    structure_id: Mapped[int] = mapped_column(ForeignKey("structure.id"), index=True)
    role: Mapped[EquipmentRole] = mapped_column(enum_type(EquipmentRole, "role"))
    rack: Mapped[str | None] = mapped_column(String(64))
    tx_dbm: Mapped[float | None] = mapped_column(Float)
    rx_sensitivity_dbm: Mapped[float | None] = mapped_column(Float)
    notes: Mapped[str | None] = mapped_column(Text)


class Jumper(Base):
    """A patch cord between two port fronts; its two ports point at it (sides 1 and 2)."""

    __tablename__ = "jumper"
    __table_args__ = (CheckConstraint("length_m IS NULL OR length_m >= 0", name="length"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    length_m: Mapped[float | None] = mapped_column(Float)


class Port(Base):
    """A panel port or an equipment port. Its front takes at most one jumper."""

    __tablename__ = "port"
    __table_args__ = (
        UniqueConstraint("panel_id", "name"),
        UniqueConstraint("equipment_id", "name"),
        UniqueConstraint("jumper_id", "jumper_side"),
        CheckConstraint("(panel_id IS NULL) <> (equipment_id IS NULL)", name="panel_or_equipment"),
        CheckConstraint("(jumper_id IS NULL) = (jumper_side IS NULL)", name="jumper_pair"),
        CheckConstraint("jumper_side IS NULL OR jumper_side IN (1, 2)", name="jumper_side"),
        CheckConstraint("number IS NULL OR number >= 1", name="number_positive"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    panel_id: Mapped[int | None] = mapped_column(ForeignKey("panel.id", ondelete="CASCADE"))
    equipment_id: Mapped[int | None] = mapped_column(ForeignKey("equipment.id", ondelete="CASCADE"))
    name: Mapped[str] = mapped_column(String(32))
    number: Mapped[int | None] = mapped_column(Integer)
    connector: Mapped[str | None] = mapped_column(String(16))
    polish: Mapped[str | None] = mapped_column(String(8))
    jumper_id: Mapped[int | None] = mapped_column(ForeignKey("jumper.id"), index=True)
    jumper_side: Mapped[int | None] = mapped_column(Integer)
