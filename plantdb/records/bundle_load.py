"""Loading a bundle: every item checked against the record, all of it written or none.

Sections are checked and written in dependency order inside the caller's one transaction
(`run_in_transaction`): places first, so that cables and connections can be checked against
the rows they name. Checking goes on past a problem, so any problem raises `BundleError` with
every problem found, each naming the item by its path and label; the transaction then rolls
back, so the database is left as it was. (A database constraint that the checks missed would
also roll it all back, but could name only the constraint, not the item.) The plant's places
load here, its cables in `bundle_cables`, its connections in `bundle_connections`.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

from sqlalchemy import insert
from sqlalchemy.orm import Session

from plantdb import geo
from plantdb.audit import ChangeRow
from plantdb.errors import PlantError
from plantdb.model import (
    Closure,
    Equipment,
    EquipmentRole,
    FiberMode,
    FiberType,
    FiberTypeWavelength,
    Panel,
    Port,
    Route,
    RouteSpan,
    Span,
    SpanKind,
    Splitter,
    SplitterLeg,
    Structure,
    StructureKind,
    Tray,
)
from plantdb.records.changes import added, thing_added
from plantdb.records.lookup import PlaceInfo, RecordLookup, SplitterInfo, StructureRef
from plantdb.records.placement import chain_spans

# A drawn span must start and end at its structures; a line drawn backwards or attached to
# the wrong structure would misplace every break located along it.
GEOMETRY_TOLERANCE_M = 50.0
MAX_REPORTED = 200
_RATIO = re.compile(r"^([12])\s*[xX]\s*(\d+)$")
# Passive splitters are made up to 1x128, rarely 1x256 (trade); a bigger N is a typo, and each
# leg is a row.
MAX_SPLITTER_OUTPUTS = 256
_NAMED_PATH = re.compile(r"^(\w+\[\d+\]) \((.+)\)$")
_NAMES_NOTHING = re.compile(r" (?:is labelled|is named) (.+)$")


class BundleError(PlantError):
    """A bundle refused: every problem found, each with its path."""

    def __init__(self, problems: list[str]) -> None:
        shown = problems[:MAX_REPORTED]
        if len(problems) > MAX_REPORTED:
            shown.append(f"... and {len(problems) - MAX_REPORTED} more")
        noun = "problem" if len(problems) == 1 else "problems"
        super().__init__(f"bundle not loaded, nothing was written: {len(problems)} {noun}", shown)


@dataclass
class LoadContext:
    """What the section loaders share: the session, the cached lookup, the problems found."""

    session: Session
    lookup: RecordLookup
    problems: list[str] = field(default_factory=list)
    counts: dict[str, int] = field(default_factory=dict)
    # Labels this bundle has claimed so far, by namespace: label -> the path that claimed it.
    seen: dict[str, dict[str, str]] = field(default_factory=dict)
    # Labelled items refused for a problem (label -> path). A later item naming one of them is
    # not wrong itself, so instead of "no cable is labelled F-1" for a cable the bundle plainly
    # holds, it is listed once on a follow-on line.
    refused: dict[str, str] = field(default_factory=dict)
    follow_ons: dict[str, list[str]] = field(default_factory=dict)
    # One history row per thing written, the thing as its bundle item (`plantdb.audit`).
    changes: list[ChangeRow] = field(default_factory=list)

    def problem(self, path: str, message: str) -> None:
        item = _NAMED_PATH.match(path)
        if item:
            self.refused.setdefault(item.group(2), item.group(1))
        missing = _NAMES_NOTHING.search(message)
        if missing and missing.group(1) in self.refused:
            self.follow_ons.setdefault(missing.group(1), []).append(path)
            return
        self.problems.append(f"{path}: {message}")

    def report(self) -> list[str]:
        """Every problem found, then one line per refused item that other items name."""
        lines = list(self.problems)
        for label, paths in self.follow_ons.items():
            more = f" and {len(paths) - 3} more" if len(paths) > 3 else ""
            lines.append(
                f"{', '.join(paths[:3])}{more}: name {label}, which is refused"
                f" ({self.refused[label]})"
            )
        return lines

    def claim(self, kind: str, label: str, path: str, exists: bool | str) -> bool:
        """Record a new label; a problem if the record or this bundle already has it.

        `exists` is true (or names what the record already calls `label`) when it is taken.
        """
        taken = self.seen.setdefault(kind, {})
        if label in taken:
            self.problem(path, f"label {label} is already used by {taken[label]} of this bundle")
            return False
        if exists:
            what = f" (a {exists})" if isinstance(exists, str) else ""
            self.problem(path, f"label {label} already exists in the record{what}")
            return False
        taken[label] = path
        return True

    def claim_place(self, label: str, path: str) -> bool:
        """Cables, closures, panels, equipment and splitters share one namespace."""
        return self.claim("place", label, path, self.lookup.place_kind(label) or False)

    def insert_ids(self, model: Any, rows: list[dict[str, Any]]) -> list[int]:
        """Insert rows in one statement; their new ids in the rows' order."""
        if not rows:
            return []
        result = self.session.execute(
            insert(model).returning(model.id, sort_by_parameter_order=True), rows
        )
        return list(result.scalars().all())

    def insert(self, model: Any, rows: list[dict[str, Any]]) -> None:
        if rows:
            self.session.execute(insert(model), rows)

    def count(self, section: str, n: int) -> None:
        if n:
            self.counts[section] = self.counts.get(section, 0) + n


