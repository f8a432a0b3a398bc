"""Quillmere, the invented town that `plantdb demo` loads, built as a plantdb bundle.

The town, its streets, customers and labels are invented. The bundle is computed from the tables
below without randomness, so every call returns the same dict.
"""

from __future__ import annotations

import copy
import json
import math
from typing import Any, NamedTuple

from pyproj import Geod

Bundle = dict[str, Any]

TOWN_NAME = "Quillmere"

# The central office stands at this invented spot on open prairie. The tables give positions in
# metres east (x) and north (y) of it; _lonlat turns them into WGS 84 degrees.
_ORIGIN_LON = -101.852
_ORIGIN_LAT = 46.341
# Metres per degree of latitude near 46° N (trade, rounded). Only a drawing aid: every length in
# the bundle is measured afterwards on the WGS 84 ellipsoid.
_M_PER_DEG_LAT = 111_170.0
_GEOD = Geod(ellps="WGS84")

# A surveyed length differs from the drawn line by a percent or two (wheel along the trench versus
# the map); a fixed cycle keeps the bundle identical on every call.
_SURVEY_SCATTER = (1.018, 0.991, 1.007, 1.024, 0.986, 1.012, 0.997)
# Sheath runs a little longer than the street between two worked places: it bends through ducts
# and manholes and climbs into each closure (trade).
_SHEATH_OVERRUN = 1.012
_SHEATH_TAILS_M = 3.0

# label, kind, x metres east, y metres north of the central office
_STRUCTURES: tuple[tuple[str, str, float, float], ...] = (
    ("QM-CO", "central_office", 0, 0),
    # Kestrel Avenue, the main street, east to the hut
    ("QM-MH01", "manhole", 240, 30),
    ("QM-MH02", "manhole", 520, 110),
    ("QM-VLT1", "vault", 830, 150),
    ("QM-MH03", "manhole", 1140, 90),
    ("QM-MH04", "manhole", 1450, -30),
    ("QM-HUT-E", "hut", 1760, -110),
    # Tannery Row, north from the vault to the Tannery Exchange building
    ("QM-HH01", "handhole", 860, 380),
    ("QM-BE1", "building_entrance", 900, 520),
    ("QM-PR09", "customer_premises", 906, 531),  # third-floor suites above the entrance
    # Heron Lane, north from the office
    ("QM-MH05", "manhole", -30, 280),
    ("QM-MH06", "manhole", -10, 620),
    ("QM-CAB-N", "cabinet", 50, 950),
    ("QM-HH04", "handhole", 90, 1330),
    ("QM-PR11", "customer_premises", 260, 1420),
    # Willow Crescent pole line and the shops along it
    ("QM-PL01", "pole", 170, 1000),
    ("QM-PL02", "pole", 290, 1060),
    ("QM-PL03", "pole", 390, 1150),
    ("QM-PL04", "pole", 460, 1260),
    ("QM-PL05", "pole", 500, 1390),
    ("QM-PL06", "pole", 510, 1520),
    ("QM-PR01", "customer_premises", 250, 1120),
    ("QM-PR02", "customer_premises", 330, 990),
    ("QM-PR03", "customer_premises", 530, 1220),
    ("QM-PR04", "customer_premises", 400, 1300),
    ("QM-PR05", "customer_premises", 580, 1560),
    # Millrace Road, south from Kestrel Avenue
    ("QM-PED1", "pedestal", 560, -200),
    ("QM-PED2", "pedestal", 500, -480),
    ("QM-PED3", "pedestal", 610, -760),
    ("QM-PR06", "customer_premises", 640, -240),
    ("QM-PR07", "customer_premises", 700, -800),
    # Brambleworth Way east of the hut, and Orchard Loop south of Kestrel Avenue
    ("QM-HH02", "handhole", 2020, -60),
    ("QM-PR08", "customer_premises", 2230, 40),
    ("QM-HH03", "handhole", 1180, -220),
    ("QM-PR10", "customer_premises", 1320, -380),
)

