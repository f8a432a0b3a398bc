"""Fiber types, cables, their placement along spans, stations with sheath marks, units, strands."""

from __future__ import annotations

import enum

from sqlalchemy import (
    Boolean,
    CheckConstraint,
    Float,
    ForeignKey,
    ForeignKeyConstraint,
    Integer,
    String,
    Text,
    UniqueConstraint,
)
from sqlalchemy.orm import Mapped, mapped_column

from plantdb.model.base import LABEL_LENGTH, Base
from plantdb.model.types import enum_type


class FiberMode(enum.StrEnum):
    SINGLE_MODE = "single-mode"
    MULTIMODE = "multimode"


class ConstructionKind(enum.StrEnum):
    LOOSE_TUBE = "loose_tube"
    RIBBON = "ribbon"
    TIGHT_BUFFERED = "tight_buffered"
    CENTRAL_CORE = "central_core"


class FiberType(Base):
    """A catalogue entry of the record: mode, standard class, optical values per wavelength."""

    __tablename__ = "fiber_type"
    __table_args__ = (
        CheckConstraint(
            "core_index IS NULL OR cladding_index IS NULL OR core_index > cladding_index",
            name="core_above_cladding",
        ),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(LABEL_LENGTH), unique=True)
    mode: Mapped[FiberMode] = mapped_column(enum_type(FiberMode, "mode"))
    standard: Mapped[str | None] = mapped_column(String(64))
    core_index: Mapped[float | None] = mapped_column(Float)
    cladding_index: Mapped[float | None] = mapped_column(Float)
    core_um: Mapped[float | None] = mapped_column(Float)
    cladding_um: Mapped[float | None] = mapped_column(Float)
    notes: Mapped[str | None] = mapped_column(Text)


class FiberTypeWavelength(Base):
    """A fiber type's own values at one wavelength; each overrides the catalogue's default."""

    __tablename__ = "fiber_type_wavelength"
    __table_args__ = (
        CheckConstraint("wavelength_nm > 0", name="wavelength_positive"),
        CheckConstraint("attenuation_max IS NULL OR attenuation_max >= 0", name="max_nonneg"),
        CheckConstraint(
            "attenuation_typical IS NULL OR attenuation_typical >= 0", name="typical_nonneg"
        ),
        CheckConstraint("group_index IS NULL OR group_index >= 1", name="group_index_range"),
    )

    fiber_type_id: Mapped[int] = mapped_column(
        ForeignKey("fiber_type.id", ondelete="CASCADE"), primary_key=True
    )
    wavelength_nm: Mapped[int] = mapped_column(Integer, primary_key=True)
    attenuation_max: Mapped[float | None] = mapped_column(Float)
    attenuation_typical: Mapped[float | None] = mapped_column(Float)
    group_index: Mapped[float | None] = mapped_column(Float)