def items(data: dict[str, Any], key: str) -> Iterable[tuple[str, dict[str, Any]]]:
    """(path, item) for each item of a section."""
    for i, item in enumerate(data.get(key) or []):
        yield f"{key}[{i}]", item


def named(path: str, label: str) -> str:
    return f"{path} ({label})"


def not_one_of(what: str, value: object, enum_class: Any) -> str:
    options = ", ".join(str(m.value) for m in enum_class)
    return f"{what} {value!r} is not one of {options}"


def load_fiber_types(ctx: LoadContext, data: dict[str, Any]) -> None:
    for path, item in items(data, "fiber_types"):
        name = item["name"]
        if not ctx.claim("fiber_type", name, path, ctx.lookup.fiber_type(name) is not None):
            continue
        core, cladding = item.get("core_index"), item.get("cladding_index")
        if core is not None and cladding is not None and core <= cladding:
            ctx.problem(named(path, name), "core_index must be above cladding_index")
            continue
        row = {key: item.get(key) for key in ("standard", "core_um", "cladding_um", "notes")}
        row.update(name=name, mode=FiberMode(item["mode"]), core_index=core)
        row["cladding_index"] = cladding
        (fiber_type_id,) = ctx.insert_ids(FiberType, [row])
        attenuation = item.get("attenuation_db_per_km") or {}
        group = item.get("group_index") or {}
        ctx.insert(
            FiberTypeWavelength,
            [
                {
                    "fiber_type_id": fiber_type_id,
                    "wavelength_nm": int(nm),
                    "attenuation_max": (attenuation.get(nm) or {}).get("max"),
                    "attenuation_typical": (attenuation.get(nm) or {}).get("typical"),
                    "group_index": group.get(nm),
                }
                for nm in sorted(set(attenuation) | set(group), key=int)
            ],
        )
        ctx.lookup.remember_fiber_type(name, fiber_type_id, item["mode"])
        ctx.changes.append(thing_added("fiber_type", fiber_type_id, name, item))
        ctx.count("fiber_types", 1)


def load_structures(ctx: LoadContext, data: dict[str, Any]) -> None:
    rows, written = [], []
    for path, item in items(data, "structures"):
        label = item["label"]
        if not ctx.claim("structure", label, path, ctx.lookup.structure(label) is not None):
            continue
        if item["kind"] not in StructureKind._value2member_map_:
            ctx.problem(named(path, label), not_one_of("kind", item["kind"], StructureKind))
            continue
        row: dict[str, Any] = {key: item.get(key) for key in ("label", "name", "notes")}
        row.update(kind=StructureKind(item["kind"]), lon=float(item["lon"]))
        row["lat"] = float(item["lat"])
        rows.append(row)
        written.append(item)
    ids = ctx.insert_ids(Structure, rows)
    for row, item, new_id in zip(rows, written, ids, strict=True):
        ctx.lookup.remember_structure(row["label"], StructureRef(new_id, row["lon"], row["lat"]))
        ctx.changes.append(thing_added("structure", new_id, row["label"], item))
    ctx.count("structures", len(rows))