# label, from, to, kind, bow of the street to the left of from->to in metres (0: straight),
# whether a surveyed length is on file (else the loader measures the geometry)
_SPANS: tuple[tuple[str, str, str, str, float, bool], ...] = (
    ("QM-S01", "QM-CO", "QM-MH01", "underground", 12, True),
    ("QM-S02", "QM-MH01", "QM-MH02", "underground", 18, True),
    ("QM-S03", "QM-MH02", "QM-VLT1", "underground", 14, True),
    ("QM-S04", "QM-VLT1", "QM-MH03", "underground", -10, True),
    ("QM-S05", "QM-MH04", "QM-MH03", "underground", 16, True),  # drawn from the hut side
    ("QM-S06", "QM-MH04", "QM-HUT-E", "underground", -12, True),
    ("QM-S07", "QM-CO", "QM-MH05", "underground", -8, True),
    ("QM-S08", "QM-MH05", "QM-MH06", "underground", 20, True),
    ("QM-S09", "QM-MH06", "QM-CAB-N", "underground", -15, True),
    ("QM-S10", "QM-CAB-N", "QM-HH04", "underground", 18, True),
    ("QM-S11", "QM-CAB-N", "QM-PL01", "aerial", 0, True),
    ("QM-S12", "QM-PL01", "QM-PL02", "aerial", 8, True),
    ("QM-S13", "QM-PL02", "QM-PL03", "aerial", 10, True),
    ("QM-S14", "QM-PL03", "QM-PL04", "aerial", 10, True),
    ("QM-S15", "QM-PL04", "QM-PL05", "aerial", 12, True),
    ("QM-S16", "QM-PL05", "QM-PL06", "aerial", 8, True),
    ("QM-S17", "QM-PL02", "QM-PR01", "aerial", 0, True),
    ("QM-S18", "QM-PL02", "QM-PR02", "aerial", 0, False),
    ("QM-S19", "QM-PL04", "QM-PR03", "aerial", 0, True),
    ("QM-S20", "QM-PL04", "QM-PR04", "aerial", 0, True),
    ("QM-S21", "QM-PL06", "QM-PR05", "aerial", 0, False),
    ("QM-S22", "QM-VLT1", "QM-HH01", "underground", 20, True),
    ("QM-S23", "QM-HH01", "QM-BE1", "underground", -6, True),
    ("QM-S24", "QM-BE1", "QM-PR09", "inside", 0, False),
    ("QM-S25", "QM-MH02", "QM-PED1", "buried", -20, True),
    ("QM-S26", "QM-PED2", "QM-PED1", "buried", -25, True),  # drawn from the south end
    ("QM-S27", "QM-PED2", "QM-PED3", "buried", -20, True),
    ("QM-S28", "QM-PED1", "QM-PR06", "buried", 0, False),
    ("QM-S29", "QM-PED3", "QM-PR07", "buried", 6, True),
    ("QM-S30", "QM-HUT-E", "QM-HH02", "underground", 10, True),
    ("QM-S31", "QM-HH02", "QM-PR08", "buried", -8, True),
    ("QM-S32", "QM-MH03", "QM-HH03", "underground", 25, True),
    ("QM-S33", "QM-HH03", "QM-PR10", "buried", 15, True),
    ("QM-S34", "QM-HH04", "QM-PR11", "buried", -12, False),
)

_ROUTES: tuple[tuple[str, str, tuple[str, ...]], ...] = (
    ("QM-RT-KESTREL", "Kestrel Avenue duct bank", ("QM-S01", "QM-S02", "QM-S03", "QM-S04",
                                                    "QM-S05", "QM-S06")),
    ("QM-RT-HERON", "Heron Lane duct", ("QM-S07", "QM-S08", "QM-S09", "QM-S10")),
    ("QM-RT-WILLOW", "Willow Crescent pole line", ("QM-S11", "QM-S12", "QM-S13", "QM-S14",
                                                   "QM-S15", "QM-S16")),
    ("QM-RT-MILLRACE", "Millrace Road buried route", ("QM-S25", "QM-S26", "QM-S27")),
    ("QM-RT-TANNERY", "Tannery Row duct", ("QM-S22", "QM-S23")),
)  # fmt: skip

_SINGLE_MODE_ATTENUATION = {
    # Maximum: ANSI/TIA-568.3-D outside-plant allowance; typical: trade planning values.
    "1310": {"max": 0.5, "typical": 0.35},
    "1550": {"max": 0.5, "typical": 0.22},
}
# Group index of standard single-mode fiber, from a fiber datasheet (seen).
_SINGLE_MODE_INDEX = {"1310": 1.4677, "1550": 1.4682}

_FIBER_TYPES: list[Bundle] = [
    {"name": "SM-G652D", "mode": "single-mode", "standard": "ITU-T G.652.D",
     "attenuation_db_per_km": _SINGLE_MODE_ATTENUATION, "group_index": _SINGLE_MODE_INDEX},
    {"name": "SM-G657A2", "mode": "single-mode", "standard": "ITU-T G.657.A2",
     "attenuation_db_per_km": _SINGLE_MODE_ATTENUATION, "group_index": _SINGLE_MODE_INDEX},
    # Maximum: ANSI/TIA-568.3-D multimode allowance (memory); typical: trade planning values;
    # group index of 50/125 fiber (seen).
    {"name": "MM-OM4", "mode": "multimode", "standard": "OM4",
     "attenuation_db_per_km": {"850": {"max": 3.5, "typical": 2.5},
                               "1300": {"max": 1.5, "typical": 0.8}},
     "group_index": {"850": 1.481, "1300": 1.476}},
]  # fmt: skip

