"""Loading what connects the plant: cuts, splices, terminations, jumpers; then circuits."""

from __future__ import annotations

import datetime as dt
from typing import Any

from sqlalchemy import select, update

from plantdb.errors import PlantError
from plantdb.model import (
    Circuit,
    CircuitStatus,
    Cut,
    FiberEnd,
    Jumper,
    LossTest,
    Port,
    Side,
    Splice,
    SpliceMethod,
    TerminationMethod,
)
from plantdb.records.bundle_load import LoadContext, items
from plantdb.records.changes import added, cut_added, splice_added, thing_added
from plantdb.records.ends import (
    EndRef,
    PortRef,
    resolve_cut,
    resolve_port,
    resolve_splice_end,
    resolve_termination_end,
)

# A splice loss above this is not a splice but a records mistake (a typo, a dB/mdB mix-up).
ABSURD_SPLICE_LOSS_DB = 5.0


def end_row(end: EndRef) -> dict[str, Any]:
    """The columns of a fiber_end row that say which end it is."""
    return {
        "strand_id": end.strand_id,
        "station_id": end.station_id,
        "side": Side(end.side) if end.side else None,
        "leg_id": end.leg_id,
    }


def new_cut_ends(ctx: LoadContext, ends: list[EndRef]) -> list[EndRef]:
    """The mid-span ends among these whose strands are not cut yet (now counted as cut)."""
    new = []
    for end in ends:
        if not end.mid_span:
            continue
        assert end.cable_id and end.strand_id and end.station_id
        if not ctx.lookup.is_cut(end.cable_id, end.strand_id, end.station_id):
            ctx.lookup.remember_cut(end.cable_id, end.strand_id, end.station_id)
            new.append(end)
    return new


def cut_row(end: EndRef) -> dict[str, Any]:
    """The cut row of a mid-span end's strand."""
    return {"strand_id": end.strand_id, "station_id": end.station_id}


def _write_cuts(ctx: LoadContext, cuts: list[tuple[int, str, EndRef]]) -> None:
    """Write cuts (closure id, closure label, end) with their history rows."""
    ids = ctx.insert_ids(Cut, [cut_row(end) for _id, _label, end in cuts])
    ctx.changes.extend(
        cut_added(closure_id, label, end, cut_id)
        for (closure_id, label, end), cut_id in zip(cuts, ids, strict=True)
    )
    ctx.count("cuts", len(ids))


def load_cuts(ctx: LoadContext, data: dict[str, Any]) -> None:
    cuts = []
    for path, item in items(data, "cuts"):
        closure = ctx.lookup.closure(item["closure"])
        if closure is None:
            ctx.problem(path, f"closure: no closure is labelled {item['closure']}")
            continue
        try:
            end = resolve_cut(ctx.lookup, item["fiber"], closure)
        except PlantError as exc:
            ctx.problem(path, exc.message)
            continue
        cuts += [(closure.id, closure.label, new) for new in new_cut_ends(ctx, [end])]
    _write_cuts(ctx, cuts)


def _splice_ends(ctx: LoadContext, item: dict[str, Any]) -> tuple[EndRef, EndRef, int, int]:
    closure = ctx.lookup.closure(item["closure"])
    if closure is None:
        raise PlantError(f"closure: no closure is labelled {item['closure']}")
    a = resolve_splice_end(ctx.lookup, item["a"], closure)
    b = resolve_splice_end(ctx.lookup, item["b"], closure)
    if a.key == b.key:
        raise PlantError(f"{a.address} would be spliced to itself")
    if a.strand_id is not None and a.strand_id == b.strand_id:
        raise PlantError(
            f"{a.address} and {b.address} are pieces of one strand; a strand is not spliced"
            " to itself"
        )
    tray = ctx.lookup.trays(closure.id).get(item["tray"])
    if tray is None:
        count = len(ctx.lookup.trays(closure.id))
        raise PlantError(f"closure {closure.label} has {count} trays, no tray {item['tray']}")
    tray_id, capacity = tray
    if item["slot"] > capacity:
        raise PlantError(
            f"tray {item['tray']} of {closure.label} has {capacity} slots, no slot {item['slot']}"
        )
    if ctx.lookup.used_by(("slot", tray_id, item["slot"])):
        raise PlantError(f"tray {item['tray']} slot {item['slot']} at {closure.label} is taken")
    for end in (a, b):
        held = ctx.lookup.used_by(end.key)
        if held:
            raise PlantError(f"{end.address} at {closure.label} is already {held}")
    loss = item.get("loss_db")
    if loss is not None and not 0 <= loss <= ABSURD_SPLICE_LOSS_DB:
        raise PlantError(
            f"loss_db {loss:g} dB is not a splice loss (0 to {ABSURD_SPLICE_LOSS_DB:g})"
        )
    return a, b, closure.id, tray_id


