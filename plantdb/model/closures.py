"""Closures and their trays, splices, cuts, splitters, and the fiber ends they connect."""

from __future__ import annotations

import datetime as dt
import enum

from sqlalchemy import (
    CheckConstraint,
    Date,
    Float,
    ForeignKey,
    ForeignKeyConstraint,
    Integer,
    String,
    Text,
    UniqueConstraint,
    text,
)
from sqlalchemy.orm import Mapped, mapped_column

from plantdb.model.base import LABEL_LENGTH, Base
from plantdb.model.types import enum_type


class SpliceMethod(enum.StrEnum):
    FUSION = "fusion"
    MECHANICAL = "mechanical"
    MASS_FUSION = "mass_fusion"


class TerminationMethod(enum.StrEnum):
    # A factory pigtail fusion-spliced to the strand: counts as one splice in the loss budget.
    PIGTAIL_SPLICE = "pigtail_splice"
    # A connector fitted directly on the strand: no splice.
    FIELD_CONNECTOR = "field_connector"


class Side(enum.StrEnum):
    """Which way a fiber end's glass runs: back toward the cable's A end, or on toward B."""

    A = "A"
    B = "B"


class Closure(Base):
    """A splice enclosure at a structure."""

    __tablename__ = "closure"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    label: Mapped[str] = mapped_column(String(LABEL_LENGTH), unique=True)
    structure_id: Mapped[int] = mapped_column(ForeignKey("structure.id"), index=True)
    notes: Mapped[str | None] = mapped_column(Text)


