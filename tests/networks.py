"""Hand-built test networks: a small builder of bundles, and a few networks tests share.

Positions are given in metres east/north of a local origin and turned into WGS 84 degrees, so
a test can say "a manhole 250 m east of the office" and the drawn lines have real lengths.
"""

from __future__ import annotations

import copy
import math
from typing import Any

ORIGIN_LON, ORIGIN_LAT = -0.60, 51.00
_M_PER_DEG_LAT = 111_195.0


def position(east_m: float, north_m: float = 0.0) -> list[float]:
    """[lon, lat] of a point `east_m`/`north_m` metres from the origin (spherical approximation)."""
    lat = ORIGIN_LAT + north_m / _M_PER_DEG_LAT
    lon = ORIGIN_LON + east_m / (_M_PER_DEG_LAT * math.cos(math.radians(ORIGIN_LAT)))
    return [round(lon, 8), round(lat, 8)]


SINGLE_MODE = {
    "name": "SM-TEST",
    "mode": "single-mode",
    "standard": "ITU-T G.652.D",
    # ANSI/TIA-568.3-D outside-plant cabled maximum 0.5 dB/km (seen); typical 0.35 / 0.22
    # dB/km at 1310 / 1550 nm (trade).
    "attenuation_db_per_km": {
        "1310": {"max": 0.5, "typical": 0.35},
        "1550": {"max": 0.5, "typical": 0.22},
    },
    # Group index of standard single-mode fiber from a fiber datasheet (seen).
    "group_index": {"1310": 1.4677, "1550": 1.4682},
}

MULTIMODE = {
    "name": "MM-TEST",
    "mode": "multimode",
    "standard": "OM4",
    # ANSI/TIA-568.3-D multimode maxima 3.5 dB/km at 850 nm, 1.5 at 1300 nm (memory).
    "attenuation_db_per_km": {
        "850": {"max": 3.5, "typical": 3.0},
        "1300": {"max": 1.5, "typical": 1.0},
    },
    # Multimode 50/125 group index (seen).
    "group_index": {"850": 1.481, "1300": 1.476},
}


class Bundle:
    """Builds a bundle dict item by item; `data` is the bundle."""

    def __init__(self) -> None:
        self.data: dict[str, Any] = {"format": "plantdb-bundle", "version": 1}
        self._positions: dict[str, list[float]] = {}

    def _add(self, section: str, item: dict[str, Any]) -> Bundle:
        self.data.setdefault(section, []).append({k: v for k, v in item.items() if v is not None})
        return self

    def fiber_type(self, item: dict[str, Any]) -> Bundle:
        return self._add("fiber_types", copy.deepcopy(item))

    def structure(
        self, label: str, east_m: float, north_m: float = 0.0, kind: str = "manhole"
    ) -> Bundle:
        self._positions[label] = position(east_m, north_m)
        lon, lat = self._positions[label]
        return self._add("structures", {"label": label, "kind": kind, "lon": lon, "lat": lat})

    def span(
        self,
        label: str,
        start: str,
        end: str,
        length_m: float | None = None,
        kind: str = "underground",
        via: list[tuple[float, float]] | None = None,
    ) -> Bundle:
        line = [self._positions[start]]
        line += [position(e, n) for e, n in via or []]
        line.append(self._positions[end])
        return self._add(
            "spans",
            {
                "label": label,
                "from": start,
                "to": end,
                "kind": kind,
                "length_m": length_m,
                "geometry": line,
            },
        )

    def closure(self, label: str, at: str, trays: int = 2, slots: int = 24) -> Bundle:
        return self._add(
            "closures", {"label": label, "at": at, "trays": trays, "slots_per_tray": slots}
        )

    def panel(self, label: str, at: str, ports: int = 24) -> Bundle:
        return self._add(
            "panels", {"label": label, "at": at, "ports": ports, "connector": "SC", "polish": "APC"}
        )

    def equipment(self, label: str, at: str, ports: list[str], **extra: Any) -> Bundle:
        return self._add("equipment", {"label": label, "at": at, "ports": ports, **extra})

    def splitter(self, label: str, at: str, ratio: str, loss_db: float | None = None) -> Bundle:
        return self._add(
            "splitters", {"label": label, "at": at, "ratio": ratio, "loss_db": loss_db}
        )

    def cable(
        self,
        label: str,
        spans: list[str],
        stations: list[tuple[str, float | None]],
        units: int = 2,
        per_unit: int = 12,
        kind: str = "loose_tube",
        fiber_type: str = "SM-TEST",
        slack: list[tuple[str, float]] | None = None,
    ) -> Bundle:
        return self._add(
            "cables",
            {
                "label": label,
                "fiber_type": fiber_type,
                "construction": {"kind": kind, "units": units, "fibers_per_unit": per_unit},
                "spans": spans,
                "stations": [
                    {"at": at, "mark_m": mark} if mark is not None else {"at": at}
                    for at, mark in stations
                ],
                "slack": [{"at": at, "length_m": n} for at, n in slack] if slack else None,
            },
        )

    def splice(
        self,
        closure: str,
        a: str,
        b: str,
        tray: int = 1,
        slot: int = 1,
        loss_db: float | None = None,
        method: str = "fusion",
    ) -> Bundle:
        return self._add(
            "splices",
            {
                "closure": closure,
                "a": a,
                "b": b,
                "tray": tray,
                "slot": slot,
                "method": method,
                "loss_db": loss_db,
            },
        )

    def cut(self, closure: str, fiber: str) -> Bundle:
        return self._add("cuts", {"closure": closure, "fiber": fiber})

    def terminate(self, fiber: str, port: str, method: str | None = None) -> Bundle:
        return self._add("terminations", {"fiber": fiber, "port": port, "method": method})

    def jumper(self, a: str, b: str, length_m: float | None = None) -> Bundle:
        return self._add("jumpers", {"a": a, "b": b, "length_m": length_m})

    def circuit(
        self,
        label: str,
        a: str,
        z: str | None,
        status: str = "active",
        kind: str = "backbone",
        customer: str | None = None,
    ) -> Bundle:
        return self._add(
            "circuits",
            {"label": label, "kind": kind, "status": status, "a": a, "z": z, "customer": customer},
        )


