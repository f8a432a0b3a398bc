"""Circuits: named services over the plant, with their ends and status."""

from __future__ import annotations

import enum

from sqlalchemy import CheckConstraint, ForeignKey, Index, Integer, String, Text, text
from sqlalchemy.orm import Mapped, mapped_column

from plantdb.model.base import LABEL_LENGTH, Base
from plantdb.model.types import enum_type

# The path state of a circuit whose walk fails on a records error (see plantdb.trace.circuits).
UNTRACED = "records_error"


class CircuitStatus(enum.StrEnum):
    PLANNED = "planned"
    RESERVED = "reserved"
    ACTIVE = "active"
    OUT_OF_SERVICE = "out_of_service"
    RETIRED = "retired"


class Circuit(Base):
    """A service over the plant: a backbone link, a dark-fiber lease, a PON feeder, a drop."""

    __tablename__ = "circuit"
    __table_args__ = (
        # The circuits no walk can place, named by every live and impact answer: a handful
        # among tens of thousands, so a partial index finds them without a scan (a plain
        # index on a column of two or three values is one the planners rightly skip).
        Index(
            "ix_circuit_untraced",
            "label",
            sqlite_where=text(f"path_state = '{UNTRACED}'"),
            postgresql_where=text(f"path_state = '{UNTRACED}'"),
        ),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    label: Mapped[str] = mapped_column(String(LABEL_LENGTH), unique=True)
    kind: Mapped[str] = mapped_column(String(40))
    status: Mapped[CircuitStatus] = mapped_column(enum_type(CircuitStatus, "status"), index=True)
    a_port_id: Mapped[int] = mapped_column(ForeignKey("port.id"), index=True)
    z_port_id: Mapped[int | None] = mapped_column(ForeignKey("port.id"), index=True)
    customer: Mapped[str | None] = mapped_column(String(200))
    notes: Mapped[str | None] = mapped_column(Text)
    # Kept by plantdb.trace.circuits whenever the record changes under the circuit: how far
    # the path reaches, and the two ends' addresses (so answers listing hundreds of circuits
    # need not join four tables per circuit to name them).
    path_state: Mapped[str | None] = mapped_column(String(16))
    a_address: Mapped[str | None] = mapped_column(String(100))
    z_address: Mapped[str | None] = mapped_column(String(100))
    path_note: Mapped[str | None] = mapped_column(Text)
    # Bumped by every change a person makes to the circuit (its status): an edit made on a
    # page showing an older version is refused, not applied over someone else's change.
    version: Mapped[int] = mapped_column(Integer, server_default=text("1"))


class CircuitPathItem(Base):
    """One step of a circuit's traced path from A to Z, kept so that "which circuits use this
    strand, port or splitter" is an indexed lookup rather than a walk of every circuit.

    Derived data: `plantdb.trace.circuits.refresh_circuits` rewrites a circuit's items from a
    fresh trace whenever the connections under it change, and `plantdb check` verifies them.
    """

    __tablename__ = "circuit_path_item"
    __table_args__ = (
        CheckConstraint("lo_seq IS NULL OR lo_seq <= hi_seq", name="seq_order"),
        Index("ix_circuit_path_item_strand", "strand_id", "lo_seq", "hi_seq"),
        # Covering: cut impact finds the circuits on a cable's span from the index alone.
        Index("ix_circuit_path_item_cable", "cable_id", "lo_index", "hi_index", "circuit_id"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    circuit_id: Mapped[int] = mapped_column(
        ForeignKey("circuit.id", ondelete="CASCADE"), index=True
    )
    position: Mapped[int] = mapped_column(Integer)
    kind: Mapped[str] = mapped_column(String(16))
    strand_id: Mapped[int | None] = mapped_column(ForeignKey("strand.id", ondelete="CASCADE"))
    cable_id: Mapped[int | None] = mapped_column(Integer)
    # The piece of glass used: station seqs and path indexes (spans from the A end), low-high.
    lo_seq: Mapped[int | None] = mapped_column(Integer)
    hi_seq: Mapped[int | None] = mapped_column(Integer)
    lo_index: Mapped[int | None] = mapped_column(Integer)
    hi_index: Mapped[int | None] = mapped_column(Integer)
    port_id: Mapped[int | None] = mapped_column(
        ForeignKey("port.id", ondelete="CASCADE"), index=True
    )
    splitter_id: Mapped[int | None] = mapped_column(
        ForeignKey("splitter.id", ondelete="CASCADE"), index=True
    )
