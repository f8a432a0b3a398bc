"""`plantdb synth`: build a synthetic city plant of about N strands into an empty database.

Deterministic for a seed. Rows are generated with their ids and written in bulk, a trunk at
a time (COPY on PostgreSQL, executemany on SQLite): a million strands build in a few minutes.
Circuits' kept paths are written from the construction itself; `plantdb check` re-traces
them and finds the same (a test holds the generator to that).
"""

from __future__ import annotations

import json
import random
import sys
from collections import defaultdict
from collections.abc import Callable
from typing import Any

from sqlalchemy import Connection

from plantdb import geo
from plantdb.audit import ChangeRow, record_changes
from plantdb.bulk import BulkWriter
from plantdb.model import ChangeAction
from seed_data import synth_plan as sp
from seed_data.synth_plan import Plan

COLUMNS: dict[str, tuple[str, ...]] = {
    "structure": ("id", "label", "kind", "lon", "lat"),
    "span": (
        "id",
        "label",
        "kind",
        "from_structure_id",
        "to_structure_id",
        "surveyed_length_m",
        "geodesic_length_m",
        "geometry",
        "min_lon",
        "min_lat",
        "max_lon",
        "max_lat",
    ),
    "closure": ("id", "label", "structure_id"),
    "tray": ("id", "closure_id", "number", "capacity"),
    "panel": ("id", "label", "structure_id", "port_count", "connector", "polish"),
    "equipment": ("id", "label", "structure_id", "role", "tx_dbm", "rx_sensitivity_dbm"),
    "jumper": ("id", "length_m"),
    "port": (
        "id",
        "panel_id",
        "equipment_id",
        "name",
        "number",
        "connector",
        "polish",
        "jumper_id",
        "jumper_side",
    ),
    "splitter": ("id", "label", "closure_id", "inputs", "outputs"),
    "splitter_leg": ("id", "splitter_id", "name"),
    "cable": (
        "id",
        "label",
        "fiber_type_id",
        "construction",
        "units",
        "fibers_per_unit",
        "fiber_count",
    ),
    "cable_span": ("cable_id", "seq", "span_id", "reversed"),
    "station": ("id", "cable_id", "seq", "closure_id", "panel_id", "mark_m", "path_index"),
    "slack_coil": ("id", "cable_id", "structure_id", "length_m", "path_index"),
    "unit": ("id", "cable_id", "number", "cable_units", "fibers"),
    "strand": ("id", "cable_id", "number", "unit_number", "position", "unit_fibers"),
    "cut": ("id", "strand_id", "station_id"),
    "splice": ("id", "closure_id", "tray_id", "tray_capacity", "slot", "method", "loss_db"),
    "fiber_end": (
        "id",
        "strand_id",
        "station_id",
        "side",
        "leg_id",
        "splice_id",
        "splice_side",
        "port_id",
        "termination_method",
    ),
    "circuit": (
        "id",
        "label",
        "kind",
        "status",
        "a_port_id",
        "z_port_id",
        "customer",
        "path_state",
        "a_address",
        "z_address",
    ),
    "circuit_path_item": (
        "id",
        "circuit_id",
        "position",
        "kind",
        "strand_id",
        "cable_id",
        "lo_seq",
        "hi_seq",
        "lo_index",
        "hi_index",
        "port_id",
        "splitter_id",
    ),
}
ORDER = list(COLUMNS)  # parents before children
SLOTS_PER_TRAY = 24
FIBER_TYPE = 1


class Cable:
    """What the generator remembers of a cable it wrote."""

    def __init__(
        self, cable_id: int, first_strand: int, stations: list[int], indexes: list[int]
    ) -> None:
        self.id = cable_id
        self.first_strand = first_strand
        self.stations = stations
        self.indexes = indexes

    def strand(self, number: int) -> int:
        return self.first_strand + number - 1