def _span_row(ctx: LoadContext, path: str, item: dict[str, Any]) -> dict[str, Any] | None:
    label = item["label"]
    where = named(path, label)
    ends = [ctx.lookup.structure(item[key]) for key in ("from", "to")]
    for key, ref in zip(("from", "to"), ends, strict=True):
        if ref is None:
            ctx.problem(where, f"{key}: no structure is labelled {item[key]}")
    if item["kind"] not in SpanKind._value2member_map_:
        ctx.problem(where, not_one_of("kind", item["kind"], SpanKind))
        return None
    start, end = ends
    if start is None or end is None:
        return None
    if start.id == end.id:
        ctx.problem(where, f"a span joins two different structures, not {item['from']} to itself")
        return None
    line = item.get("geometry") or [[start.lon, start.lat], [end.lon, end.lat]]
    for which, ref, position in (("first", start, line[0]), ("last", end, line[-1])):
        gap = geo.distance_m(position, (ref.lon, ref.lat))
        if gap > GEOMETRY_TOLERANCE_M:
            key = "from" if which == "first" else "to"
            ctx.problem(
                where,
                f'geometry\'s {which} position is {gap:.0f} m from {item[key]}, its "{key}"'
                f" structure (allowed {GEOMETRY_TOLERANCE_M:g} m; is the line drawn"
                " backwards?)",
            )
            return None
    west, south, east, north = geo.bbox(line)
    return {
        "label": label,
        "kind": SpanKind(item["kind"]),
        "from_structure_id": start.id,
        "to_structure_id": end.id,
        "surveyed_length_m": item.get("length_m"),
        "geodesic_length_m": geo.line_length_m(line),
        "geometry": [[float(p[0]), float(p[1])] for p in line],
        "min_lon": west,
        "min_lat": south,
        "max_lon": east,
        "max_lat": north,
        "notes": item.get("notes"),
    }


def load_spans(ctx: LoadContext, data: dict[str, Any]) -> None:
    rows, written = [], []
    for path, item in items(data, "spans"):
        if not ctx.claim("span", item["label"], path, ctx.lookup.span(item["label"]) is not None):
            continue
        row = _span_row(ctx, path, item)
        if row is not None:
            rows.append(row)
            written.append(item)
    ids = ctx.insert_ids(Span, rows)
    for row, item, new_id in zip(rows, written, ids, strict=True):
        ctx.lookup.remember_span(
            row["label"], new_id, row["from_structure_id"], row["to_structure_id"]
        )
        ctx.changes.append(thing_added("span", new_id, row["label"], item))
    ctx.count("spans", len(rows))


def load_routes(ctx: LoadContext, data: dict[str, Any]) -> None:
    for path, item in items(data, "routes"):
        label = item["label"]
        exists = bool(ctx.session.query(Route.id).filter(Route.label == label).first())
        if not ctx.claim("route", label, path, exists):
            continue
        spans = [ctx.lookup.span(name) for name in item["spans"]]
        missing = [name for name, span in zip(item["spans"], spans, strict=True) if span is None]
        if missing:
            ctx.problem(named(path, label), f"no span is labelled {', '.join(missing)}")
            continue
        chain = [span for span in spans if span is not None]
        try:
            try:
                chain_spans(chain, chain[0].from_id, ctx.lookup.structure_label)
            except PlantError:
                chain_spans(chain, chain[0].to_id, ctx.lookup.structure_label)
        except PlantError as exc:
            ctx.problem(named(path, label), f"its spans do not join end to end: {exc.message}")
            continue
        (route_id,) = ctx.insert_ids(Route, [{"label": label, "name": item.get("name")}])
        ctx.insert(
            RouteSpan,
            [
                {"route_id": route_id, "seq": seq, "span_id": ctx.lookup.span_id(name)}
                for seq, name in enumerate(item["spans"])
            ],
        )
        ctx.changes.append(thing_added("route", route_id, label, item))
        ctx.count("routes", 1)


def _at_structure(ctx: LoadContext, path: str, label: str, at: str) -> StructureRef | None:
    ref = ctx.lookup.structure(at)
    if ref is None:
        ctx.problem(named(path, label), f"at: no structure is labelled {at}")
    return ref


def load_closures(ctx: LoadContext, data: dict[str, Any]) -> None:
    for path, item in items(data, "closures"):
        label = item["label"]
        if not ctx.claim_place(label, path):
            continue
        structure = _at_structure(ctx, path, label, item["at"])
        capacities = item.get("tray_slots")
        if capacities is None:
            per_tray = item.get("slots_per_tray")
            if per_tray is None and item["trays"] > 0:
                ctx.problem(named(path, label), "slots_per_tray: missing (the trays' capacity)")
                continue
            capacities = [per_tray] * item["trays"]
        elif len(capacities) != item["trays"]:
            ctx.problem(
                named(path, label),
                f"tray_slots lists {len(capacities)} trays but trays says {item['trays']}",
            )
            continue
        if structure is None:
            continue
        (closure_id,) = ctx.insert_ids(
            Closure,
            [{"label": label, "structure_id": structure.id, "notes": item.get("notes")}],
        )
        ctx.insert(
            Tray,
            [
                {"closure_id": closure_id, "number": n, "capacity": capacity}
                for n, capacity in enumerate(capacities, start=1)
            ],
        )
        ctx.lookup.remember_closure(PlaceInfo(closure_id, label, structure.id))
        ctx.changes.append(
            thing_added("closure", closure_id, label, item, structure_id=structure.id)
        )
        ctx.count("closures", 1)