# label, structure, trays, slots per tray
_CLOSURES: tuple[tuple[str, str, int, int], ...] = (
    ("QM-SC-MH02", "QM-MH02", 3, 12),
    ("QM-SC-VLT1", "QM-VLT1", 4, 12),
    ("QM-SC-HH01", "QM-HH01", 4, 12),
    ("QM-SC-MH03", "QM-MH03", 2, 12),
    ("QM-SC-CABN", "QM-CAB-N", 2, 24),
    ("QM-SC-HH04", "QM-HH04", 1, 12),
    ("QM-SC-PL02", "QM-PL02", 1, 12),
    ("QM-SC-PL04", "QM-PL04", 1, 12),
    ("QM-SC-PL06", "QM-PL06", 1, 12),
    ("QM-SC-PED1", "QM-PED1", 1, 12),
    ("QM-SC-PED3", "QM-PED3", 1, 12),
)

# label, structure, ports, connector, polish (PON panels are angle-polished against reflections)
_PANELS: tuple[tuple[str, str, int, str, str], ...] = (
    ("QM-CO-ODF1", "QM-CO", 96, "LC", "UPC"),
    ("QM-CO-ODF2", "QM-CO", 24, "SC", "APC"),
    ("QM-HUTE-ODF1", "QM-HUT-E", 24, "LC", "UPC"),
    ("QM-HUTE-ODF2", "QM-HUT-E", 12, "LC", "UPC"),
    ("QM-CABN-P1", "QM-CAB-N", 12, "SC", "APC"),
    ("QM-BE1-MDF", "QM-BE1", 24, "LC", "UPC"),
    ("QM-BE1-RPA", "QM-BE1", 12, "LC", "UPC"),
    ("QM-BE1-RP3", "QM-PR09", 12, "LC", "UPC"),
    *((f"QM-PR0{n}-P", f"QM-PR0{n}", 2, "SC", "APC") for n in range(1, 6)),
    ("QM-PR06-P", "QM-PR06", 2, "LC", "UPC"),
    ("QM-PR07-P", "QM-PR07", 2, "LC", "UPC"),
    ("QM-PR08-P", "QM-PR08", 12, "LC", "UPC"),
    ("QM-PR10-P", "QM-PR10", 12, "LC", "UPC"),
    ("QM-PR11-P", "QM-PR11", 4, "LC", "UPC"),
)

_SWITCH_PORTS = [str(n) for n in range(1, 9)]
_EQUIPMENT: list[Bundle] = [
    # GPON class B+ optics: launch +1.5..+5 dBm, sensitivity -28 dBm (ITU-T G.984.2, memory).
    {"label": "QM-OLT1", "at": "QM-CO", "ports": ["1/1", "1/2", "1/3", "1/4"], "role": "olt",
     "tx_dbm": 3.0, "rx_sensitivity_dbm": -28.0},
    # 10 km single-mode Ethernet optics: launch up to +0.5 dBm, sensitivity -14.4 dBm (memory).
    {"label": "QM-SW-CO1", "at": "QM-CO", "ports": _SWITCH_PORTS, "role": "switch",
     "tx_dbm": 0.5, "rx_sensitivity_dbm": -14.4},
    {"label": "QM-SW-HUTE", "at": "QM-HUT-E", "ports": _SWITCH_PORTS, "role": "switch",
     "tx_dbm": 0.5, "rx_sensitivity_dbm": -14.4},
    # Ports 1-2 single-mode uplinks, 3-6 short-reach multimode for the tenants' riser.
    {"label": "QM-SW-BE1", "at": "QM-BE1", "ports": _SWITCH_PORTS[:6], "role": "switch"},
]  # fmt: skip

_SPLITTERS: list[Bundle] = [
    {"label": "QM-SPL-N1", "at": "QM-SC-CABN", "ratio": "1x8"},
    {"label": "QM-SPL-N2", "at": "QM-SC-CABN", "ratio": "1x32"},
]


class _CableSpec(NamedTuple):
    label: str
    fiber_type: str
    kind: str
    units: int
    fibers_per_unit: int
    spans: tuple[str, ...]
    stations: tuple[str, ...]
    first_mark: float = 0.0
    descending: bool = False  # marks counting down from the A end
    slack: tuple[tuple[str, float], ...] = ()