def load_splices(ctx: LoadContext, data: dict[str, Any]) -> None:
    splices: list[dict[str, Any]] = []
    pairs: list[tuple[EndRef, EndRef]] = []
    written: list[dict[str, Any]] = []
    for path, item in items(data, "splices"):
        try:
            a, b, closure_id, tray_id = _splice_ends(ctx, item)
        except PlantError as exc:
            ctx.problem(path, exc.message)
            continue
        for end in (a, b):
            ctx.lookup.occupy(end.key, f"spliced (tray {item['tray']} slot {item['slot']})")
        ctx.lookup.occupy(("slot", tray_id, item["slot"]), "taken")
        on = item.get("spliced_on")
        splices.append(
            {
                "closure_id": closure_id,
                "tray_id": tray_id,
                "tray_capacity": ctx.lookup.trays(closure_id)[item["tray"]][1],
                "slot": item["slot"],
                "method": SpliceMethod(item.get("method") or "fusion"),
                "loss_db": item.get("loss_db"),
                "spliced_on": dt.date.fromisoformat(on) if on else None,
                "spliced_by": item.get("spliced_by"),
            }
        )
        pairs.append((a, b))
        written.append(item)
    if not ctx.problems:
        _write_splices(ctx, splices, pairs, written)


def _write_splices(
    ctx: LoadContext,
    splices: list[dict[str, Any]],
    pairs: list[tuple[EndRef, EndRef]],
    written: list[dict[str, Any]],
) -> None:
    """Write checked splices (rows, their ends, their bundle items), the cuts they imply,
    and the history rows of both."""
    _write_cuts(
        ctx,
        [
            (row["closure_id"], item["closure"], end)
            for row, item, pair in zip(splices, written, pairs, strict=True)
            for end in new_cut_ends(ctx, list(pair))
        ],
    )
    splice_ids = ctx.insert_ids(Splice, splices)
    ctx.changes.extend(
        splice_added(splice_id, row["closure_id"], a, b, item)
        for splice_id, row, (a, b), item in zip(splice_ids, splices, pairs, written, strict=True)
    )
    ctx.insert(
        FiberEnd,
        [
            {**end_row(end), "splice_id": splice_id, "splice_side": side}
            for splice_id, pair in zip(splice_ids, pairs, strict=True)
            for side, end in enumerate(pair, start=1)
        ],
    )
    ctx.count("splices", len(splice_ids))


def load_terminations(ctx: LoadContext, data: dict[str, Any]) -> None:
    rows = []
    changes = []
    for path, item in items(data, "terminations"):
        try:
            port = resolve_port(ctx.lookup, item["port"])
            if port.kind != "panel":
                raise PlantError(f"{port.address}: fiber lands on a panel port, not on equipment")
            panel = ctx.lookup.panel(item["port"].partition(":")[0].strip())
            assert panel is not None
            end = resolve_termination_end(ctx.lookup, item["fiber"], panel)
            for key, name in ((("back", port.id), port.address), (end.key, end.address)):
                held = ctx.lookup.used_by(key)
                if held:
                    raise PlantError(f"{name} is already {held}")
        except PlantError as exc:
            ctx.problem(path, exc.message)
            continue
        ctx.lookup.occupy(("back", port.id), f"terminated ({end.address})")
        ctx.lookup.occupy(end.key, f"terminated on {port.address}")
        method = TerminationMethod(item.get("method") or "pigtail_splice")
        rows.append({**end_row(end), "port_id": port.id, "termination_method": method})
        changes.append((f"{end.address} on {port.address}", item, end.cable_id, panel.id))
    if ctx.problems:
        return
    ids = ctx.insert_ids(FiberEnd, rows)
    ctx.changes.extend(
        added("termination", end_id, label, item, cable_id=cable_id, panel_id=panel_id)
        for end_id, (label, item, cable_id, panel_id) in zip(ids, changes, strict=True)
    )
    ctx.count("terminations", len(rows))


def _panel_of(port: PortRef) -> int | None:
    """The panel a port belongs to (None for an equipment port)."""
    return port.owner_id if port.kind == "panel" else None