def load_panels(ctx: LoadContext, data: dict[str, Any]) -> None:
    for path, item in items(data, "panels"):
        label = item["label"]
        if not ctx.claim_place(label, path):
            continue
        structure = _at_structure(ctx, path, label, item["at"])
        if structure is None:
            continue
        row = {key: item.get(key) for key in ("label", "rack", "connector", "polish", "notes")}
        row.update(structure_id=structure.id, port_count=item["ports"])
        (panel_id,) = ctx.insert_ids(Panel, [row])
        ctx.insert(
            Port,
            [
                {
                    "panel_id": panel_id,
                    "name": str(n),
                    "number": n,
                    "connector": item.get("connector"),
                    "polish": item.get("polish"),
                }
                for n in range(1, item["ports"] + 1)
            ],
        )
        ctx.lookup.remember_panel(PlaceInfo(panel_id, label, structure.id, item["ports"]))
        ctx.changes.append(thing_added("panel", panel_id, label, item, structure_id=structure.id))
        ctx.count("panels", 1)


def load_equipment(ctx: LoadContext, data: dict[str, Any]) -> None:
    for path, item in items(data, "equipment"):
        label = item["label"]
        if not ctx.claim_place(label, path):
            continue
        structure = _at_structure(ctx, path, label, item["at"])
        role = item.get("role") or "other"
        if role not in EquipmentRole._value2member_map_:
            ctx.problem(named(path, label), not_one_of("role", role, EquipmentRole))
            continue
        names = [name.strip() for name in item["ports"]]
        duplicates = sorted({name for name in names if names.count(name) > 1})
        if duplicates:
            ctx.problem(named(path, label), f"ports listed twice: {', '.join(duplicates)}")
            continue
        if EquipmentRole(role).inline and len(names) != 2:
            ctx.problem(named(path, label), f"a {role} passes light between exactly two ports")
            continue
        if structure is None:
            continue
        row = {key: item.get(key) for key in ("label", "rack", "tx_dbm", "notes")}
        row.update(structure_id=structure.id, role=EquipmentRole(role))
        row["rx_sensitivity_dbm"] = item.get("rx_sensitivity_dbm")
        (equipment_id,) = ctx.insert_ids(Equipment, [row])
        ctx.insert(Port, [{"equipment_id": equipment_id, "name": name} for name in names])
        ctx.lookup.remember_equipment(PlaceInfo(equipment_id, label, structure.id))
        ctx.changes.append(
            thing_added("equipment", equipment_id, label, item, structure_id=structure.id)
        )
        ctx.count("equipment", 1)


def parse_ratio(text: str) -> tuple[int, int]:
    """`1x32` -> (1, 32); refuses anything but 1xN or 2xN with 2 <= N <= 256."""
    match = _RATIO.match(text.strip())
    if not match or not 2 <= int(match.group(2)) <= MAX_SPLITTER_OUTPUTS:
        raise PlantError(f"ratio {text!r} is not 1xN or 2xN (N from 2 to {MAX_SPLITTER_OUTPUTS})")
    return int(match.group(1)), int(match.group(2))


def load_splitters(ctx: LoadContext, data: dict[str, Any]) -> None:
    for path, item in items(data, "splitters"):
        label = item["label"]
        if not ctx.claim_place(label, path):
            continue
        closure, panel = ctx.lookup.closure(item["at"]), ctx.lookup.panel(item["at"])
        place = closure or panel
        if place is None:
            ctx.problem(named(path, label), f"at: no closure or panel is labelled {item['at']}")
            continue
        try:
            inputs, outputs = parse_ratio(item["ratio"])
        except PlantError as exc:
            ctx.problem(named(path, label), exc.message)
            continue
        (splitter_id,) = ctx.insert_ids(
            Splitter,
            [
                {
                    "label": label,
                    "closure_id": closure.id if closure else None,
                    "panel_id": panel.id if panel else None,
                    "inputs": inputs,
                    "outputs": outputs,
                    "loss_db": item.get("loss_db"),
                }
            ],
        )
        names = ["in", "in2"][:inputs] + [str(n) for n in range(1, outputs + 1)]
        legs = [{"splitter_id": splitter_id, "name": name} for name in names]
        leg_ids = ctx.insert_ids(SplitterLeg, legs)
        ctx.lookup.remember_splitter(
            SplitterInfo(
                splitter_id,
                label,
                closure.id if closure else None,
                panel.id if panel else None,
                inputs,
                outputs,
                dict(zip(names, leg_ids, strict=True)),
                place.structure_id,
            )
        )
        where = {"closure_id": closure.id} if closure else {"panel_id": place.id}
        ctx.changes.append(added("splitter", splitter_id, f"splitter {label}", item, **where))
        ctx.count("splitters", 1)