_CABLES: tuple[_CableSpec, ...] = (
    # The Kestrel Avenue trunk: opened at MH02 (tubes 2-3 to Millrace Road), at the vault (tubes
    # 5-6 to the Tannery Exchange) and at MH03 (tube 7 to Orchard Loop, tube 8 cut for later).
    _CableSpec("QM-F288", "SM-G652D", "loose_tube", 24, 12,
               ("QM-S01", "QM-S02", "QM-S03", "QM-S04", "QM-S05", "QM-S06"),
               ("QM-CO-ODF1", "QM-SC-MH02", "QM-SC-VLT1", "QM-SC-MH03", "QM-HUTE-ODF1"),
               1000.0, slack=(("QM-MH01", 15.0), ("QM-MH04", 20.0))),
    # The Heron Lane feeder, pulled from the far end so its marks count down from the office.
    _CableSpec("QM-F144", "SM-G652D", "loose_tube", 12, 12,
               ("QM-S07", "QM-S08", "QM-S09", "QM-S10"),
               ("QM-CO-ODF2", "QM-SC-CABN", "QM-SC-HH04"),
               6000.0, descending=True, slack=(("QM-MH05", 10.0),)),
    _CableSpec("QM-F48M", "SM-G652D", "loose_tube", 4, 12,
               ("QM-S25", "QM-S26", "QM-S27"), ("QM-SC-MH02", "QM-SC-PED1", "QM-SC-PED3"), 120.0),
    _CableSpec("QM-D48W", "SM-G652D", "loose_tube", 4, 12,
               ("QM-S11", "QM-S12", "QM-S13", "QM-S14", "QM-S15", "QM-S16"),
               ("QM-SC-CABN", "QM-SC-PL02", "QM-SC-PL04", "QM-SC-PL06"),
               slack=(("QM-PL03", 15.0),)),
    # The Tannery Row lateral was rebuilt from HH01 when the building entrance moved, so two
    # ribbon cables meet there, joined ribbon to ribbon.
    _CableSpec("QM-R72A", "SM-G652D", "ribbon", 6, 12, ("QM-S22",),
               ("QM-SC-VLT1", "QM-SC-HH01"), 2210.0),
    _CableSpec("QM-R72B", "SM-G652D", "ribbon", 6, 12, ("QM-S23",),
               ("QM-SC-HH01", "QM-BE1-MDF"), 40.0),
    _CableSpec("QM-F12O", "SM-G652D", "loose_tube", 1, 12, ("QM-S32", "QM-S33"),
               ("QM-SC-MH03", "QM-PR10-P"), 15.0),
    _CableSpec("QM-F12E", "SM-G652D", "loose_tube", 1, 12, ("QM-S30", "QM-S31"),
               ("QM-HUTE-ODF2", "QM-PR08-P"), 300.0),
    # A stub inside the cabinet carrying splitter test legs to its panel: no spans.
    _CableSpec("QM-K12C", "SM-G657A2", "central_core", 1, 12, (),
               ("QM-SC-CABN", "QM-CABN-P1")),
    # The multimode riser from the basement panel to the third-floor suites.
    _CableSpec("QM-M12R", "MM-OM4", "tight_buffered", 1, 12, ("QM-S24",),
               ("QM-BE1-RPA", "QM-BE1-RP3")),
    *(
        _CableSpec(f"QM-DR{n}", "SM-G657A2", "central_core", 1, fibers, (span,),
                   (closure, f"QM-PR{n}-P"))
        for n, span, closure, fibers in (
            ("01", "QM-S17", "QM-SC-PL02", 2), ("02", "QM-S18", "QM-SC-PL02", 2),
            ("03", "QM-S19", "QM-SC-PL04", 2), ("04", "QM-S20", "QM-SC-PL04", 2),
            ("05", "QM-S21", "QM-SC-PL06", 2), ("06", "QM-S28", "QM-SC-PED1", 2),
            ("07", "QM-S29", "QM-SC-PED3", 2), ("11", "QM-S34", "QM-SC-HH04", 4),
        )
    ),
)  # fmt: skip


def _run(cable: str, first: int, count: int, side: str = "") -> list[str]:
    """Fiber-end addresses of `count` strands from `first`; side "A"/"B" at a mid-span access."""
    suffix = f"/{side}" if side else ""
    return [f"{cable}:{n}{suffix}" for n in range(first, first + count)]


def _legs(splitter: str, first: int, count: int) -> list[str]:
    """Output-leg addresses of a splitter."""
    return [f"{splitter}:{n}" for n in range(first, first + count)]