def load_jumpers(ctx: LoadContext, data: dict[str, Any]) -> None:
    pairs: list[tuple[PortRef, PortRef]] = []
    lengths = []
    written = []
    for path, item in items(data, "jumpers"):
        try:
            a, b = resolve_port(ctx.lookup, item["a"]), resolve_port(ctx.lookup, item["b"])
            if a.id == b.id:
                raise PlantError(f"{a.address} would be patched to itself")
            for port in (a, b):
                held = ctx.lookup.used_by(("front", port.id))
                if held:
                    raise PlantError(f"{port.address} is already {held}")
        except PlantError as exc:
            ctx.problem(path, exc.message)
            continue
        ctx.lookup.occupy(("front", a.id), f"patched to {b.address}")
        ctx.lookup.occupy(("front", b.id), f"patched to {a.address}")
        pairs.append((a, b))
        lengths.append({"length_m": item.get("length_m")})
        written.append(item)
    if ctx.problems:
        return
    jumper_ids = ctx.insert_ids(Jumper, lengths)
    ctx.changes.extend(
        added(
            "jumper",
            jumper_id,
            f"jumper {a.address} to {b.address}",
            item,
            panel_id=_panel_of(a),
            other_panel_id=_panel_of(b),
        )
        for jumper_id, (a, b), item in zip(jumper_ids, pairs, written, strict=True)
    )
    if jumper_ids:
        ctx.session.execute(
            update(Port),
            [
                {"id": port.id, "jumper_id": jumper_id, "jumper_side": side}
                for jumper_id, pair in zip(jumper_ids, pairs, strict=True)
                for side, port in enumerate(pair, start=1)
            ],
        )
    ctx.count("jumpers", len(jumper_ids))


def load_circuits(ctx: LoadContext, data: dict[str, Any]) -> None:
    rows = []
    written = []
    for path, item in items(data, "circuits"):
        label = item["label"]
        exists = ctx.session.scalar(select(Circuit.id).where(Circuit.label == label))
        if not ctx.claim("circuit", label, path, exists is not None):
            continue
        try:
            a = resolve_port(ctx.lookup, item["a"])
            z = resolve_port(ctx.lookup, item["z"]) if item.get("z") else None
        except PlantError as exc:
            ctx.problem(f"{path} ({label})", exc.message)
            continue
        if z is not None and z.id == a.id:
            ctx.problem(f"{path} ({label})", "a and z are the same port")
            continue
        rows.append(
            {
                "label": label,
                "kind": item.get("kind") or "other",
                "status": CircuitStatus(item["status"]),
                "a_port_id": a.id,
                "z_port_id": z.id if z else None,
                "customer": item.get("customer"),
                "notes": item.get("notes"),
            }
        )
        written.append(item)
    if ctx.problems:
        return
    ids = ctx.insert_ids(Circuit, rows)
    ctx.changes.extend(
        thing_added("circuit", circuit_id, item["label"], item)
        for circuit_id, item in zip(ids, written, strict=True)
    )
    ctx.count("circuits", len(rows))


def load_loss_tests(ctx: LoadContext, data: dict[str, Any]) -> None:
    rows = []
    written = []
    for path, item in items(data, "loss_tests"):
        circuit_id = ctx.session.scalar(select(Circuit.id).where(Circuit.label == item["circuit"]))
        if circuit_id is None and item["circuit"] in ctx.seen.get("circuit", set()):
            continue  # the bundle's own circuit, not written because of an earlier problem
        if circuit_id is None:
            ctx.problem(path, f"circuit: no circuit is labelled {item['circuit']}")
            continue
        on = item.get("tested_on")
        rows.append(
            {
                "circuit_id": circuit_id,
                "wavelength_nm": item["wavelength_nm"],
                "measured_db": item["measured_db"],
                "direction": item.get("direction"),
                "tested_on": dt.date.fromisoformat(on) if on else None,
                "tested_by": item.get("tested_by"),
                "notes": item.get("notes"),
            }
        )
        written.append(item)
    if ctx.problems:
        return
    ids = ctx.insert_ids(LossTest, rows)
    ctx.changes.extend(
        added(
            "loss_test",
            test_id,
            f"loss test of {item['circuit']} at {item['wavelength_nm']} nm",
            item,
            circuit_id=row["circuit_id"],
        )
        for test_id, row, item in zip(ids, rows, written, strict=True)
    )
    ctx.count("loss_tests", len(rows))
