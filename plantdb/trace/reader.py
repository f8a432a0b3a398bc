"""Every query the walk makes, in one place: indexed point lookups, remembered per request.

The walk asks thousands of small questions on a large plant, so they go straight to the
database driver on the session's own connection (inside its transaction) as fixed SQL
strings: no statement building, no ORM bookkeeping per hop. Every query here is a point
lookup on an index (see the model's constraints), and a cable's stations, spans and coils
are read once per request. The SQL is plain and portable between SQLite and PostgreSQL;
only the parameter marks differ.
"""

from __future__ import annotations

import json
from typing import Any

from sqlalchemy.orm import Session

from plantdb.errors import NotFound, RecordsError
from plantdb.trace.rawsql import RawSql
from plantdb.trace.rows import (
    CableRow,
    EndRow,
    PortRow,
    SpanRow,
    SpliceRow,
    SplitterRow,
    StationRow,
)

__all__ = [
    "CableRow",
    "EndRow",
    "PlantReader",
    "PortRow",
    "SpanRow",
    "SpliceRow",
    "SplitterRow",
    "StationRow",
]

_END = (
    "SELECT id, strand_id, station_id, side, leg_id, splice_id, splice_side, port_id,"
    " termination_method FROM fiber_end"
)
# A connected end with, in the same row, the splice holding it and the end on its other side
# (and that end's strand): one query per hop instead of three.
_JOINED = (
    "SELECT e.id, e.strand_id, e.station_id, e.side, e.leg_id, e.splice_id, e.splice_side,"
    " e.port_id, e.termination_method, o.id, o.strand_id, o.station_id, o.side, o.leg_id,"
    " o.splice_id, o.splice_side, o.port_id, o.termination_method, c.label, t.label, y.number,"
    " s.slot, s.method, s.loss_db, os.cable_id, os.number FROM fiber_end e"
    " LEFT JOIN fiber_end o ON o.splice_id = e.splice_id AND o.splice_side <> e.splice_side"
    " LEFT JOIN splice s ON s.id = e.splice_id LEFT JOIN closure c ON c.id = s.closure_id"
    " LEFT JOIN structure t ON t.id = c.structure_id LEFT JOIN tray y ON y.id = s.tray_id"
    " LEFT JOIN strand os ON os.id = o.strand_id"
)