def _splice_groups() -> list[tuple[str, list[str], list[str], str]]:
    """Splices as (closure, a ends, b ends, method), in the order they fill the trays."""
    return [
        # Tubes 2-3 of the trunk turn south onto Millrace Road; their /B pieces stay dark.
        ("QM-SC-MH02", _run("QM-F288", 13, 24, "A"), _run("QM-F48M", 1, 24), "fusion"),
        ("QM-SC-VLT1", _run("QM-F288", 49, 24, "A"), _run("QM-R72A", 1, 24), "fusion"),
        ("QM-SC-HH01", _run("QM-R72A", 1, 36), _run("QM-R72B", 1, 36), "mass_fusion"),
        ("QM-SC-MH03", _run("QM-F288", 73, 12, "A"), _run("QM-F12O", 1, 12), "fusion"),
        # The PON split point: two feeder strands cut at the cabinet feed the splitters.
        ("QM-SC-CABN", ["QM-F144:1/A", "QM-F144:2/A"], ["QM-SPL-N1:in", "QM-SPL-N2:in"],
         "fusion"),
        ("QM-SC-CABN", _legs("QM-SPL-N1", 1, 7), _run("QM-D48W", 1, 7), "fusion"),
        ("QM-SC-CABN", _legs("QM-SPL-N2", 1, 4), _run("QM-D48W", 9, 4), "fusion"),
        # One test leg from each splitter to the cabinet's own panel.
        ("QM-SC-CABN", ["QM-SPL-N1:8", "QM-SPL-N2:32"], _run("QM-K12C", 1, 2), "fusion"),
        ("QM-SC-HH04", _run("QM-F144", 13, 2), _run("QM-DR11", 1, 2), "fusion"),
        ("QM-SC-PL02", _run("QM-D48W", 1, 2, "A"), ["QM-DR01:1", "QM-DR02:1"], "fusion"),
        ("QM-SC-PL04", _run("QM-D48W", 3, 2, "A"), ["QM-DR03:1", "QM-DR04:1"], "fusion"),
        ("QM-SC-PL06", ["QM-D48W:5"], ["QM-DR05:1"], "mechanical"),
        ("QM-SC-PED1", _run("QM-F48M", 1, 2, "A"), _run("QM-DR06", 1, 2), "fusion"),
        ("QM-SC-PED3", _run("QM-F48M", 3, 2), _run("QM-DR07", 1, 2), "fusion"),
    ]  # fmt: skip


# Strands opened and cut at a mid-span access with nothing spliced yet.
_CUTS = [("QM-SC-CABN", n) for n in _run("QM-F144", 3, 10)] + [
    ("QM-SC-MH03", n) for n in _run("QM-F288", 85, 12)
]

# Measured splice losses in dB, cycled; every third splice has no measurement on file.
_MEASURED_LOSS = {
    "fusion": (0.02, 0.04, 0.03, 0.05, 0.01),
    "mass_fusion": (0.05, 0.08, 0.06),
    "mechanical": (0.12, 0.18),
}

# cable, first strand, panel, first port, count, method (None: the pigtail-splice default)
_TERMINATIONS: tuple[tuple[str, int, str, int, int, str | None], ...] = (
    ("QM-F288", 1, "QM-CO-ODF1", 1, 96, None),
    ("QM-F288", 1, "QM-HUTE-ODF1", 1, 12, None),
    ("QM-F288", 37, "QM-HUTE-ODF1", 13, 12, None),
    ("QM-F144", 1, "QM-CO-ODF2", 1, 24, None),
    ("QM-R72B", 1, "QM-BE1-MDF", 1, 24, None),
    ("QM-F12E", 1, "QM-HUTE-ODF2", 1, 12, None),
    ("QM-F12E", 1, "QM-PR08-P", 1, 12, None),
    ("QM-F12O", 1, "QM-PR10-P", 1, 12, None),
    ("QM-K12C", 1, "QM-CABN-P1", 1, 12, None),
    ("QM-M12R", 1, "QM-BE1-RPA", 1, 12, "field_connector"),
    ("QM-M12R", 1, "QM-BE1-RP3", 1, 12, "field_connector"),
    *((f"QM-DR{n}", 1, f"QM-PR{n}-P", 1, 2, "field_connector")
      for n in ("01", "02", "03", "04", "05", "06", "07")),
    ("QM-DR11", 1, "QM-PR11-P", 1, 4, "field_connector"),
)  # fmt: skip

_JUMPERS: tuple[tuple[str, str, float], ...] = (
    ("QM-SW-CO1:1", "QM-CO-ODF1:1", 5.0),
    ("QM-SW-CO1:2", "QM-CO-ODF1:2", 5.0),
    ("QM-SW-CO1:3", "QM-CO-ODF1:15", 5.0),
    ("QM-SW-CO1:4", "QM-CO-ODF1:49", 5.0),
    ("QM-SW-CO1:5", "QM-CO-ODF1:73", 5.0),
    ("QM-OLT1:1/1", "QM-CO-ODF2:1", 3.0),
    ("QM-OLT1:1/2", "QM-CO-ODF2:2", 3.0),
    ("QM-SW-HUTE:1", "QM-HUTE-ODF1:1", 2.0),
    ("QM-SW-HUTE:2", "QM-HUTE-ODF1:2", 2.0),
    ("QM-SW-HUTE:3", "QM-HUTE-ODF2:1", 2.0),
    ("QM-SW-BE1:1", "QM-BE1-MDF:1", 3.0),
    ("QM-SW-BE1:3", "QM-BE1-RPA:1", 2.0),
)