class Tray(Base):
    """A numbered splice tray; its capacity counts fiber splices."""

    __tablename__ = "tray"
    __table_args__ = (
        UniqueConstraint("closure_id", "number"),
        # Target of the splices' composite key (tray, closure, capacity).
        UniqueConstraint("id", "closure_id", "capacity", name="uq_tray_slot_check"),
        CheckConstraint("number >= 1", name="number_positive"),
        CheckConstraint("capacity >= 1", name="capacity_positive"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    closure_id: Mapped[int] = mapped_column(ForeignKey("closure.id", ondelete="CASCADE"))
    number: Mapped[int] = mapped_column(Integer)
    capacity: Mapped[int] = mapped_column(Integer)


class Splice(Base):
    """A joint of two fiber ends (or a fiber end and a splitter leg) in one tray slot.

    The two ends are the `fiber_end` rows pointing here (splice_side 1 and 2).
    """

    __tablename__ = "splice"
    __table_args__ = (
        ForeignKeyConstraint(
            ["tray_id", "closure_id", "tray_capacity"],
            ["tray.id", "tray.closure_id", "tray.capacity"],
            name="fk_splice_tray_slot",
        ),
        UniqueConstraint("tray_id", "slot"),
        CheckConstraint("slot >= 1 AND slot <= tray_capacity", name="slot_in_tray"),
        CheckConstraint("loss_db IS NULL OR loss_db >= 0", name="loss_nonnegative"),
        # Ids are never reused (SQLite would otherwise reuse the highest after a removal), so
        # an id and a version name one state of one splice, and the history's rows of one
        # splice id are that splice's alone.
        {"sqlite_autoincrement": True},
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    closure_id: Mapped[int] = mapped_column(Integer, index=True)
    tray_id: Mapped[int] = mapped_column(Integer)
    tray_capacity: Mapped[int] = mapped_column(Integer)
    slot: Mapped[int] = mapped_column(Integer)
    method: Mapped[SpliceMethod] = mapped_column(enum_type(SpliceMethod, "method"))
    loss_db: Mapped[float | None] = mapped_column(Float)
    spliced_on: Mapped[dt.date | None] = mapped_column(Date)
    spliced_by: Mapped[str | None] = mapped_column(String(100))
    # Bumped by every change of the splice: an edit made on a page showing an older version
    # is refused (someone else changed it since), not applied over their change.
    version: Mapped[int] = mapped_column(Integer, server_default=text("1"))


class Cut(Base):
    """A strand cut at a mid-span access: from here it has two ends, /A and /B."""

    __tablename__ = "cut"
    __table_args__ = (UniqueConstraint("strand_id", "station_id"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    strand_id: Mapped[int] = mapped_column(ForeignKey("strand.id", ondelete="CASCADE"))
    station_id: Mapped[int] = mapped_column(
        ForeignKey("station.id", ondelete="CASCADE"), index=True
    )


class Splitter(Base):
    """A passive 1xN or 2xN optical splitter in a closure or at a panel."""

    __tablename__ = "splitter"
    __table_args__ = (
        CheckConstraint("inputs IN (1, 2)", name="inputs"),
        CheckConstraint("outputs >= 2", name="outputs"),
        CheckConstraint("loss_db IS NULL OR loss_db >= 0", name="loss_nonnegative"),
        CheckConstraint("(closure_id IS NULL) <> (panel_id IS NULL)", name="closure_or_panel"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    label: Mapped[str] = mapped_column(String(LABEL_LENGTH), unique=True)
    closure_id: Mapped[int | None] = mapped_column(ForeignKey("closure.id"), index=True)
    panel_id: Mapped[int | None] = mapped_column(ForeignKey("panel.id"), index=True)
    inputs: Mapped[int] = mapped_column(Integer)
    outputs: Mapped[int] = mapped_column(Integer)
    loss_db: Mapped[float | None] = mapped_column(Float)

    @property
    def ratio(self) -> str:
        return f"{self.inputs}x{self.outputs}"


class SplitterLeg(Base):
    """One pigtail of a splitter: `in`, `in2` (a 2xN's second input) or `1`..`N`."""

    __tablename__ = "splitter_leg"
    __table_args__ = (UniqueConstraint("splitter_id", "name"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    splitter_id: Mapped[int] = mapped_column(ForeignKey("splitter.id", ondelete="CASCADE"))
    name: Mapped[str] = mapped_column(String(8))


class FiberEnd(Base):
    """One connected end: a strand's end at a station (or a splitter leg) and what holds it.

    A row exists only while the end is connected, and holds exactly one connection: a splice
    (with the other end pointing at the same splice) or a termination on a port's back. So a
    fiber end, a splitter leg or a port's back can never be connected twice.
    """

    __tablename__ = "fiber_end"
    __table_args__ = (
        UniqueConstraint("strand_id", "station_id", "side"),
        UniqueConstraint("leg_id"),
        UniqueConstraint("splice_id", "splice_side"),
        UniqueConstraint("port_id"),
        CheckConstraint(
            "(strand_id IS NOT NULL AND station_id IS NOT NULL AND side IS NOT NULL"
            " AND leg_id IS NULL) OR (strand_id IS NULL AND station_id IS NULL"
            " AND side IS NULL AND leg_id IS NOT NULL)",
            name="strand_or_leg",
        ),
        CheckConstraint(
            "(splice_id IS NOT NULL AND splice_side IS NOT NULL AND port_id IS NULL"
            " AND termination_method IS NULL) OR (splice_id IS NULL AND splice_side IS NULL"
            " AND port_id IS NOT NULL AND termination_method IS NOT NULL)",
            name="one_connection",
        ),
        CheckConstraint("splice_side IS NULL OR splice_side IN (1, 2)", name="splice_side"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    strand_id: Mapped[int | None] = mapped_column(ForeignKey("strand.id", ondelete="CASCADE"))
    station_id: Mapped[int | None] = mapped_column(
        ForeignKey("station.id", ondelete="CASCADE"), index=True
    )
    side: Mapped[Side | None] = mapped_column(enum_type(Side, "side"))
    leg_id: Mapped[int | None] = mapped_column(ForeignKey("splitter_leg.id", ondelete="CASCADE"))
    splice_id: Mapped[int | None] = mapped_column(ForeignKey("splice.id", ondelete="CASCADE"))
    splice_side: Mapped[int | None] = mapped_column(Integer)
    port_id: Mapped[int | None] = mapped_column(ForeignKey("port.id", ondelete="CASCADE"))
    termination_method: Mapped[TerminationMethod | None] = mapped_column(
        enum_type(TerminationMethod, "termination_method")
    )