def ashgrove() -> Bundle:
    """A small plant: office AG-CO, handholes AH-1 and AH-2 (a slack coil), cabinet AG-CAB.

    Feeder F-1 (24 strands, marks 0 -> 1020) runs AG-CO -S1 300 m- AH-1 -S2 400 m- AH-2
    -S3 300 m- AG-CAB, accessed mid-span in closure AC-1 at AH-1 (mark 305) where only strand
    5 is cut: F-1:5/A is spliced to drop D-1:1 (measured 0.05 dB). D-1 (12 strands, central
    core, marks 0 -> 123) runs AH-1 -S4 120 m- premises AG-PR.
    """
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("AG-CO", 0, kind="central_office").structure("AH-1", 300, kind="handhole")
    b.structure("AH-2", 700, kind="handhole").structure("AG-CAB", 1000, kind="cabinet")
    b.structure("AG-PR", 300, 120, kind="customer_premises")
    b.span("S1", "AG-CO", "AH-1", 300.0).span("S2", "AH-1", "AH-2", 400.0)
    b.span("S3", "AH-2", "AG-CAB", 300.0).span("S4", "AH-1", "AG-PR", 120.0, kind="aerial")
    b.closure("AC-1", "AH-1")
    b.panel("CO-P1", "AG-CO").panel("CAB-P1", "AG-CAB").panel("PR-P1", "AG-PR", ports=2)
    b.cable(
        "F-1",
        ["S1", "S2", "S3"],
        [("CO-P1", 0.0), ("AC-1", 305.0), ("CAB-P1", 1020.0)],
        slack=[("AH-2", 12.0)],
    )
    b.cable("D-1", ["S4"], [("AC-1", 0.0), ("PR-P1", 123.0)], units=1, kind="central_core")
    b.splice("AC-1", "F-1:5/A", "D-1:1", loss_db=0.05)
    for n in range(1, 9):
        b.terminate(f"F-1:{n}", f"CO-P1:{n}")
        if n != 5:
            b.terminate(f"F-1:{n}", f"CAB-P1:{n}")
    b.terminate("D-1:1", "PR-P1:1", method="field_connector")
    b.circuit("AG-1", "CO-P1:1", "CAB-P1:1")
    b.circuit("AG-2", "CO-P1:5", "PR-P1:1", kind="dark_fiber", customer="Ashgrove Kiln Works")
    return b


