"""The database itself refuses what can never be true, on SQLite and PostgreSQL alike.

These tests bypass the services: they write rows straight through the ORM, as a careless script
or a future bug might, and expect the named constraint to stop them.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import pytest
from sqlalchemy import inspect, select, update
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from plantdb.db import Database, run_in_transaction
from plantdb.model import (
    Base,
    Cable,
    Circuit,
    CircuitStatus,
    Closure,
    ConstructionKind,
    FiberEnd,
    Jumper,
    Panel,
    Port,
    Side,
    Splice,
    SpliceMethod,
    Station,
    Strand,
    Structure,
    StructureKind,
    TerminationMethod,
    Tray,
    Unit,
)
from plantdb.model.base import NAMING_CONVENTION
from plantdb.records.bundle import load_bundle
from tests.networks import ashgrove


@dataclass
class Ids:
    """Row ids in the Ashgrove network the cases write against."""

    f1: int
    d1: int
    fiber_type: int
    ac1: int
    tray1: int
    co_p1_station: int
    ah2: int

    def strand(self, session: Session, cable: int, number: int) -> int:
        found = session.scalar(
            select(Strand.id).where(Strand.cable_id == cable, Strand.number == number)
        )
        assert found is not None
        return found

    def port(self, session: Session, panel: str, name: str) -> int:
        found = session.scalar(
            select(Port.id)
            .join(Panel, Panel.id == Port.panel_id)
            .where(Panel.label == panel, Port.name == name)
        )
        assert found is not None
        return found


@pytest.fixture
def ids(database: Database) -> Ids:
    run_in_transaction(database, lambda session: load_bundle(session, ashgrove().data))
    with database.read() as s:

        def one(statement: Any) -> int:
            found = s.scalar(statement)
            assert found is not None
            return int(found)

        f1 = one(select(Cable.id).where(Cable.label == "F-1"))
        ac1 = one(select(Closure.id).where(Closure.label == "AC-1"))
        return Ids(
            f1=f1,
            d1=one(select(Cable.id).where(Cable.label == "D-1")),
            fiber_type=one(select(Cable.fiber_type_id).where(Cable.id == f1)),
            ac1=ac1,
            tray1=one(select(Tray.id).where(Tray.closure_id == ac1, Tray.number == 1)),
            co_p1_station=one(
                select(Station.id)
                .join(Panel, Panel.id == Station.panel_id)
                .where(Station.cable_id == f1, Panel.label == "CO-P1")
            ),
            ah2=one(select(Structure.id).where(Structure.label == "AH-2")),
        )


Write = Callable[[Session, Ids], None]


def _strand(cable: str, number: int, unit: int, position: int, unit_fibers: int) -> Write:
    def write(session: Session, ids: Ids) -> None:
        cable_id = ids.f1 if cable == "F-1" else ids.d1
        session.add(
            Strand(
                cable_id=cable_id,
                number=number,
                unit_number=unit,
                position=position,
                unit_fibers=unit_fibers,
            )
        )

    return write


def _unit(number: int, cable_units: int, fibers: int, new_cable: bool = False) -> Write:
    """A unit of D-1 (one unit of 12), or of a new cable F-9 (two units of 12, none yet)."""

    def write(session: Session, ids: Ids) -> None:
        cable_id = ids.d1
        if new_cable:
            cable = Cable(
                label="F-9",
                fiber_type_id=ids.fiber_type,
                construction=ConstructionKind.LOOSE_TUBE,
                units=2,
                fibers_per_unit=12,
                fiber_count=24,
            )
            session.add(cable)
            session.flush()
            cable_id = cable.id
        session.add(Unit(cable_id=cable_id, number=number, cable_units=cable_units, fibers=fibers))

    return write


def _termination(strand: int, port: str) -> Write:
    """F-1:`strand` at its CO-P1 end, landed on CO-P1:`port`."""

    def write(session: Session, ids: Ids) -> None:
        session.add(
            FiberEnd(
                strand_id=ids.strand(session, ids.f1, strand),
                station_id=ids.co_p1_station,
                side=Side.B,
                port_id=ids.port(session, "CO-P1", port),
                termination_method=TerminationMethod.PIGTAIL_SPLICE,
            )
        )

    return write


def _jumper(*sides: tuple[str, int]) -> Write:
    """One new jumper claimed by CO-P1 ports: (port, side) pairs."""

    def write(session: Session, ids: Ids) -> None:
        jumper = Jumper(length_m=2.0)
        session.add(jumper)
        session.flush()
        for port, side in sides:
            session.execute(
                update(Port)
                .where(Port.id == ids.port(session, "CO-P1", port))
                .values(jumper_id=jumper.id, jumper_side=side)
            )

    return write


def _splice(slot: int, capacity: int = 24, other_closure: bool = False) -> Write:
    def write(session: Session, ids: Ids) -> None:
        closure_id = ids.ac1
        if other_closure:
            other = Closure(label="AC-2", structure_id=ids.ah2)
            session.add(other)
            session.flush()
            closure_id = other.id
        session.add(
            Splice(
                closure_id=closure_id,
                tray_id=ids.tray1,
                tray_capacity=capacity,
                slot=slot,
                method=SpliceMethod.FUSION,
            )
        )

    return write


def _structure(session: Session, ids: Ids) -> None:
    session.add(Structure(label="AH-1", kind=StructureKind.MANHOLE, lon=-0.59, lat=51.0))


def _cable(label: str, kind: ConstructionKind, units: int, per_unit: int, count: int) -> Write:
    def write(session: Session, ids: Ids) -> None:
        session.add(
            Cable(
                label=label,
                fiber_type_id=ids.fiber_type,
                construction=kind,
                units=units,
                fibers_per_unit=per_unit,
                fiber_count=count,
            )
        )

    return write


def _circuit(session: Session, ids: Ids) -> None:
    port = ids.port(session, "CO-P1", "20")
    session.add(
        Circuit(label="AG-1", kind="backbone", status=CircuitStatus.PLANNED, a_port_id=port)
    )


def _spliced_and_terminated(session: Session, ids: Ids) -> None:
    splice = Splice(
        closure_id=ids.ac1, tray_id=ids.tray1, tray_capacity=24, slot=9, method=SpliceMethod.FUSION
    )
    session.add(splice)
    session.flush()
    session.add(
        FiberEnd(
            strand_id=ids.strand(session, ids.f1, 20),
            station_id=ids.co_p1_station,
            side=Side.B,
            splice_id=splice.id,
            splice_side=1,
            port_id=ids.port(session, "CO-P1", "20"),
            termination_method=TerminationMethod.FIELD_CONNECTOR,
        )
    )


CASES = [
    # A strand can never claim a place its cable does not have.
    pytest.param(_strand("F-1", 25, 3, 1, 12), "fk_strand_unit", id="strand-in-no-unit"),
    pytest.param(
        _strand("F-1", 25, 2, 1, 12), "ck_strand_number_from_unit", id="strand-misnumbered"
    ),
    pytest.param(
        _strand("D-1", 13, 1, 13, 12), "ck_strand_position_in_unit", id="position-past-unit"
    ),
    pytest.param(_strand("D-1", 13, 1, 13, 13), "fk_strand_unit", id="position-lying-unit-size"),
    pytest.param(_unit(2, 1, 12), "ck_unit_number_in_cable", id="unit-past-units"),
    pytest.param(_unit(2, 2, 12), "fk_unit_cable_construction", id="unit-lying-unit-count"),
    pytest.param(
        _unit(1, 2, 8, new_cable=True), "fk_unit_cable_construction", id="unit-lying-fiber-count"
    ),
    # Each fiber end, port back and port front holds one connection.
    pytest.param(
        _termination(1, "20"), "uq_fiber_end_strand_id_station_id_side", id="fiber-end-twice"
    ),
    pytest.param(_termination(20, "1"), "uq_fiber_end_port_id", id="port-back-twice"),
    pytest.param(_spliced_and_terminated, "ck_fiber_end_one_connection", id="spliced-and-landed"),
    pytest.param(
        _jumper(("20", 1), ("21", 1)), "uq_port_jumper_id_jumper_side", id="jumper-side-twice"
    ),
    pytest.param(
        _jumper(("20", 1), ("21", 2), ("22", 2)),
        "uq_port_jumper_id_jumper_side",
        id="jumper-with-three-ports",
    ),
    pytest.param(_jumper(("20", 3)), "ck_port_jumper_side", id="jumper-side-three"),
    # Tray slots.
    pytest.param(_splice(1), "uq_splice_tray_id_slot", id="slot-taken"),
    pytest.param(_splice(25), "ck_splice_slot_in_tray", id="slot-past-capacity"),
    pytest.param(_splice(25, capacity=30), "fk_splice_tray_slot", id="slot-lying-capacity"),
    pytest.param(_splice(5, other_closure=True), "fk_splice_tray_slot", id="tray-of-other-closure"),
    # Labels and constructions.
    pytest.param(_structure, "uq_structure_label", id="structure-label-twice"),
    pytest.param(
        _cable("F-1", ConstructionKind.LOOSE_TUBE, 2, 12, 24),
        "uq_cable_label",
        id="cable-label-twice",
    ),
    pytest.param(_circuit, "uq_circuit_label", id="circuit-label-twice"),
    pytest.param(
        _cable("F-9", ConstructionKind.LOOSE_TUBE, 2, 12, 36),
        "ck_cable_fiber_count",
        id="fiber-count",
    ),
    pytest.param(
        _cable("F-9", ConstructionKind.CENTRAL_CORE, 2, 6, 12),
        "ck_cable_central_core_one",
        id="central-core-two-units",
    ),
    pytest.param(
        _cable("F-9", ConstructionKind.RIBBON, 3, 8, 24), "ck_cable_ribbon_12", id="ribbon-of-8"
    ),
]


def _names_constraint(database: Database, error: IntegrityError, name: str) -> bool:
    """PostgreSQL names every constraint; SQLite names CHECKs only, and the kind of the rest."""
    text = str(error.orig)
    if database.dialect == "postgresql" or name.startswith("ck_"):
        return name in text
    if name.startswith("uq_"):
        return "UNIQUE constraint failed" in text
    return "FOREIGN KEY constraint failed" in text


@pytest.mark.parametrize(("write", "constraint"), CASES)
def test_the_database_refuses(database: Database, ids: Ids, write: Write, constraint: str) -> None:
    with database.writing() as session:
        with pytest.raises(IntegrityError) as refused, session.begin():
            write(session, ids)
            session.flush()
        assert _names_constraint(database, refused.value, constraint), refused.value.orig


def test_the_same_rows_told_the_truth_are_accepted(database: Database, ids: Ids) -> None:
    """The refusals above are the constraints at work, not rows that could never be written."""
    with database.writing() as session, session.begin():
        _cable("F-9", ConstructionKind.CENTRAL_CORE, 1, 6, 6)(session, ids)
        session.flush()
        cable_id = session.scalar(select(Cable.id).where(Cable.label == "F-9"))
        session.add(Unit(cable_id=cable_id, number=1, cable_units=1, fibers=6))
        session.flush()
        session.add_all(
            Strand(cable_id=cable_id, number=n, unit_number=1, position=n, unit_fibers=6)
            for n in range(1, 7)
        )
        _termination(20, "20")(session, ids)
        _jumper(("21", 1), ("22", 2))(session, ids)
        _splice(24)(session, ids)
    with database.read() as session:
        assert session.scalar(select(Strand.id).where(Strand.cable_id == cable_id).limit(1))
        assert session.scalar(select(Splice.id).where(Splice.slot == 24))


def test_every_constraint_is_named_by_the_convention() -> None:
    prefixes = sorted(NAMING_CONVENTION)
    assert prefixes == ["ck", "fk", "ix", "pk", "uq"]
    for table in Base.metadata.sorted_tables:
        for item in [*table.constraints, *table.indexes]:
            name = item.name
            assert isinstance(name, str) and name, f"unnamed {type(item).__name__} on {table.name}"
            prefix = name.split("_", 1)[0]
            assert prefix in prefixes, f"{table.name}: {name} does not start with pk_/uq_/ck_/..."
            assert name.startswith(f"{prefix}_{table.name}"), f"{name} does not name {table.name}"


def test_the_migrated_database_carries_the_same_names(database: Database) -> None:
    """The migrations created each unique, foreign-key and check constraint under its name."""
    inspector = inspect(database.engine)
    for table in Base.metadata.sorted_tables:
        expected = {
            str(c.name) for c in table.constraints if str(c.name).startswith(("uq_", "fk_", "ck_"))
        }
        found = {c["name"] for c in inspector.get_unique_constraints(table.name)}
        found |= {c["name"] for c in inspector.get_foreign_keys(table.name)}
        found |= {c["name"] for c in inspector.get_check_constraints(table.name)}
        assert expected <= found, f"{table.name}: missing {sorted(expected - found)}"
