"""The plain rows the walk works with: stations, spans, cables, ports, ends, splices."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field


@dataclass(frozen=True)
class StationRow:
    id: int
    seq: int
    place: str  # closure or panel label
    closure: bool
    structure: str
    path_index: int
    mark_m: float | None


@dataclass(frozen=True)
class SpanRow:
    id: int
    label: str
    kind: str
    length_m: float
    reversed: bool
    start: str  # structure where the cable enters the span
    end: str
    geometry: list[list[float]]


@dataclass
class CableRow:
    """A cable as the walk sees it. Its spans and coils are read only when a length or a
    position on the street needs them (marks alone give a piece's length)."""

    id: int
    label: str
    units: int
    fibers_per_unit: int
    construction: str
    fiber_type_id: int
    stations: list[StationRow] = field(default_factory=list)
    _spans: list[SpanRow] | None = None
    # (path index, structure label, length) of each slack coil
    _coils: list[tuple[int, str, float]] | None = None
    _fill: Callable[[CableRow], None] | None = None

    def _load(self) -> None:
        if self._spans is None:
            if self._fill is not None:
                self._fill(self)
            self._spans = self._spans if self._spans is not None else []
            self._coils = self._coils if self._coils is not None else []

    @property
    def spans(self) -> list[SpanRow]:
        self._load()
        assert self._spans is not None
        return self._spans

    @spans.setter
    def spans(self, value: list[SpanRow]) -> None:
        self._spans = value
        if self._coils is None:
            self._coils = []

    @property
    def coils(self) -> list[tuple[int, str, float]]:
        self._load()
        assert self._coils is not None
        return self._coils

    @coils.setter
    def coils(self, value: list[tuple[int, str, float]]) -> None:
        self._coils = value
        if self._spans is None:
            self._spans = []

    def station(self, station_id: int) -> StationRow:
        return next(s for s in self.stations if s.id == station_id)

    def is_end(self, station: StationRow) -> bool:
        return station.seq in (self.stations[0].seq, self.stations[-1].seq)


@dataclass(frozen=True)
class PortRow:
    id: int
    name: str
    owner: str  # panel or equipment label
    panel: bool
    structure: str
    connector: str | None
    polish: str | None
    jumper_id: int | None
    role: str | None = None
    tx_dbm: float | None = None
    rx_sensitivity_dbm: float | None = None
    equipment_id: int | None = None

    @property
    def address(self) -> str:
        return f"{self.owner}:{self.name}"


@dataclass(frozen=True)
class EndRow:
    """A connected fiber end (strand end or splitter leg) and what holds it."""

    id: int
    strand_id: int | None
    station_id: int | None
    side: str | None
    leg_id: int | None
    splice_id: int | None
    splice_side: int | None
    port_id: int | None
    method: str | None


@dataclass(frozen=True)
class SpliceRow:
    id: int
    closure: str
    structure: str
    tray: int
    slot: int
    method: str
    loss_db: float | None


@dataclass(frozen=True)
class SplitterRow:
    id: int
    label: str
    structure: str
    place: str
    inputs: int
    outputs: int
    loss_db: float | None
    legs: dict[str, int]

    @property
    def ratio(self) -> str:
        return f"{self.inputs}x{self.outputs}"
