"""The ORM mappings of the plant record, one module per area."""

from plantdb.model.base import Base
from plantdb.model.cables import (
    Cable,
    CableSpan,
    ConstructionKind,
    FiberMode,
    FiberType,
    FiberTypeWavelength,
    SlackCoil,
    Station,
    Strand,
    Unit,
)
from plantdb.model.circuits import Circuit, CircuitPathItem, CircuitStatus
from plantdb.model.closures import (
    Closure,
    Cut,
    FiberEnd,
    Side,
    Splice,
    SpliceMethod,
    Splitter,
    SplitterLeg,
    TerminationMethod,
    Tray,
)
from plantdb.model.geography import Route, RouteSpan, Span, SpanKind, Structure, StructureKind
from plantdb.model.history import Change, ChangeAction
from plantdb.model.measurements import LossTest, Setting
from plantdb.model.people import ApiToken, Person, Role, SignInAttempt, WebSession
from plantdb.model.terminals import Equipment, EquipmentRole, Jumper, Panel, Port

__all__ = [
    "ApiToken",
    "Base",
    "Cable",
    "CableSpan",
    "Change",
    "ChangeAction",
    "Circuit",
    "CircuitPathItem",
    "CircuitStatus",
    "Closure",
    "ConstructionKind",
    "Cut",
    "Equipment",
    "EquipmentRole",
    "FiberEnd",
    "FiberMode",
    "FiberType",
    "FiberTypeWavelength",
    "Jumper",
    "LossTest",
    "Panel",
    "Person",
    "Port",
    "Role",
    "Route",
    "RouteSpan",
    "Setting",
    "Side",
    "SignInAttempt",
    "SlackCoil",
    "Span",
    "SpanKind",
    "Splice",
    "SpliceMethod",
    "Splitter",
    "SplitterLeg",
    "Station",
    "Strand",
    "Structure",
    "StructureKind",
    "TerminationMethod",
    "Tray",
    "Unit",
    "WebSession",
]