SQL = {
    "panel_port": "SELECT p.id FROM panel o JOIN port p ON p.panel_id = o.id"
    " WHERE o.label = ? AND p.name = ?",
    "equipment_port": "SELECT p.id FROM equipment o JOIN port p ON p.equipment_id = o.id"
    " WHERE o.label = ? AND p.name = ?",
    "panel": "SELECT id FROM panel WHERE label = ?",
    "equipment": "SELECT id FROM equipment WHERE label = ?",
    "cable_id": "SELECT id FROM cable WHERE label = ?",
    "strand_id": "SELECT id FROM strand WHERE cable_id = ? AND number = ?",
    "circuit": "SELECT id, status, a_port_id, z_port_id, customer FROM circuit WHERE label = ?",
    "cable": "SELECT k.label, k.units, k.fibers_per_unit, k.construction, k.fiber_type_id,"
    " s.id, s.seq, COALESCE(c.label, p.label), s.closure_id, t.label, s.path_index, s.mark_m"
    " FROM cable k JOIN station s ON s.cable_id = k.id"
    " LEFT JOIN closure c ON c.id = s.closure_id"
    " LEFT JOIN panel p ON p.id = s.panel_id"
    " JOIN structure t ON t.id = COALESCE(c.structure_id, p.structure_id)"
    " WHERE k.id = ? ORDER BY s.seq",
    "spans": "SELECT sp.id, sp.label, sp.kind, COALESCE(sp.surveyed_length_m,"
    " sp.geodesic_length_m), cs.reversed, a.label, b.label, sp.geometry"
    " FROM cable_span cs JOIN span sp ON sp.id = cs.span_id"
    " JOIN structure a ON a.id = sp.from_structure_id"
    " JOIN structure b ON b.id = sp.to_structure_id"
    " WHERE cs.cable_id = ? ORDER BY cs.seq",
    "coils": "SELECT k.path_index, t.label, k.length_m FROM slack_coil k"
    " JOIN structure t ON t.id = k.structure_id WHERE k.cable_id = ?",
    "strand": "SELECT cable_id, number FROM strand WHERE id = ?",
    "cuts": "SELECT station_id FROM cut WHERE strand_id = ?",
    "fiber_type": "SELECT name, mode, standard FROM fiber_type WHERE id = ?",
    "fiber_values": "SELECT wavelength_nm, attenuation_max, attenuation_typical, group_index"
    " FROM fiber_type_wavelength WHERE fiber_type_id = ?",
    "end_at": _JOINED + " WHERE e.strand_id = ? AND e.station_id = ? AND e.side = ?",
    "leg_end": _JOINED + " WHERE e.leg_id = ?",
    "termination": _END + " WHERE port_id = ?",
    "other_side": "SELECT e.id, e.strand_id, e.station_id, e.side, e.leg_id, e.splice_id,"
    " e.splice_side, e.port_id, e.termination_method, c.label, t.label, y.number,"
    " s.slot, s.method, s.loss_db FROM fiber_end e"
    " JOIN splice s ON s.id = e.splice_id JOIN closure c ON c.id = s.closure_id"
    " JOIN structure t ON t.id = c.structure_id JOIN tray y ON y.id = s.tray_id"
    " WHERE e.splice_id = ? AND e.splice_side <> ?",
    "port": "SELECT p.name, COALESCE(o.label, e.label), p.panel_id, t.label, p.connector,"
    " p.polish, p.jumper_id, e.role, e.tx_dbm, e.rx_sensitivity_dbm, p.equipment_id"
    " FROM port p LEFT JOIN panel o ON o.id = p.panel_id"
    " LEFT JOIN equipment e ON e.id = p.equipment_id"
    " JOIN structure t ON t.id = COALESCE(o.structure_id, e.structure_id)"
    " WHERE p.id = ?",
    "jumper_peer": "SELECT p.id, j.length_m FROM port p JOIN jumper j ON j.id = p.jumper_id"
    " WHERE p.jumper_id = ? AND p.id <> ?",
    "inline_peer": "SELECT id FROM port WHERE equipment_id = ? AND id <> ?",
    "leg": "SELECT splitter_id, name FROM splitter_leg WHERE id = ?",
    "splitter": "SELECT s.label, t.label, COALESCE(c.label, p.label), s.inputs, s.outputs,"
    " s.loss_db FROM splitter s LEFT JOIN closure c ON c.id = s.closure_id"
    " LEFT JOIN panel p ON p.id = s.panel_id"
    " JOIN structure t ON t.id = COALESCE(c.structure_id, p.structure_id)"
    " WHERE s.id = ?",
    "legs": "SELECT id, name FROM splitter_leg WHERE splitter_id = ?",
    "structure_point": "SELECT lon, lat FROM structure WHERE label = ?",
    "splice_place": "SELECT c.label, y.number, s.slot FROM splice s"
    " JOIN closure c ON c.id = s.closure_id JOIN tray y ON y.id = s.tray_id WHERE s.id = ?",
}


def _end(row: Any) -> EndRow:
    return EndRow(row[0], row[1], row[2], row[3], row[4], row[5], row[6], row[7], row[8])