# label, kind, status, a, z, customer. The path of each, walked by hand (-j- a jumper, -t- a
# termination, -s- a splice; a strand "expresses" through a closure where it is not cut):
_CIRCUITS: tuple[tuple[str, str, str, str, str, str | None], ...] = (
    # SW-CO1:1 -j- CO-ODF1:1 -t- F288:1 (expresses MH02, VLT1, MH03) -t- HUTE-ODF1:1 -j- SW-HUTE:1
    ("QM-BB-01", "backbone", "active", "QM-SW-CO1:1", "QM-SW-HUTE:1", None),
    # the same on strand 2
    ("QM-BB-02", "backbone", "active", "QM-SW-CO1:2", "QM-SW-HUTE:2", None),
    ("QM-BB-03", "backbone", "reserved", "QM-CO-ODF1:3", "QM-HUTE-ODF1:3", None),
    ("QM-BB-00", "backbone", "retired", "QM-CO-ODF1:4", "QM-HUTE-ODF1:4", None),
    # SW-CO1:4 -j- CO-ODF1:49 -t- F288:49/A -s(SC-VLT1)- R72A:1 -s(SC-HH01, mass fusion)-
    # R72B:1 -t- BE1-MDF:1 -j- SW-BE1:1
    ("QM-BB-04", "backbone", "active", "QM-SW-CO1:4", "QM-SW-BE1:1", None),
    # CO-ODF1:50 -t- F288:50/A -s- R72A:2 -s- R72B:2 -t- BE1-MDF:2
    ("QM-DF-04", "dark_fiber", "active", "QM-CO-ODF1:50", "QM-BE1-MDF:2",
     "Tannery Row Mutual Savings"),
    # SW-BE1:3 -j- BE1-RPA:1 -t- M12R:1 (multimode riser) -t- BE1-RP3:1
    ("QM-LAN-01", "customer_drop", "active", "QM-SW-BE1:3", "QM-BE1-RP3:1",
     "Cobblequill Cartography"),
    ("QM-LAN-02", "customer_drop", "reserved", "QM-BE1-RPA:3", "QM-BE1-RP3:3",
     "Inkwell Loft Studios"),
    # OLT1:1/1 -j- CO-ODF2:1 -t- F144:1/A -s(SC-CABN)- SPL-N1:in, leg 8 -s- K12C:1 -t- CABN-P1:1
    ("QM-PON-N1", "pon_feeder", "active", "QM-OLT1:1/1", "QM-CABN-P1:1", None),
    # OLT1:1/2 -j- CO-ODF2:2 -t- F144:2/A -s- SPL-N2:in (1x32), leg 32 -s- K12C:2 -t- CABN-P1:2
    ("QM-PON-N2", "pon_feeder", "planned", "QM-OLT1:1/2", "QM-CABN-P1:2", None),
    # ... SPL-N1:in, leg 1 -s- D48W:1 -> D48W:1/A at SC-PL02 -s- DR01:1 -t- PR01-P:1
    ("QM-CD-01", "customer_drop", "active", "QM-OLT1:1/1", "QM-PR01-P:1", "Wickerbell Pottery"),
    # ... leg 2 -s- D48W:2 -> D48W:2/A at SC-PL02 -s- DR02:1 -t- PR02-P:1
    ("QM-CD-02", "customer_drop", "active", "QM-OLT1:1/1", "QM-PR02-P:1", "Finchmoss Books"),
    # ... leg 3 -s- D48W:3 (expresses SC-PL02) -> D48W:3/A at SC-PL04 -s- DR03:1 -t- PR03-P:1
    ("QM-CD-03", "customer_drop", "active", "QM-OLT1:1/1", "QM-PR03-P:1",
     "Otterbank Animal Clinic"),
    ("QM-CD-04", "customer_drop", "planned", "QM-OLT1:1/1", "QM-PR04-P:1", "Pebblewick Dental"),
    ("QM-CD-05", "customer_drop", "out_of_service", "QM-OLT1:1/1", "QM-PR05-P:1",
     "Gorsefield Guesthouse"),
    # CO-ODF1:13 -t- F288:13/A -s(SC-MH02)- F48M:1 -> F48M:1/A at SC-PED1 -s- DR06:1 -t- PR06-P:1
    ("QM-DF-01", "dark_fiber", "active", "QM-CO-ODF1:13", "QM-PR06-P:1",
     "Loaf & Crumb Millrace Bakery"),
    ("QM-DF-02", "dark_fiber", "out_of_service", "QM-CO-ODF1:14", "QM-PR06-P:2",
     "Loaf & Crumb Millrace Bakery"),
    # SW-CO1:3 -j- CO-ODF1:15 -t- F288:15/A -s(SC-MH02)- F48M:3 (expresses SC-PED1)
    # -s(SC-PED3)- DR07:1 -t- PR07-P:1
    ("QM-CD-07", "customer_drop", "active", "QM-SW-CO1:3", "QM-PR07-P:1",
     "Thimblethorn Tailoring"),
    # SW-HUTE:3 -j- HUTE-ODF2:1 -t- F12E:1 -t- PR08-P:1
    ("QM-CD-08", "customer_drop", "active", "QM-SW-HUTE:3", "QM-PR08-P:1",
     "Brambleworth Trade Park"),
    # SW-CO1:5 -j- CO-ODF1:73 -t- F288:73/A -s(SC-MH03)- F12O:1 -t- PR10-P:1
    ("QM-CD-10", "customer_drop", "active", "QM-SW-CO1:5", "QM-PR10-P:1", "Orchard Loop School"),
    # CO-ODF2:13 -t- F144:13 (expresses SC-CABN) -s(SC-HH04)- DR11:1 -t- PR11-P:1
    ("QM-DF-05", "dark_fiber", "active", "QM-CO-ODF2:13", "QM-PR11-P:1",
     "Heronmoor Grain Co-op"),
)  # fmt: skip