class Synth:
    """Generates the rows of the plan, a trunk at a time."""

    def __init__(self, writer: BulkWriter, plan: Plan) -> None:
        self.writer = writer
        self.plan = plan
        self.rng = random.Random(plan.seed)
        self.next_id: dict[str, int] = defaultdict(lambda: 1)
        self.rows: dict[str, list[tuple[Any, ...]]] = defaultdict(list)
        self.structures: dict[tuple[int, int], int] = {}

    def new(self, table: str, *values: Any) -> int:
        row_id = self.next_id[table]
        self.next_id[table] += 1
        self.rows[table].append((row_id, *values))
        return row_id

    def add(self, table: str, *values: Any) -> None:
        self.rows[table].append(values)

    def flush(self) -> None:
        for table in ORDER:
            self.writer.write(table, COLUMNS[table], self.rows.pop(table, []))

    # -- geography ---------------------------------------------------------------------
    def structure(self, row: int, column: int, kind: str) -> int:
        lon, lat = sp.to_lonlat(*sp.grid_point(row, column))
        sid = self.new("structure", sp.structure_label(row, column), kind, lon, lat)
        self.structures[(row, column)] = sid
        return sid

    def span(self, label: str, kind: str, a: int, b: int, line: list[list[float]]) -> int:
        length = geo.line_length_m(line)
        west, south, east, north = geo.bbox(line)
        surveyed = None if self.rng.random() < 0.2 else round(length * 1.01, 1)
        return self.new("span", label, kind, a, b, surveyed, length, line, west, south, east, north)

    def street(self, label: str, kind: str, a: tuple[int, int], b: tuple[int, int]) -> int:
        """A span between two intersections, drawn with a small jog at its middle."""
        (ea, na), (eb, nb) = sp.grid_point(*a), sp.grid_point(*b)
        jog = self.rng.uniform(-4.0, 4.0)
        middle = (
            (ea + eb) / 2 + (jog if ea == eb else 0),
            (na + nb) / 2 + (jog if na == nb else 0),
        )
        line = [sp.to_lonlat(ea, na), sp.to_lonlat(*middle), sp.to_lonlat(eb, nb)]
        return self.span(label, kind, self.structures[a], self.structures[b], line)

    # -- cables ------------------------------------------------------------------------
    def cable(
        self,
        label: str,
        strands: int,
        kind: str,
        spans: list[tuple[int, bool]],
        stations: list[tuple[int | None, int | None, float, int]],
        coil: tuple[int, float, int] | None = None,
    ) -> Cable:
        per_unit = strands if kind == "central_core" else 12
        units = strands // per_unit
        cable_id = self.new("cable", label, FIBER_TYPE, kind, units, per_unit, strands)
        for seq, (span_id, flipped) in enumerate(spans):
            self.add("cable_span", cable_id, seq, span_id, flipped)
        station_ids = [
            self.new("station", cable_id, seq, closure, panel, mark, index)
            for seq, (closure, panel, mark, index) in enumerate(stations)
        ]
        if coil is not None:
            self.new("slack_coil", cable_id, coil[0], coil[1], coil[2])
        first = self.next_id["strand"]
        for u in range(1, units + 1):
            self.new("unit", cable_id, u, units, per_unit)
            for p in range(1, per_unit + 1):
                self.new("strand", cable_id, (u - 1) * per_unit + p, u, p, per_unit)
        return Cable(cable_id, first, station_ids, [s[3] for s in stations])

    def closure(self, label: str, structure: int, capacity: int) -> tuple[int, list[int]]:
        closure_id = self.new("closure", label, structure)
        trays = [
            self.new("tray", closure_id, n, SLOTS_PER_TRAY)
            for n in range(1, max(1, -(-capacity // SLOTS_PER_TRAY)) + 1)
        ]
        return closure_id, trays

    def splice(
        self,
        closure: int,
        trays: list[int],
        slot: int,
        a: tuple[Any, ...],
        b: tuple[Any, ...],
        method: str = "fusion",
    ) -> None:
        """Splice end a to end b; ends are (strand, station, side) or ("leg", leg_id)."""
        loss = round(self.rng.uniform(0.01, 0.09), 2) if self.rng.random() < 0.25 else None
        tray = trays[(slot - 1) // SLOTS_PER_TRAY]
        splice_id = self.new(
            "splice", closure, tray, SLOTS_PER_TRAY, (slot - 1) % SLOTS_PER_TRAY + 1, method, loss
        )
        for side, end in enumerate((a, b), start=1):
            if end[0] == "leg":
                self.new("fiber_end", None, None, None, end[1], splice_id, side, None, None)
            else:
                self.new("fiber_end", end[0], end[1], end[2], None, splice_id, side, None, None)

    def terminate(
        self, strand: int, station: int, side: str, port: int, method: str = "pigtail_splice"
    ) -> None:
        self.new("fiber_end", strand, station, side, None, None, None, port, method)

    def panel(self, label: str, structure: int, ports: int) -> tuple[int, list[int]]:
        panel_id = self.new("panel", label, structure, ports, "LC", "APC")
        port_ids = [
            self.new("port", panel_id, None, str(n), n, "LC", "APC", None, None)
            for n in range(1, ports + 1)
        ]
        return panel_id, port_ids

    def jumper(self, a: int, b: int) -> None:
        """Patch two ports written in this batch (their rows are still in the buffer)."""
        jumper_id = self.new("jumper", 2.0)
        ports = self.rows["port"]
        for side, port_id in enumerate((a, b), start=1):
            index = next(i for i in range(len(ports) - 1, -1, -1) if ports[i][0] == port_id)
            ports[index] = (*ports[index][:7], jumper_id, side)


def run_synth(
    connection: Connection,
    fibers: int,
    seed: int = 1,
    progress: Callable[[int, int], None] | None = None,
) -> dict[str, Any]:
    """Write the whole synthetic plant; a summary of what was built."""
    from seed_data.synth_trunks import build_trunk, write_fiber_type

    plan = sp.make_plan(fibers, seed)
    writer = BulkWriter(connection)
    synth = Synth(writer, plan)
    write_fiber_type(synth)
    for t in range(plan.trunks):
        build_trunk(synth, t, built=t < plan.built)
        synth.flush()
        if progress:
            progress(t + 1, plan.trunks)
    writer.write(
        "setting",
        ("key", "value"),
        [("synth", json.dumps({"fibers": fibers, "seed": seed, "generator": 1}))],
    )
    writer.finish()
    document = {
        "fibers_asked": fibers,
        "seed": seed,
        "strands": writer.counts.get("strand", 0),
        "rows": dict(writer.counts),
        "trunks": plan.trunks,
        "unbuilt_trunks": plan.unbuilt,
        "plan": {"trunk_strands": plan.trunk_strands, "cables_per_trunk": plan.cables_per_trunk},
    }
    _record_history(connection, document)
    return document


def _record_history(connection: Connection, document: dict[str, Any]) -> None:
    """One history row for the whole generated plant: a row per thing would be millions of
    rows describing invented records, and slow the generator down several times over."""
    after = {k: document[k] for k in ("fibers_asked", "seed", "strands", "trunks")}
    label = f"synthetic plant of {document['strands']:,} strands generated"
    row = ChangeRow(ChangeAction.INSERT, "synthetic_plant", None, label, None, after)
    record_changes(connection, [row])


def console_progress() -> Callable[[int, int], None] | None:
    """A progress bar on a terminal (standard error), nothing otherwise."""
    if not sys.stderr.isatty():
        return None
    from tqdm import tqdm

    bar: dict[str, Any] = {}

    def update(done: int, total: int) -> None:
        if "bar" not in bar:
            bar["bar"] = tqdm(total=total, unit="trunk", file=sys.stderr)
        bar["bar"].update(1)
        if done == total:
            bar["bar"].close()

    return update
