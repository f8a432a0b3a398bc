"""What test crews measured, kept beside what the record expects."""

from __future__ import annotations

import datetime as dt

from sqlalchemy import CheckConstraint, Date, Float, ForeignKey, Integer, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from plantdb.model.base import Base


class LossTest(Base):
    """One insertion-loss measurement of a circuit at one wavelength."""

    __tablename__ = "loss_test"
    __table_args__ = (CheckConstraint("wavelength_nm > 0", name="wavelength_positive"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    circuit_id: Mapped[int] = mapped_column(
        ForeignKey("circuit.id", ondelete="CASCADE"), index=True
    )
    wavelength_nm: Mapped[int] = mapped_column(Integer)
    measured_db: Mapped[float] = mapped_column(Float)
    direction: Mapped[str | None] = mapped_column(String(16))
    tested_on: Mapped[dt.date | None] = mapped_column(Date)
    tested_by: Mapped[str | None] = mapped_column(String(100))
    notes: Mapped[str | None] = mapped_column(Text)


class Setting(Base):
    """A named value the record keeps about itself (how a synthetic plant was built, ...)."""

    __tablename__ = "setting"

    key: Mapped[str] = mapped_column(String(64), primary_key=True)
    value: Mapped[str] = mapped_column(Text)