def _xy_of() -> dict[str, tuple[float, float]]:
    """Each structure's position in the town's metre grid."""
    return {label: (x, y) for label, _kind, x, y in _STRUCTURES}


def _lonlat(x: float, y: float) -> list[float]:
    """WGS 84 [longitude, latitude] of a point x metres east and y metres north of the office."""
    lat = _ORIGIN_LAT + y / _M_PER_DEG_LAT
    lon = _ORIGIN_LON + x / (_M_PER_DEG_LAT * math.cos(math.radians(_ORIGIN_LAT)))
    return [round(lon, 7), round(lat, 7)]


def _street_bends(
    start: tuple[float, float], end: tuple[float, float], bow_m: float
) -> list[list[float]]:
    """Interior vertices of a street bowing `bow_m` left of start->end (a quadratic curve)."""
    if bow_m == 0:
        return []
    (x0, y0), (x1, y1) = start, end
    chord = math.hypot(x1 - x0, y1 - y0)
    # A quadratic curve's midpoint lies halfway to its control point, hence twice the bow.
    cx = (x0 + x1) / 2 - (y1 - y0) / chord * 2 * bow_m
    cy = (y0 + y1) / 2 + (x1 - x0) / chord * 2 * bow_m
    count = min(5, max(2, round(chord / 90)))
    bends: list[list[float]] = []
    for i in range(1, count + 1):
        t = i / (count + 1)
        x = (1 - t) ** 2 * x0 + 2 * t * (1 - t) * cx + t**2 * x1
        y = (1 - t) ** 2 * y0 + 2 * t * (1 - t) * cy + t**2 * y1
        bends.append(_lonlat(x, y))
    return bends


def _geodesic_m(geometry: list[list[float]]) -> float:
    """Length of a line on the WGS 84 ellipsoid, in metres."""
    lons, lats = zip(*geometry, strict=True)
    return float(_GEOD.line_length(lons, lats))


def _build_spans() -> list[Bundle]:
    xy = _xy_of()
    spans: list[Bundle] = []
    for n, (label, start, end, kind, bow, surveyed) in enumerate(_SPANS):
        bends = _street_bends(xy[start], xy[end], bow)
        geometry = [_lonlat(*xy[start]), *bends, _lonlat(*xy[end])]
        span: Bundle = {"label": label, "from": start, "to": end, "kind": kind}
        if surveyed:
            scatter = _SURVEY_SCATTER[n % len(_SURVEY_SCATTER)]
            span["length_m"] = round(_geodesic_m(geometry) * scatter, 1)
        span["geometry"] = geometry
        spans.append(span)
    return spans


def _walk(span_labels: tuple[str, ...], spans: dict[str, Bundle]) -> list[str]:
    """Structures met walking the spans in order; a span may be walked against its drawing."""
    first = spans[span_labels[0]]
    start = first["from"]
    if len(span_labels) > 1 and start in (
        spans[span_labels[1]]["from"],
        spans[span_labels[1]]["to"],
    ):
        start = first["to"]
    path = [start]
    for label in span_labels:
        span = spans[label]
        if path[-1] not in (span["from"], span["to"]):
            raise ValueError(f"cable span {label} does not join at {path[-1]}")
        path.append(span["to"] if span["from"] == path[-1] else span["from"])
    return path