class PlantReader:
    """Answers the walk's questions about one database, remembering answers for one request."""

    def __init__(self, session: Session) -> None:
        self.session = session
        self.sql = RawSql(session)
        self._cables: dict[int, CableRow] = {}
        self._strand_cable: dict[int, tuple[int, int]] = {}
        self._cuts: dict[int, list[int]] = {}
        self._ports: dict[int, PortRow] = {}
        self._splitters: dict[int, SplitterRow] = {}
        self._leg_splitter: dict[int, tuple[int, str]] = {}
        self._fiber_types: dict[int, tuple[str, str, str | None]] = {}
        self._fiber_values: dict[int, dict[int, tuple[Any, Any, Any]]] = {}
        self._peers: dict[int, tuple[SpliceRow, EndRow]] = {}

    def rows(self, name: str, *params: Any) -> list[Any]:
        """Run one of the fixed queries."""
        return self.sql.rows(SQL[name], params)

    def row(self, name: str, *params: Any) -> Any:
        found = self.rows(name, *params)
        return found[0] if found else None

    # -- labels to ids -------------------------------------------------------------------
    def port_id(self, owner: str, name: str) -> int:
        row = self.row("panel_port", owner, name) or self.row("equipment_port", owner, name)
        if row is None:
            if self.row("panel", owner) or self.row("equipment", owner):
                raise NotFound(f"{owner}:{name}: {owner} has no port {name}")
            raise NotFound(f"{owner}:{name}: no panel or equipment is labelled {owner}")
        return int(row[0])

    def cable_id(self, label: str) -> int:
        row = self.row("cable_id", label)
        if row is None:
            raise NotFound(f"no cable is labelled {label}")
        return int(row[0])

    def strand_id(self, cable_id: int, number: int) -> int:
        row = self.row("strand_id", cable_id, number)
        if row is None:
            cable = self.cable(cable_id)
            raise NotFound(
                f"{cable.label}:{number}: cable {cable.label} has strands 1-"
                f"{cable.units * cable.fibers_per_unit}"
            )
        self._strand_cable[row[0]] = (cable_id, number)
        return int(row[0])

    def circuit(self, label: str) -> tuple[int, str, int, int | None, str | None]:
        """(id, status, a port id, z port id, customer) of a circuit."""
        row = self.row("circuit", label)
        if row is None:
            raise NotFound(f"no circuit is labelled {label}")
        return row[0], row[1], row[2], row[3], row[4]

    # -- cables and strands --------------------------------------------------------------
    def cable(self, cable_id: int) -> CableRow:
        if cable_id not in self._cables:
            self._cables[cable_id] = self._load_cable(cable_id)
        return self._cables[cable_id]

    def _load_cable(self, cable_id: int) -> CableRow:
        rows = self.rows("cable", cable_id)
        label, units, per_unit, construction, fiber_type = rows[0][:5]
        cable = CableRow(cable_id, label, units, per_unit, construction, fiber_type)
        cable.stations = [
            StationRow(r[5], r[6], r[7], r[8] is not None, r[9], r[10], r[11]) for r in rows
        ]
        cable._fill = self._fill_cable
        return cable

    def _fill_cable(self, cable: CableRow) -> None:
        """Read a cable's spans and slack coils (only when a layout needs them)."""
        spans = []
        for r in self.rows("spans", cable.id):
            flipped = bool(r[4])
            first, last = (r[6], r[5]) if flipped else (r[5], r[6])
            geometry = json.loads(r[7]) if isinstance(r[7], str) else r[7]
            spans.append(SpanRow(r[0], r[1], r[2], r[3], flipped, first, last, geometry))
        cable._spans = spans
        cable._coils = [(r[0], r[1], r[2]) for r in self.rows("coils", cable.id)]

    def strand(self, strand_id: int) -> tuple[CableRow, int]:
        """(cable, strand number) of a strand."""
        if strand_id not in self._strand_cable:
            cable_id, number = self.row("strand", strand_id)
            self._strand_cable[strand_id] = (cable_id, number)
        cable_id, number = self._strand_cable[strand_id]
        return self.cable(cable_id), number

    def cut_stations(self, strand_id: int) -> list[int]:
        """Ids of the stations where this strand is cut."""
        if strand_id not in self._cuts:
            self._cuts[strand_id] = [r[0] for r in self.rows("cuts", strand_id)]
        return self._cuts[strand_id]

    def fiber_mode(self, fiber_type_id: int) -> tuple[str, str, str | None]:
        """(name, mode, standard) of a fiber type."""
        if fiber_type_id not in self._fiber_types:
            name, mode, standard = self.row("fiber_type", fiber_type_id)
            self._fiber_types[fiber_type_id] = (name, mode, standard)
        return self._fiber_types[fiber_type_id]

    def fiber_values(self, fiber_type_id: int, nm: int) -> tuple[Any, Any, Any]:
        """(attenuation max, typical, group index) the fiber type records at `nm` (or Nones)."""
        if fiber_type_id not in self._fiber_values:
            self._fiber_values[fiber_type_id] = {
                r[0]: (r[1], r[2], r[3]) for r in self.rows("fiber_values", fiber_type_id)
            }
        return self._fiber_values[fiber_type_id].get(nm, (None, None, None))

    def structure_point(self, label: str) -> list[float]:
        lon, lat = self.row("structure_point", label)
        return [lon, lat]

    # -- connections ---------------------------------------------------------------------
    def _joined(self, row: Any) -> EndRow:
        """The end of a joined row, remembering its splice and other side for `other_side`."""
        end = _end(row)
        if row[9] is not None:
            splice = SpliceRow(row[5], row[18], row[19], row[20], row[21], row[22], row[23])
            self._peers[end.id] = (splice, _end(row[9:18]))
            if row[10] is not None:
                self._strand_cable[row[10]] = (row[24], row[25])
        return end

    def end_at(self, strand_id: int, station_id: int, side: str) -> EndRow | None:
        row = self.row("end_at", strand_id, station_id, side)
        return self._joined(row) if row else None

    def leg_end(self, leg_id: int) -> EndRow | None:
        row = self.row("leg_end", leg_id)
        return self._joined(row) if row else None

    def other_side(self, end: EndRow) -> tuple[SpliceRow, EndRow]:
        """The splice holding `end`, and the end on its other side."""
        if end.id not in self._peers:
            r = self.row("other_side", end.splice_id, end.splice_side)
            if r is None:
                raise RecordsError(f"{self._splice_place(end.splice_id)} joins only one end")
            self._peers[end.id] = (
                SpliceRow(r[5], r[9], r[10], r[11], r[12], r[13], r[14]),
                _end(r),
            )
        return self._peers[end.id]

    def _splice_place(self, splice_id: int | None) -> str:
        row = self.row("splice_place", splice_id)
        if row is None:
            return f"splice {splice_id}"
        return f"the splice in {row[0]} tray {row[1]} slot {row[2]}"

    def termination(self, port_id: int) -> EndRow | None:
        row = self.row("termination", port_id)
        return _end(row) if row else None

    def port(self, port_id: int) -> PortRow:
        if port_id not in self._ports:
            r = self.row("port", port_id)
            self._ports[port_id] = PortRow(
                port_id,
                r[0],
                r[1],
                r[2] is not None,
                r[3],
                r[4],
                r[5],
                r[6],
                r[7],
                r[8],
                r[9],
                r[10],
            )
        return self._ports[port_id]

    def jumper_peer(self, port: PortRow) -> tuple[PortRow, float | None] | None:
        """The port at the other end of this port's jumper, and the jumper's length."""
        if port.jumper_id is None:
            return None
        other, length = self.row("jumper_peer", port.jumper_id, port.id)
        return self.port(other), length

    def inline_peer(self, port: PortRow) -> PortRow | None:
        """The other port of a regenerator or amplifier (light passes through it)."""
        if port.equipment_id is None:
            return None
        row = self.row("inline_peer", port.equipment_id, port.id)
        return self.port(row[0]) if row else None

    def splitter_of_leg(self, leg_id: int) -> tuple[SplitterRow, str]:
        if leg_id not in self._leg_splitter:
            splitter_id, name = self.row("leg", leg_id)
            self._leg_splitter[leg_id] = (splitter_id, name)
        splitter_id, name = self._leg_splitter[leg_id]
        return self.splitter(splitter_id), name

    def splitter(self, splitter_id: int) -> SplitterRow:
        if splitter_id not in self._splitters:
            r = self.row("splitter", splitter_id)
            legs = {name: leg_id for leg_id, name in self.rows("legs", splitter_id)}
            for name, leg_id in legs.items():
                self._leg_splitter[leg_id] = (splitter_id, name)
            self._splitters[splitter_id] = SplitterRow(
                splitter_id, r[0], r[1], r[2], r[3], r[4], r[5], legs
            )
        return self._splitters[splitter_id]