def larkspur() -> Bundle:
    """A splicing yard: closure LC-1 in manhole LK-MH1 (2 trays of 24) where many cables meet.

    Ending at LC-1 from the office panel LK-P1: C-A (4 x 12 loose tube), R-1 (2 ribbons).
    Starting at LC-1 toward premises panel LK-P2: C-B (4 x 12), R-2 (2 ribbons), M-1 (12
    multimode, tight-buffered), D-1 (12, central core). C-T (2 x 12) runs LK-P1 -> LC-1 ->
    LC-2 (manhole LK-MH2, 1 tray of 12) -> LK-P3 mid-span at both closures; C-X (12) runs
    LC-2 -> LK-P3 and never enters LC-1. Splitters LS-1 (1x8) and LS-2 (1x4) sit in LC-1;
    LS-2's leg 1 is terminated on port 1 of the manhole panel LK-MP. Recorded already:
    C-A:48 to C-B:48 in tray 2 slot 24 (fusion, 0.04 dB).
    """
    b = Bundle().fiber_type(SINGLE_MODE).fiber_type(MULTIMODE)
    b.structure("LK-CO", 0, kind="central_office").structure("LK-MH1", 400)
    b.structure("LK-MH2", 800).structure("LK-PR", 400, 150, kind="customer_premises")
    b.structure("LK-BLD", 1200, kind="building_entrance")
    b.span("L1", "LK-CO", "LK-MH1", 400.0).span("L2", "LK-MH1", "LK-MH2", 400.0)
    b.span("L3", "LK-MH1", "LK-PR", 150.0).span("L4", "LK-MH2", "LK-BLD", 400.0)
    b.closure("LC-1", "LK-MH1", trays=2, slots=24).closure("LC-2", "LK-MH2", trays=1, slots=12)
    b.panel("LK-P1", "LK-CO", ports=96).panel("LK-P2", "LK-PR", ports=96)
    b.panel("LK-P3", "LK-BLD").panel("LK-MP", "LK-MH1", ports=4)
    b.splitter("LS-1", "LC-1", "1x8").splitter("LS-2", "LC-1", "1x4")
    for label in ("C-A", "R-1"):
        kind = "ribbon" if label.startswith("R") else "loose_tube"
        units = 2 if kind == "ribbon" else 4
        b.cable(label, ["L1"], [("LK-P1", 0.0), ("LC-1", 410.0)], units=units, kind=kind)
    b.cable("C-B", ["L3"], [("LC-1", 0.0), ("LK-P2", 160.0)], units=4)
    b.cable("R-2", ["L3"], [("LC-1", 0.0), ("LK-P2", 160.0)], kind="ribbon")
    b.cable(
        "M-1",
        ["L3"],
        [("LC-1", 0.0), ("LK-P2", 160.0)],
        units=1,
        kind="tight_buffered",
        fiber_type="MM-TEST",
    )
    b.cable("D-1", ["L3"], [("LC-1", 0.0), ("LK-P2", 160.0)], units=1, kind="central_core")
    b.cable(
        "C-T",
        ["L1", "L2", "L4"],
        [("LK-P1", 0.0), ("LC-1", 405.0), ("LC-2", 810.0), ("LK-P3", 1215.0)],
    )
    b.cable("C-X", ["L4"], [("LC-2", 0.0), ("LK-P3", 405.0)], units=1)
    b.terminate("LS-2:1", "LK-MP:1")
    b.splice("LC-1", "C-A:48", "C-B:48", tray=2, slot=24, loss_db=0.04)
    return b


def long_route(
    first_m: float = 60_000.0,
    second_m: float = 60_000.0,
    role: str = "regenerator",
    middle_optics: bool = True,
) -> Bundle:
    """A long route EAST -> MID -> WEST with active gear in the middle, circuit LONG.

    Terminal TE at office EAST and TW at office WEST (launch +2.0 dBm, sensitivity -18.0 dBm:
    a 20 dB budget, invented optics). Cable LH-1 (`first_m`) runs from panel PE to PM1 at hut
    MID, LH-2 (`second_m`) from PM2 to PW; both strands 1 are pigtail-spliced at each panel
    (the default termination). The gear in MID (`REGEN` for role "regenerator", `AMP` for
    "amplifier") is patched PM1:1 -> west, east -> PM2:1, with the same optics as the ends
    when `middle_optics`, else none recorded.
    """
    gear = {"regenerator": "REGEN", "amplifier": "AMP"}[role]
    optics: dict[str, Any] = {"tx_dbm": 2.0, "rx_sensitivity_dbm": -18.0}
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("EAST", 0, kind="central_office").structure("MID", first_m, kind="hut")
    b.structure("WEST", first_m + second_m, kind="central_office")
    b.span("E-M", "EAST", "MID", first_m).span("M-W", "MID", "WEST", second_m)
    b.panel("PE", "EAST").panel("PM1", "MID").panel("PM2", "MID").panel("PW", "WEST")
    b.cable("LH-1", ["E-M"], [("PE", 0.0), ("PM1", first_m)])
    b.cable("LH-2", ["M-W"], [("PM2", 0.0), ("PW", second_m)])
    b.terminate("LH-1:1", "PE:1").terminate("LH-1:1", "PM1:1")
    b.terminate("LH-2:1", "PM2:1").terminate("LH-2:1", "PW:1")
    b.equipment("TE", "EAST", ["1"], **optics)
    b.equipment("TW", "WEST", ["1"], **optics)
    b.equipment(gear, "MID", ["west", "east"], role=role, **(optics if middle_optics else {}))
    b.jumper("TE:1", "PE:1").jumper("PM1:1", f"{gear}:west").jumper(f"{gear}:east", "PM2:1")
    b.jumper("PW:1", "TW:1")
    b.circuit("LONG", "TE:1", "TW:1")
    return b


def ashgrove_two_input_splitter() -> Bundle:
    """Ashgrove with a 2x4 splitter SP-2 in AC-1: inputs fed by F-1:6/A and F-1:7/A (both cut
    at AC-1, so both back to CO-P1:6 and CO-P1:7), leg 1 spliced to drop D-1:2, which is
    field-connectorised on PR-P1:2."""
    b = ashgrove()
    b.splitter("SP-2", "AC-1", "2x4")
    b.cut("AC-1", "F-1:6").cut("AC-1", "F-1:7")
    b.splice("AC-1", "F-1:6/A", "SP-2:in", slot=2)
    b.splice("AC-1", "F-1:7/A", "SP-2:in2", slot=3)
    b.splice("AC-1", "SP-2:1", "D-1:2", slot=4)
    b.terminate("D-1:2", "PR-P1:2", method="field_connector")
    return b
