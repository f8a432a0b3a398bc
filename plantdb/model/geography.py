"""Where the plant lies: structures, the spans between them, and routes."""

from __future__ import annotations

import enum
from typing import Any

from sqlalchemy import (
    JSON,
    CheckConstraint,
    Float,
    ForeignKey,
    Index,
    Integer,
    String,
    Text,
)
from sqlalchemy.orm import Mapped, mapped_column

from plantdb.model.base import LABEL_LENGTH, Base
from plantdb.model.types import enum_type


class StructureKind(enum.StrEnum):
    CENTRAL_OFFICE = "central_office"
    HUT = "hut"
    CABINET = "cabinet"
    MANHOLE = "manhole"
    HANDHOLE = "handhole"
    VAULT = "vault"
    POLE = "pole"
    PEDESTAL = "pedestal"
    BUILDING_ENTRANCE = "building_entrance"
    CUSTOMER_PREMISES = "customer_premises"
    DATA_CENTER = "data_center"
    OTHER = "other"


class SpanKind(enum.StrEnum):
    UNDERGROUND = "underground"
    AERIAL = "aerial"
    BURIED = "buried"
    INSIDE = "inside"


class Structure(Base):
    """A point in the field or a building (manhole, pole, cabinet, central office...)."""

    __tablename__ = "structure"
    __table_args__ = (
        CheckConstraint("lon >= -180 AND lon <= 180", name="lon_range"),
        CheckConstraint("lat >= -90 AND lat <= 90", name="lat_range"),
        Index("ix_structure_lon_lat", "lon", "lat"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    label: Mapped[str] = mapped_column(String(LABEL_LENGTH), unique=True)
    kind: Mapped[StructureKind] = mapped_column(enum_type(StructureKind, "kind"))
    lon: Mapped[float] = mapped_column(Float)
    lat: Mapped[float] = mapped_column(Float)
    name: Mapped[str | None] = mapped_column(String(200))
    notes: Mapped[str | None] = mapped_column(Text)


class Span(Base):
    """One pathway segment between two structures, with its drawn line and its length."""

    __tablename__ = "span"
    __table_args__ = (
        CheckConstraint("from_structure_id <> to_structure_id", name="distinct_ends"),
        CheckConstraint(
            "surveyed_length_m IS NULL OR surveyed_length_m > 0", name="surveyed_positive"
        ),
        CheckConstraint("geodesic_length_m >= 0", name="geodesic_nonnegative"),
        # The bounding box lets a map viewport select spans with an indexed range query.
        Index("ix_span_bbox", "min_lon", "max_lon", "min_lat", "max_lat"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    label: Mapped[str] = mapped_column(String(LABEL_LENGTH), unique=True)
    kind: Mapped[SpanKind] = mapped_column(enum_type(SpanKind, "kind"))
    from_structure_id: Mapped[int] = mapped_column(ForeignKey("structure.id"), index=True)
    to_structure_id: Mapped[int] = mapped_column(ForeignKey("structure.id"), index=True)
    surveyed_length_m: Mapped[float | None] = mapped_column(Float)
    geodesic_length_m: Mapped[float] = mapped_column(Float)
    geometry: Mapped[list[Any]] = mapped_column(JSON)
    min_lon: Mapped[float] = mapped_column(Float)
    min_lat: Mapped[float] = mapped_column(Float)
    max_lon: Mapped[float] = mapped_column(Float)
    max_lat: Mapped[float] = mapped_column(Float)
    notes: Mapped[str | None] = mapped_column(Text)

    @property
    def length_m(self) -> float:
        """The surveyed length where known, else the geodesic length of the drawn line."""
        if self.surveyed_length_m is not None:
            return self.surveyed_length_m
        return self.geodesic_length_m


class Route(Base):
    """A named chain of spans: a duct bank along a street, a pole line."""

    __tablename__ = "route"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    label: Mapped[str] = mapped_column(String(LABEL_LENGTH), unique=True)
    name: Mapped[str | None] = mapped_column(String(200))


class RouteSpan(Base):
    """One span of a route, in order."""

    __tablename__ = "route_span"
    __table_args__ = (CheckConstraint("seq >= 0", name="seq_nonnegative"),)

    route_id: Mapped[int] = mapped_column(
        ForeignKey("route.id", ondelete="CASCADE"), primary_key=True
    )
    seq: Mapped[int] = mapped_column(Integer, primary_key=True)
    span_id: Mapped[int] = mapped_column(ForeignKey("span.id"), index=True)