class Cable(Base):
    """One sheath: its fiber type and construction (N units of M fibers)."""

    __tablename__ = "cable"
    __table_args__ = (
        CheckConstraint("units >= 1", name="units_positive"),
        CheckConstraint("fibers_per_unit >= 1", name="fibers_per_unit_positive"),
        CheckConstraint("fiber_count = units * fibers_per_unit", name="fiber_count"),
        CheckConstraint("construction <> 'central_core' OR units = 1", name="central_core_one"),
        CheckConstraint("construction <> 'ribbon' OR fibers_per_unit = 12", name="ribbon_12"),
        # Target of the units' composite key: a unit can never claim more units or fibers
        # than its cable has.
        UniqueConstraint("id", "units", "fibers_per_unit", name="uq_cable_construction"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    label: Mapped[str] = mapped_column(String(LABEL_LENGTH), unique=True)
    fiber_type_id: Mapped[int] = mapped_column(ForeignKey("fiber_type.id"), index=True)
    construction: Mapped[ConstructionKind] = mapped_column(
        enum_type(ConstructionKind, "construction")
    )
    units: Mapped[int] = mapped_column(Integer)
    fibers_per_unit: Mapped[int] = mapped_column(Integer)
    fiber_count: Mapped[int] = mapped_column(Integer)
    notes: Mapped[str | None] = mapped_column(Text)


class CableSpan(Base):
    """The cable's placement: the spans it occupies, in order from its A end."""

    __tablename__ = "cable_span"
    __table_args__ = (CheckConstraint("seq >= 0", name="seq_nonnegative"),)

    cable_id: Mapped[int] = mapped_column(
        ForeignKey("cable.id", ondelete="CASCADE"), primary_key=True
    )
    seq: Mapped[int] = mapped_column(Integer, primary_key=True)
    span_id: Mapped[int] = mapped_column(ForeignKey("span.id"), index=True)
    # True when the cable runs through the span against its drawn from -> to direction.
    reversed: Mapped[bool] = mapped_column(Boolean)


class Station(Base):
    """A place the cable is worked on (a closure or a panel) with the sheath mark there."""

    __tablename__ = "station"
    __table_args__ = (
        UniqueConstraint("cable_id", "seq"),
        UniqueConstraint("cable_id", "closure_id"),
        UniqueConstraint("cable_id", "panel_id"),
        CheckConstraint("seq >= 0", name="seq_nonnegative"),
        CheckConstraint("path_index >= 0", name="path_index_nonnegative"),
        CheckConstraint("(closure_id IS NULL) <> (panel_id IS NULL)", name="closure_or_panel"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    cable_id: Mapped[int] = mapped_column(ForeignKey("cable.id", ondelete="CASCADE"))
    seq: Mapped[int] = mapped_column(Integer)
    closure_id: Mapped[int | None] = mapped_column(ForeignKey("closure.id"), index=True)
    panel_id: Mapped[int | None] = mapped_column(ForeignKey("panel.id"), index=True)
    mark_m: Mapped[float | None] = mapped_column(Float)
    # How many of the cable's spans lie between its A end and this station (derived on write).
    path_index: Mapped[int] = mapped_column(Integer)


class SlackCoil(Base):
    """A coil of spare cable stored at a structure: in the cable's length, not its progress."""

    __tablename__ = "slack_coil"
    __table_args__ = (
        UniqueConstraint("cable_id", "structure_id"),
        CheckConstraint("length_m > 0", name="length_positive"),
        CheckConstraint("path_index >= 0", name="path_index_nonnegative"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    cable_id: Mapped[int] = mapped_column(ForeignKey("cable.id", ondelete="CASCADE"))
    structure_id: Mapped[int] = mapped_column(ForeignKey("structure.id"), index=True)
    length_m: Mapped[float] = mapped_column(Float)
    path_index: Mapped[int] = mapped_column(Integer)


class Unit(Base):
    """A buffer tube or ribbon, numbered in the TIA-598 sequence."""

    __tablename__ = "unit"
    __table_args__ = (
        ForeignKeyConstraint(
            ["cable_id", "cable_units", "fibers"],
            ["cable.id", "cable.units", "cable.fibers_per_unit"],
            ondelete="CASCADE",
            name="fk_unit_cable_construction",
        ),
        UniqueConstraint("cable_id", "number"),
        UniqueConstraint("cable_id", "number", "fibers", name="uq_unit_fibers"),
        CheckConstraint("number >= 1 AND number <= cable_units", name="number_in_cable"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    cable_id: Mapped[int] = mapped_column(Integer)
    number: Mapped[int] = mapped_column(Integer)
    cable_units: Mapped[int] = mapped_column(Integer)
    fibers: Mapped[int] = mapped_column(Integer)


class Strand(Base):
    """One fiber of a cable; its number counts across units (tube 4 fiber 1 of 12s is 37)."""

    __tablename__ = "strand"
    __table_args__ = (
        ForeignKeyConstraint(
            ["cable_id", "unit_number", "unit_fibers"],
            ["unit.cable_id", "unit.number", "unit.fibers"],
            ondelete="CASCADE",
            name="fk_strand_unit",
        ),
        UniqueConstraint("cable_id", "number"),
        CheckConstraint("position >= 1 AND position <= unit_fibers", name="position_in_unit"),
        CheckConstraint(
            "number = (unit_number - 1) * unit_fibers + position", name="number_from_unit"
        ),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    cable_id: Mapped[int] = mapped_column(Integer)
    number: Mapped[int] = mapped_column(Integer)
    unit_number: Mapped[int] = mapped_column(Integer)
    position: Mapped[int] = mapped_column(Integer)
    unit_fibers: Mapped[int] = mapped_column(Integer)
