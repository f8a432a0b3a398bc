"""Every default optical value plantdb uses, each with its published source beside it.

Each value is a :class:`Sourced`: the number, the source in words, and a grade saying how far
to trust it:

- ``seen``: read in a public standard summary or datasheet;
- ``memory``: recalled, not re-read; treat as a planning value;
- ``trade``: common practice with no single source;
- ``physics`` / ``arithmetic``: derived from a law or from other entries here.

Two bases for losses: ``max`` is the standards maximum, used as the acceptance limit of an
insertion-loss test; ``typical`` is a planning estimate of what a test should measure. The
user may override any value; this module only holds the defaults and the arithmetic of
light guidance and OTDR distances. Mappings here are read-only by contract (typed Mapping).
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping
from dataclasses import dataclass

GRADES = frozenset({"seen", "memory", "trade", "physics", "arithmetic"})
BASES = ("max", "typical")
SPEED_OF_LIGHT_M_PER_S = 299_792_458.0  # exact, by the SI definition of the metre

TIA = "ANSI/TIA-568.3-D"
G652D = "ITU-T G.652.D"


class CatalogueLookupError(ValueError, KeyError):
    """An unknown catalogue name: a ValueError that ``except KeyError`` also catches."""

    def __str__(self) -> str:
        # KeyError would print the message quoted like a dict key; keep it plain.
        return str(self.args[0]) if self.args else ""


@dataclass(frozen=True)
class Sourced:
    """A number with its published source and a grade of trust (see the module docstring)."""

    value: float
    source: str
    grade: str

    def __post_init__(self) -> None:
        if self.grade not in GRADES:
            raise ValueError(f"grade {self.grade!r} of {self.source!r} is not one of {GRADES}")
        if not self.source.strip():
            raise ValueError(f"value {self.value} has no source")


def _check_basis(basis: str) -> None:
    if basis not in BASES:
        raise CatalogueLookupError(f"loss basis {basis!r} is not one of {BASES}")


# --- Wavelengths -------------------------------------------------------------------------

DEFAULT_WAVELENGTHS: Mapping[str, tuple[int, ...]] = {
    "single-mode": (1310, 1550),
    "multimode": (850, 1300),
}
SUPPORTED_WAVELENGTHS: Mapping[str, tuple[int, ...]] = {
    "single-mode": (1310, 1383, 1490, 1550, 1625),
    "multimode": (850, 1300),
}


# --- Fiber classes -----------------------------------------------------------------------


@dataclass(frozen=True, eq=False)  # compared by identity: one instance per class
class FiberClass:
    """A fiber standard class: mode, attenuation per basis and wavelength, index data."""

    standard: str
    mode: str
    attenuation_db_per_km: Mapping[str, Mapping[int, Sourced]]
    group_index: Mapping[int, Sourced]
    core_index: Sourced
    cladding_index: Sourced
    index_wavelength_nm: int  # the wavelength core_index and cladding_index are given at
    core_diameter_um: Sourced
    cladding_diameter_um: Sourced
    note: str = ""

    @property
    def wavelengths(self) -> tuple[int, ...]:
        """Wavelengths (nm) this class has values for."""
        return SUPPORTED_WAVELENGTHS[self.mode]


def _silica_index(wavelength_nm: int) -> float:
    # Fused silica, Malitson's three-term Sellmeier equation (coefficients recalled).
    lam2 = (wavelength_nm / 1000.0) ** 2
    terms = ((0.6961663, 0.0684043), (0.4079426, 0.1162414), (0.8974794, 9.896161))
    return math.sqrt(1.0 + sum(b * lam2 / (lam2 - c * c) for b, c in terms))


def _interpolated_group_index(
    known: Mapping[int, Sourced], wavelength_nm: int, source: str
) -> Sourced:
    # Straight line through the two seen datasheet points. The true curve bends upward
    # (dispersion grows with wavelength); the error is under 1e-4, about 0.1 m per km.
    (w1, g1), (w2, g2) = sorted((w, s.value) for w, s in known.items())
    value = g1 + (g2 - g1) * (wavelength_nm - w1) / (w2 - w1)
    how = "interpolated" if w1 <= wavelength_nm <= w2 else "extrapolated"
    return Sourced(round(value, 5), f"{how} linearly from {source} at {w1}/{w2} nm", "arithmetic")


def _single_mode_attenuation() -> dict[str, Mapping[int, Sourced]]:
    tia_osp = f"{TIA} outside-plant cabled single-mode maximum"
    itu = (
        f"{G652D} cabled maximum across 1310-1625 nm (0.40 dB/km at 1383 after hydrogen "
        f"ageing); {TIA} gives no figure at this wavelength"
    )
    recalled = "planning value recalled from cabled fiber datasheets"
    maximum = {
        1310: Sourced(0.5, tia_osp, "seen"),
        1383: Sourced(0.40, itu, "seen"),
        1490: Sourced(0.40, itu, "seen"),
        1550: Sourced(0.5, tia_osp, "seen"),
        1625: Sourced(0.40, itu, "seen"),
    }
    typical = {
        1310: Sourced(0.35, "single-mode planning value at 1310 nm", "trade"),
        1383: Sourced(0.35, f"low-water-peak fiber {recalled}, as at 1310 nm", "memory"),
        # Rayleigh scattering (wavelength^-4) takes 0.22 at 1550 nm to about 0.26 at 1490.
        1490: Sourced(0.25, recalled, "memory"),
        1550: Sourced(0.22, "single-mode planning value at 1550 nm", "trade"),
        # Infrared absorption and bending raise loss past 1550 nm.
        1625: Sourced(0.25, recalled, "memory"),
    }
    return {"max": maximum, "typical": typical}


def _single_mode(standard: str, note: str) -> FiberClass:
    datasheet = "standard single-mode fiber datasheet effective group index"
    seen = {1310: Sourced(1.4677, datasheet, "seen"), 1550: Sourced(1.4682, datasheet, "seen")}
    group = {
        w: seen.get(w) or _interpolated_group_index(seen, w, datasheet)
        for w in SUPPORTED_WAVELENGTHS["single-mode"]
    }
    cladding = _silica_index(1310)
    delta = 0.0036  # typical matched-cladding single-mode core/cladding difference (recalled)
    return FiberClass(
        standard=standard,
        mode="single-mode",
        attenuation_db_per_km=_single_mode_attenuation(),
        group_index=group,
        core_index=Sourced(
            round(cladding / (1 - delta), 4),
            "germania-doped core about 0.36 % above the cladding (typical design, recalled)",
            "memory",
        ),
        cladding_index=Sourced(
            round(cladding, 4),
            "pure silica at 1310 nm, Malitson Sellmeier equation (coefficients recalled)",
            "memory",
        ),
        index_wavelength_nm=1310,
        core_diameter_um=Sourced(8.2, "typical single-mode core diameter (recalled)", "memory"),
        cladding_diameter_um=Sourced(125.0, "ITU-T G.652 nominal cladding diameter", "memory"),
        note=note,
    )


def _multimode(standard: str, note: str) -> FiberClass:
    tia = f"{TIA} multimode cabled maximum (recalled)"
    revision_d = "the D revision may lower 850 nm to 3.0 dB/km (unverified)"
    datasheets = "cabled 50/125 planning value recalled from datasheets"
    cladding = _silica_index(850)
    aperture = 0.200  # IEC 60793-2-10 type A1a nominal numerical aperture (recalled)
    return FiberClass(
        standard=standard,
        mode="multimode",
        attenuation_db_per_km={
            "max": {
                850: Sourced(3.5, f"{tia}; {revision_d}", "memory"),
                1300: Sourced(1.5, tia, "memory"),
            },
            "typical": {
                850: Sourced(3.0, datasheets, "memory"),
                1300: Sourced(1.0, datasheets, "memory"),
            },
        },
        group_index={
            850: Sourced(1.481, "50/125 multimode group index at 850 nm", "seen"),
            1300: Sourced(1.476, "50/125 multimode group index at 1300 nm", "seen"),
        },
        core_index=Sourced(
            round(math.sqrt(cladding**2 + aperture**2), 4),
            "graded-index peak core index giving the nominal 0.200 numerical aperture of "
            "50/125 fiber (recalled) over a silica cladding",
            "memory",
        ),
        cladding_index=Sourced(
            round(cladding, 4),
            "pure silica at 850 nm, Malitson Sellmeier equation (coefficients recalled)",
            "memory",
        ),
        index_wavelength_nm=850,
        core_diameter_um=Sourced(50.0, "IEC 60793-2-10 type A1a nominal core (50/125)", "memory"),
        cladding_diameter_um=Sourced(125.0, "IEC 60793-2-10 nominal cladding (50/125)", "memory"),
        note=note,
    )


FIBER_CLASSES: Mapping[str, FiberClass] = {
    G652D: _single_mode(G652D, "low-water-peak standard single-mode fiber"),
    "ITU-T G.657.A1": _single_mode(
        "ITU-T G.657.A1", "bend-insensitive, G.652.D compliant; 10 mm minimum bend radius"
    ),
    "ITU-T G.657.A2": _single_mode(
        "ITU-T G.657.A2", "bend-insensitive, G.652.D compliant; 7.5 mm minimum bend radius"
    ),
    "OM3": _multimode("OM3", "850 nm laser-optimised 50/125 multimode"),
    "OM4": _multimode("OM4", "850 nm laser-optimised 50/125, higher bandwidth than OM3"),
    "OM5": _multimode("OM5", "wideband 50/125, also specified at 953 nm (not carried here)"),
}

# ANSI/TIA-568.3-D allows 1.0 dB/km for inside-plant single-mode cable (seen), given at
# 1310/1550 nm; attenuation(..., inside_plant=True) uses it. Multimode limits are the same
# inside and out.
INSIDE_PLANT_SINGLE_MODE_MAX: Mapping[int, Sourced] = {
    w: Sourced(1.0, f"{TIA} inside-plant cabled single-mode maximum", "seen") for w in (1310, 1550)
}


def _standard_key(name: str) -> str:
    return "".join(name.upper().split()).replace(".", "").removeprefix("ITU-T")


_CLASS_KEYS = {_standard_key(name): fiber for name, fiber in FIBER_CLASSES.items()}


def fiber_class(standard: str) -> FiberClass:
    """Look up a fiber class by standard name, any case, with or without "ITU-T "."""
    try:
        return _CLASS_KEYS[_standard_key(standard)]
    except KeyError:
        known = ", ".join(FIBER_CLASSES)
        raise CatalogueLookupError(
            f"fiber class {standard!r} is not in the catalogue (known: {known})"
        ) from None


def attenuation(
    fiber: FiberClass | str, wavelength_nm: int, basis: str = "max", inside_plant: bool = False
) -> Sourced:
    """Attenuation coefficient (dB/km); ``inside_plant`` selects the 1.0 dB/km single-mode max."""
    fiber = fiber if isinstance(fiber, FiberClass) else fiber_class(fiber)
    _check_basis(basis)
    values = fiber.attenuation_db_per_km[basis]
    if wavelength_nm not in values:
        raise CatalogueLookupError(
            f"{fiber.standard} has no value at {wavelength_nm} nm (has {tuple(values)})"
        )
    if inside_plant and basis == "max" and fiber.mode == "single-mode":
        if wavelength_nm in INSIDE_PLANT_SINGLE_MODE_MAX:
            return INSIDE_PLANT_SINGLE_MODE_MAX[wavelength_nm]
        return Sourced(
            1.0,
            f"{TIA} inside-plant 1.0 dB/km (given for 1310/1550 nm) carried to "
            f"{wavelength_nm} nm; no published inside-plant figure there",
            "trade",
        )
    return values[wavelength_nm]


# --- Splices and connectors -------------------------------------------------------------

SPLICE_METHODS = ("fusion", "mechanical", "mass_fusion")
SPLICE_MAX = Sourced(
    0.3, f"{TIA} splice maximum (recalled; also seen in a federal guide specification)", "memory"
)
SPLICE_TYPICAL: Mapping[str, Sourced] = {
    "fusion": Sourced(0.1, "fusion splice planning value", "trade"),
    "mechanical": Sourced(0.2, "mechanical splice planning value", "trade"),
    "mass_fusion": Sourced(0.15, "mass (ribbon) fusion splice, per fiber, planning value", "trade"),
}


def splice_loss(method: str, basis: str = "max") -> Sourced:
    """Loss of one splice made by ``method`` ("fusion", "mechanical", "mass_fusion")."""
    if method not in SPLICE_METHODS:
        raise CatalogueLookupError(f"splice method {method!r} is not one of {SPLICE_METHODS}")
    _check_basis(basis)
    return SPLICE_MAX if basis == "max" else SPLICE_TYPICAL[method]


CONNECTOR_PAIR_MAX = Sourced(0.75, f"{TIA} mated connector pair maximum", "seen")
CONNECTOR_PAIR_TYPICAL = Sourced(
    0.3, "factory-polished mated pair planning value; field-fitted pairs run higher", "trade"
)
REFERENCE_CONNECTOR_PAIR: Mapping[str, Sourced] = {
    "single-mode": Sourced(0.20, f"{TIA} reference-grade mated pair, single-mode", "seen"),
    "multimode": Sourced(0.10, f"{TIA} reference-grade mated pair, multimode", "seen"),
}


def connector_pair_loss(basis: str = "max") -> Sourced:
    """Loss of one mated connector pair; see REFERENCE_CONNECTOR_PAIR for test cords."""
    _check_basis(basis)
    return CONNECTOR_PAIR_MAX if basis == "max" else CONNECTOR_PAIR_TYPICAL


# --- Splitters ---------------------------------------------------------------------------

SPLITTER_RATIOS = tuple(f"{inputs}x{n}" for inputs in (1, 2) for n in (2, 4, 8, 16, 32, 64))
_VENDOR_NOTE = "vendor application note, planar splitter typical insertion loss"
# Typical range per 1xN from the vendor application note (seen). Typical = mid-range; the
# maximum is the top of the range (no standard maximum is quoted there). Both exceed
# the ideal 10*log10(N), as a real splitter adds excess loss to the power split.
_SPLIT_RANGES = {2: (3.3, 3.8), 4: (6.5, 7.2), 8: (10.2, 10.8), 16: (13.5, 14.5),
                 32: (16.5, 17.5), 64: (19.5, 21.0)}  # fmt: skip
# A 2xN planar splitter costs about 0.3-0.5 dB more than the 1xN of the same N (recalled from
# datasheets); the upper figure keeps the estimate on the safe side.
_TWO_INPUT_EXCESS_DB = 0.5


def ideal_split_loss(n: int) -> float:
    """Loss of a lossless 1xN power split: 10*log10(N) dB."""
    if n < 1:
        raise ValueError(f"split count must be 1 or more, got {n}")
    return 10.0 * math.log10(n)


def _one_input_loss(n: int, basis: str) -> Sourced:
    low, high = _SPLIT_RANGES[n]
    if basis == "max":
        return Sourced(high, f"top of the {_VENDOR_NOTE} range {low}-{high} dB, 1x{n}", "seen")
    middle = round((low + high) / 2, 2)
    return Sourced(middle, f"middle of the {_VENDOR_NOTE} range {low}-{high} dB, 1x{n}", "seen")


def splitter_loss(ratio: str, basis: str = "max") -> Sourced:
    """Insertion loss of one path through a "1xN" or "2xN" splitter (N = 2 ... 64)."""
    _check_basis(basis)
    key = "".join(ratio.lower().split()).replace("×", "x")
    if key not in SPLITTER_RATIOS:
        known = ", ".join(SPLITTER_RATIOS)
        raise CatalogueLookupError(f"splitter ratio {ratio!r} is not in the catalogue ({known})")
    inputs, n = (int(part) for part in key.split("x"))
    one = _one_input_loss(n, basis)
    if inputs == 1:
        return one
    return Sourced(
        round(one.value + _TWO_INPUT_EXCESS_DB, 2),
        f"1x{n} value ({one.value} dB) plus {_TWO_INPUT_EXCESS_DB} dB for the second input "
        "(2xN excess of 0.3-0.5 dB recalled from planar splitter datasheets)",
        "memory",
    )


# --- Light guidance ----------------------------------------------------------------------

MEDIUM_INDEX: Mapping[str, Sourced] = {
    # Air is 1.0003 at sea level; 1.000 moves a critical angle by about 0.02 degrees.
    "air": Sourced(1.0, "air taken as 1.000", "physics"),
    "water": Sourced(1.333, "water near 20 °C, visible light (recalled)", "memory"),
    "propylene glycol": Sourced(1.432, "propylene glycol refractive index", "trade"),
}


def _check_guiding(n1: float, n2: float) -> None:
    if not (n1 > 0 and n2 > 0):
        raise ValueError(f"refractive indices must be positive: n1={n1}, n2={n2}")
    if n2 >= n1:
        raise ValueError(f"no guidance: cladding index n2={n2} must be below core index n1={n1}")


def numerical_aperture(n1: float, n2: float) -> float:
    """NA = sqrt(n1^2 - n2^2) for core index n1 and cladding index n2."""
    _check_guiding(n1, n2)
    return math.sqrt(n1 * n1 - n2 * n2)


def acceptance_half_angle_deg(n1: float, n2: float, n0: float = 1.0) -> float:
    """Half-angle of the acceptance cone in a medium of index n0: asin(NA / n0), degrees."""
    aperture = numerical_aperture(n1, n2)
    if n0 <= 0:
        raise ValueError(f"outside medium index must be positive, got n0={n0}")
    # NA >= n0 means rays from every direction of the outside medium are guided.
    return 90.0 if aperture >= n0 else math.degrees(math.asin(aperture / n0))


def critical_angle_deg(n1: float, n2: float) -> float:
    """Angle of total internal reflection, from the normal: asin(n2 / n1), degrees."""
    _check_guiding(n1, n2)
    return math.degrees(math.asin(n2 / n1))


def relative_index_difference(n1: float, n2: float) -> float:
    """Delta = (n1 - n2) / n1."""
    _check_guiding(n1, n2)
    return (n1 - n2) / n1


# --- OTDR --------------------------------------------------------------------------------


def otdr_distance_m(round_trip_s: float, group_index: float) -> float:
    """One-way distance (m) of an OTDR event: c * t / (2 * n_group)."""
    if round_trip_s < 0:
        raise ValueError(f"round-trip time must not be negative, got {round_trip_s} s")
    if group_index < 1:
        raise ValueError(f"group index must be 1 or more, got {group_index}")
    return SPEED_OF_LIGHT_M_PER_S * round_trip_s / (2.0 * group_index)


def rescale_otdr_distance(reported_m: float, n_otdr: float, n_fiber: float) -> float:
    """Distance along a fiber of index n_fiber that an OTDR set to n_otdr reported."""
    if n_otdr < 1 or n_fiber < 1:
        raise ValueError(f"group indices must be 1 or more: n_otdr={n_otdr}, n_fiber={n_fiber}")
    return reported_m * n_otdr / n_fiber


# --- System budgets and long routes ------------------------------------------------------


@dataclass(frozen=True)
class SystemBudget:
    """Optical budget of a common system: the loss range it works over, and its reach."""

    name: str
    max_loss_db: Sourced
    min_loss_db: Sourced | None = None
    reach_km: Sourced | None = None


def _pon(name: str, standard: str, low: float, high: float) -> SystemBudget:
    return SystemBudget(
        name,
        max_loss_db=Sourced(high, f"{standard} {name} maximum optical path loss", "seen"),
        min_loss_db=Sourced(low, f"{standard} {name} minimum optical path loss", "memory"),
    )


def _ethernet(name: str, loss: float, km: float, grade: str, source: str) -> SystemBudget:
    return SystemBudget(
        name,
        max_loss_db=Sourced(loss, f"IEEE 802.3 {name} channel insertion loss, {source}", grade),
        reach_km=Sourced(km, f"IEEE 802.3 {name} reach, {source}", grade),
    )


SYSTEM_BUDGETS: Mapping[str, SystemBudget] = {
    b.name: b
    for b in (
        _pon("GPON class B+", "ITU-T G.984.2", 13, 28),
        _pon("GPON class C+", "ITU-T G.984.2", 17, 32),
        _pon("XGS-PON N1", "ITU-T G.9807.1", 14, 29),
        _pon("XGS-PON N2", "ITU-T G.9807.1", 16, 31),
        _pon("XGS-PON E1", "ITU-T G.9807.1", 18, 33),
        _ethernet("10GBASE-LR", 6.2, 10, "memory", "recalled"),
        _ethernet("10GBASE-ER", 11.0, 40, "seen", "Table 52-24 as quoted"),
        _ethernet("40GBASE-LR4", 6.7, 10, "seen", "as quoted"),
        _ethernet("100GBASE-FR1", 4.0, 2, "seen", "as quoted"),
        _ethernet("10GBASE-SR on OM3", 2.6, 0.3, "seen", "secondary summary"),
        _ethernet("10GBASE-SR on OM4", 2.9, 0.4, "seen", "secondary summary"),
    )
}

# Span lengths (km) used to flag unusually long runs between active sites.
LONG_ROUTE: Mapping[str, Sourced] = {
    "early_undersea_regenerator_spacing_km": Sourced(
        50, "early 1.3 um undersea systems regenerated about every 50 km", "trade"
    ),
    "amplified_span_typical_low_km": Sourced(60, "optically amplified spans, typical", "seen"),
    "amplified_span_typical_high_km": Sourced(80, "optically amplified spans, typical", "seen"),
    "amplified_span_longest_km": Sourced(100, "optically amplified spans run 40-100 km", "seen"),
}


def all_entries() -> Iterator[tuple[str, Sourced]]:
    """Every Sourced value in the catalogue, with a dotted name saying where it lives."""
    for name, fiber in FIBER_CLASSES.items():
        for basis, values in fiber.attenuation_db_per_km.items():
            for wl, value in values.items():
                yield f"{name}.attenuation.{basis}.{wl}", value
        for wl, value in fiber.group_index.items():
            yield f"{name}.group_index.{wl}", value
        for part in ("core_index", "cladding_index", "core_diameter_um", "cladding_diameter_um"):
            yield f"{name}.{part}", getattr(fiber, part)
    for wl, value in INSIDE_PLANT_SINGLE_MODE_MAX.items():
        yield f"inside_plant_single_mode_max.{wl}", value
    yield "splice.max", SPLICE_MAX
    for method, value in SPLICE_TYPICAL.items():
        yield f"splice.typical.{method}", value
    yield "connector_pair.max", CONNECTOR_PAIR_MAX
    yield "connector_pair.typical", CONNECTOR_PAIR_TYPICAL
    for mode, value in REFERENCE_CONNECTOR_PAIR.items():
        yield f"connector_pair.reference.{mode}", value
    for ratio in SPLITTER_RATIOS:
        for basis in BASES:
            yield f"splitter.{ratio}.{basis}", splitter_loss(ratio, basis)
    for medium, value in MEDIUM_INDEX.items():
        yield f"medium_index.{medium}", value
    for name, budget in SYSTEM_BUDGETS.items():
        for part in ("max_loss_db", "min_loss_db", "reach_km"):
            if (entry := getattr(budget, part)) is not None:
                yield f"{name}.{part}", entry
    for name, value in LONG_ROUTE.items():
        yield f"long_route.{name}", value