def _stations(spec: _CableSpec, spans: dict[str, Bundle], places: dict[str, str]) -> list[Bundle]:
    """The cable's stations with sheath marks: span lengths, slack and overrun between each."""
    path = _walk(spec.spans, spans) if spec.spans else [places[spec.stations[0]]]
    lengths = [spans[s].get("length_m") or _geodesic_m(spans[s]["geometry"]) for s in spec.spans]
    slack = dict(spec.slack)
    sign = -1.0 if spec.descending else 1.0
    mark = spec.first_mark
    stations: list[Bundle] = [{"at": spec.stations[0], "mark_m": mark}]
    here = 0
    for station in spec.stations[1:]:
        there = path.index(places[station], min(here + 1, len(path) - 1))
        run = sum(lengths[here:there]) + sum(slack.get(s, 0.0) for s in path[here + 1 : there])
        mark += sign * (math.ceil(run * _SHEATH_OVERRUN) + _SHEATH_TAILS_M)
        stations.append({"at": station, "mark_m": mark})
        here = there
    return stations


def _build_cables(spans: list[Bundle]) -> list[Bundle]:
    by_label = {span["label"]: span for span in spans}
    places = {c[0]: c[1] for c in _CLOSURES} | {p[0]: p[1] for p in _PANELS}
    cables: list[Bundle] = []
    for spec in _CABLES:
        cable: Bundle = {
            "label": spec.label,
            "fiber_type": spec.fiber_type,
            "construction": {
                "kind": spec.kind,
                "units": spec.units,
                "fibers_per_unit": spec.fibers_per_unit,
            },
            "spans": list(spec.spans),
            "stations": _stations(spec, by_label, places),
        }
        if spec.slack:
            cable["slack"] = [{"at": at, "length_m": length} for at, length in spec.slack]
        cables.append(cable)
    return cables


def _build_splices() -> list[Bundle]:
    slots_per_tray = {label: slots for label, _at, _trays, slots in _CLOSURES}
    filled: dict[str, int] = {}
    splices: list[Bundle] = []
    for closure, a_ends, b_ends, method in _splice_groups():
        for a, b in zip(a_ends, b_ends, strict=True):
            n = filled.get(closure, 0)
            filled[closure] = n + 1
            tray, slot = divmod(n, slots_per_tray[closure])
            splice: Bundle = {"closure": closure, "a": a, "b": b, "tray": tray + 1,
                              "slot": slot + 1, "method": method}  # fmt: skip
            if n % 3 != 2:
                losses = _MEASURED_LOSS[method]
                splice["loss_db"] = losses[n % len(losses)]
            splices.append(splice)
    return splices


def _build_terminations() -> list[Bundle]:
    terminations: list[Bundle] = []
    for cable, first, panel, first_port, count, method in _TERMINATIONS:
        for i in range(count):
            row: Bundle = {"fiber": f"{cable}:{first + i}", "port": f"{panel}:{first_port + i}"}
            if method is not None:
                row["method"] = method
            terminations.append(row)
    return terminations


def build_demo_bundle() -> Bundle:
    """The whole Quillmere demo network as a plantdb bundle dict (the same on every call)."""
    spans = _build_spans()
    return {
        "format": "plantdb-bundle",
        "version": 1,
        "fiber_types": copy.deepcopy(_FIBER_TYPES),  # a fresh copy for each caller
        "structures": [
            {"label": label, "kind": kind, "lon": lon, "lat": lat}
            for label, kind, x, y in _STRUCTURES
            for lon, lat in [_lonlat(x, y)]
        ],
        "spans": spans,
        "routes": [{"label": lb, "name": nm, "spans": list(sp)} for lb, nm, sp in _ROUTES],
        "closures": [
            {"label": label, "at": at, "trays": trays, "slots_per_tray": slots}
            for label, at, trays, slots in _CLOSURES
        ],
        "panels": [
            {"label": label, "at": at, "ports": ports, "connector": conn, "polish": polish}
            for label, at, ports, conn, polish in _PANELS
        ],
        "equipment": copy.deepcopy(_EQUIPMENT),
        "splitters": copy.deepcopy(_SPLITTERS),
        "cables": _build_cables(spans),
        "splices": _build_splices(),
        "cuts": [{"closure": closure, "fiber": fiber} for closure, fiber in _CUTS],
        "terminations": _build_terminations(),
        "jumpers": [{"a": a, "b": b, "length_m": length} for a, b, length in _JUMPERS],
        "circuits": [
            {"label": label, "kind": kind, "status": status, "a": a, "z": z, "customer": customer}
            for label, kind, status, a, z, customer in _CIRCUITS
        ],
    }


def main() -> None:
    """Print the demo bundle as JSON on standard output."""
    print(json.dumps(build_demo_bundle(), indent=1))


if __name__ == "__main__":
    main()
