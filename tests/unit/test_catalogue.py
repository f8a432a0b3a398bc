"""The catalogue and its arithmetic against published worked values.

Each check names its source: ANSI/TIA-568.3-D loss allowances, ITU-T G.652.D / G.657.A,
a vendor splitter application note, textbook light-guidance physics, the FOA OTDR formula,
and trade facts (common practice, no single source). "memory" marks recalled values.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from plantdb import catalogue
from plantdb.catalogue import (
    DEFAULT_WAVELENGTHS,
    FIBER_CLASSES,
    GRADES,
    MEDIUM_INDEX,
    SUPPORTED_WAVELENGTHS,
    SYSTEM_BUDGETS,
    CatalogueLookupError,
    Sourced,
    acceptance_half_angle_deg,
    attenuation,
    connector_pair_loss,
    critical_angle_deg,
    fiber_class,
    ideal_split_loss,
    numerical_aperture,
    otdr_distance_m,
    relative_index_difference,
    rescale_otdr_distance,
    splice_loss,
    splitter_loss,
)

SINGLE_MODE = ("ITU-T G.652.D", "ITU-T G.657.A1", "ITU-T G.657.A2")
MULTIMODE = ("OM3", "OM4", "OM5")


@pytest.mark.parametrize("wavelength", [1310, 1550])
def test_worked_link_budget_with_catalogue_maxima(wavelength: int) -> None:
    """ANSI/TIA-568.3-D worked check: 5.0 km outside plant, 4 splices, 2 pairs = 5.20 dB."""
    fiber = attenuation("ITU-T G.652.D", wavelength, "max").value * 5.0
    splices = 4 * splice_loss("fusion", "max").value
    pairs = 2 * connector_pair_loss("max").value
    assert fiber == pytest.approx(2.50)
    assert splices == pytest.approx(1.20)
    assert pairs == pytest.approx(1.50)
    assert fiber + splices + pairs == pytest.approx(5.20)


def test_allowances_against_tia_568_3_d() -> None:
    """ANSI/TIA-568.3-D: pair 0.75 dB (seen), splice 0.3 dB (memory), reference pairs (seen)."""
    assert connector_pair_loss("max").value == 0.75
    assert connector_pair_loss("max").grade == "seen"
    for method in catalogue.SPLICE_METHODS:
        assert splice_loss(method, "max").value == 0.3
        assert splice_loss(method, "typical").value < 0.3
        assert splice_loss(method, "typical").grade == "trade"
    assert catalogue.REFERENCE_CONNECTOR_PAIR["single-mode"].value == 0.20
    assert catalogue.REFERENCE_CONNECTOR_PAIR["multimode"].value == 0.10
    assert connector_pair_loss("typical").value < 0.75


@pytest.mark.parametrize("standard", SINGLE_MODE)
def test_single_mode_attenuation(standard: str) -> None:
    """ANSI/TIA-568.3-D OSP 0.5 dB/km (seen); ITU-T G.652.D 0.40 elsewhere (seen); typical
    0.35 at 1310 and 0.22 at 1550 (trade)."""
    fiber = fiber_class(standard)
    assert fiber.mode == "single-mode"
    assert attenuation(fiber, 1310, "max").value == 0.5
    assert attenuation(fiber, 1550, "max").value == 0.5
    for wavelength in (1383, 1490, 1625):
        assert attenuation(fiber, wavelength, "max").value == 0.40
        assert "G.652.D" in attenuation(fiber, wavelength, "max").source
    assert attenuation(fiber, 1310, "typical").value == 0.35
    assert attenuation(fiber, 1550, "typical").value == 0.22
    for wavelength in fiber.wavelengths:
        assert attenuation(fiber, wavelength, "typical").value < 0.40


def test_inside_plant_single_mode_limit() -> None:
    """ANSI/TIA-568.3-D inside plant single-mode 1.0 dB/km at 1310 and 1550 nm (seen)."""
    for wavelength in (1310, 1550):
        entry = attenuation("G.652.D", wavelength, "max", inside_plant=True)
        assert entry.value == 1.0
        assert entry.grade == "seen"
    assert attenuation("G.652.D", 1625, "max", inside_plant=True).grade == "trade"
    # Multimode limits are the same inside and out (ANSI/TIA-568.3-D, memory).
    assert attenuation("OM3", 850, "max", inside_plant=True).value == 3.5


@pytest.mark.parametrize("standard", MULTIMODE)
def test_multimode_attenuation_and_group_index(standard: str) -> None:
    """ANSI/TIA-568.3-D multimode 3.5 / 1.5 dB/km (memory); 50/125 group index (seen)."""
    fiber = fiber_class(standard)
    assert fiber.mode == "multimode"
    assert attenuation(fiber, 850, "max").value == 3.5
    assert attenuation(fiber, 850, "max").grade == "memory"
    assert "3.0" in attenuation(fiber, 850, "max").source  # the unverified D revision note
    assert attenuation(fiber, 1300, "max").value == 1.5
    assert fiber.group_index[850].value == 1.481
    assert fiber.group_index[1300].value == 1.476
    assert (fiber.core_diameter_um.value, fiber.cladding_diameter_um.value) == (50.0, 125.0)


def test_single_mode_group_index() -> None:
    """Single-mode fiber datasheet group index 1.4677 @1310, 1.4682 @1550 (seen); the rest
    lie between or just beyond them (arithmetic)."""
    group = fiber_class("G.657.A1").group_index
    assert group[1310].value == 1.4677 and group[1310].grade == "seen"
    assert group[1550].value == 1.4682 and group[1550].grade == "seen"
    assert 1.4677 < group[1383].value < group[1490].value < 1.4682 < group[1625].value < 1.469
    assert group[1625].grade == "arithmetic"


def test_wavelength_sets() -> None:
    """Test wavelengths: single-mode 1310/1550 (+1383, 1490, 1625), multimode 850/1300."""
    assert DEFAULT_WAVELENGTHS == {"single-mode": (1310, 1550), "multimode": (850, 1300)}
    assert SUPPORTED_WAVELENGTHS["single-mode"] == (1310, 1383, 1490, 1550, 1625)
    assert SUPPORTED_WAVELENGTHS["multimode"] == (850, 1300)
    for fiber in FIBER_CLASSES.values():
        for basis in catalogue.BASES:
            assert tuple(fiber.attenuation_db_per_km[basis]) == fiber.wavelengths
        assert tuple(fiber.group_index) == fiber.wavelengths


@pytest.mark.parametrize(
    ("text", "standard"),
    [
        ("ITU-T G.652.D", "ITU-T G.652.D"),
        ("g.652.d", "ITU-T G.652.D"),
        ("itu-t g.657.a2", "ITU-T G.657.A2"),
        (" G.657.A1 ", "ITU-T G.657.A1"),
        ("om4", "OM4"),
    ],
)
def test_fiber_class_lookup(text: str, standard: str) -> None:
    """Standard names are found in any case, with or without the "ITU-T " prefix."""
    assert fiber_class(text).standard == standard


def test_unknown_lookups_name_the_input() -> None:
    """Unknown names raise a ValueError (also a KeyError) naming what was asked for."""
    with pytest.raises(ValueError, match=r"'G\.654\.E'"):
        fiber_class("G.654.E")
    with pytest.raises(KeyError):
        fiber_class("OM6")
    with pytest.raises(ValueError, match="'1x128'"):
        splitter_loss("1x128", "max")
    with pytest.raises(ValueError, match="'3x8'"):
        splitter_loss("3x8", "typical")
    with pytest.raises(ValueError, match="'cold'"):
        splice_loss("cold", "max")
    with pytest.raises(ValueError, match="'worst'"):
        connector_pair_loss("worst")
    with pytest.raises(CatalogueLookupError, match="1625 nm"):
        attenuation("OM3", 1625, "max")
    assert str(CatalogueLookupError("plain message")) == "plain message"


# Vendor application note, planar splitter typical insertion loss ranges (seen).
VENDOR_RANGES = {
    2: (3.3, 3.8),
    4: (6.5, 7.2),
    8: (10.2, 10.8),
    16: (13.5, 14.5),
    32: (16.5, 17.5),
    64: (19.5, 21.0),
}
# Ideal split loss 10*log10(N) (physics), to two decimals.
IDEAL = {2: 3.01, 4: 6.02, 8: 9.03, 16: 12.04, 32: 15.05, 64: 18.06}


@pytest.mark.parametrize("n", sorted(IDEAL))
def test_split_loss_against_physics_and_vendor_note(n: int) -> None:
    """Ideal loss 10*log10(N) (physics); typical inside the vendor range, maximum at or above
    its top and above ideal (vendor application note, seen)."""
    assert ideal_split_loss(n) == pytest.approx(IDEAL[n], abs=0.005)
    low, high = VENDOR_RANGES[n]
    typical = splitter_loss(f"1x{n}", "typical").value
    maximum = splitter_loss(f"1x{n}", "max").value
    assert low <= typical <= high
    assert maximum >= high
    assert maximum > IDEAL[n]
    # 2xN: derived from 1xN plus a recalled excess; never cheaper than 1xN.
    two = splitter_loss(f"2x{n}", "max")
    assert two.value > maximum
    assert two.grade == "memory"
    assert splitter_loss(f"2 × {n}", "typical").value > typical


def test_ideal_split_loss_rejects_zero() -> None:
    """A split into no outputs is an error naming the count."""
    with pytest.raises(ValueError, match="got 0"):
        ideal_split_loss(0)


def test_light_guidance_textbook_example() -> None:
    """Textbook worked example (recomputed): n1 = 1.50, n2 = 1.47 gives critical angle
    78.52 deg, NA 0.2985, acceptance half-angle 17.37 deg."""
    assert critical_angle_deg(1.50, 1.47) == pytest.approx(78.52, abs=0.005)
    assert numerical_aperture(1.50, 1.47) == pytest.approx(0.2985, abs=0.00005)
    assert acceptance_half_angle_deg(1.50, 1.47) == pytest.approx(17.37, abs=0.005)
    assert relative_index_difference(1.50, 1.47) == pytest.approx(0.02)


def test_propylene_glycol_against_air() -> None:
    """Trade fact: propylene glycol (n = 1.432) against air, critical angle about 44.29 deg;
    the quoted 44.35 deg corresponds to n of about 1.4305."""
    glycol = MEDIUM_INDEX["propylene glycol"].value
    air = MEDIUM_INDEX["air"].value
    assert critical_angle_deg(glycol, air) == pytest.approx(44.29, abs=0.005)
    assert critical_angle_deg(1.4305, air) == pytest.approx(44.35, abs=0.005)


def test_one_percent_index_difference_guides_light() -> None:
    """Trade fact: a core/cladding difference of about 1 % is enough to guide light."""
    n2 = 1.4525  # silica near 850 nm
    n1 = n2 / (1 - 0.01)
    assert relative_index_difference(n1, n2) == pytest.approx(0.01)
    aperture = numerical_aperture(n1, n2)
    assert 0.19 < aperture < 0.22  # the same order as the 0.200 of 50/125 fiber (memory)
    assert 0 < acceptance_half_angle_deg(n1, n2) < 15


@pytest.mark.parametrize("standard", sorted(FIBER_CLASSES))
def test_catalogue_indices_guide_light(standard: str) -> None:
    """Every fiber class's core index exceeds its cladding index (physics: it must guide)."""
    fiber = FIBER_CLASSES[standard]
    assert numerical_aperture(fiber.core_index.value, fiber.cladding_index.value) > 0.1


def test_no_guidance_names_both_indices() -> None:
    """A cladding index at or above the core index cannot guide: the error names both."""
    for call in (numerical_aperture, critical_angle_deg, relative_index_difference):
        with pytest.raises(ValueError, match=r"n2=1\.47.*n1=1\.46"):
            call(1.46, 1.47)
    with pytest.raises(ValueError, match=r"n2=1\.5.*n1=1\.5"):
        acceptance_half_angle_deg(1.5, 1.5)


def test_acceptance_angle_saturates_when_na_exceeds_outer_index() -> None:
    """Physics: NA above the outside index means every incoming ray is guided (90 deg)."""
    assert acceptance_half_angle_deg(2.0, 1.0) == 90.0


def test_otdr_distance_worked_check() -> None:
    """FOA formula d = c t / (2 n): t = 10 us, n = 1.4677 gives 1021.30 m (arithmetic)."""
    assert otdr_distance_m(10e-6, 1.4677) == pytest.approx(1021.30, abs=0.005)
    assert otdr_distance_m(10e-6, fiber_class("G.652.D").group_index[1310].value) == (
        pytest.approx(1021.30, abs=0.005)
    )


@given(
    st.floats(min_value=0, max_value=1e-3),
    st.floats(min_value=1.40, max_value=1.50),
    st.floats(min_value=1.40, max_value=1.50),
)
def test_otdr_rescale_round_trips(t: float, n_otdr: float, n_fiber: float) -> None:
    """d_true = d_reported * n_otdr / n_fiber follows from d = c t / (2 n), and reverses."""
    reported = otdr_distance_m(t, n_otdr)
    true = rescale_otdr_distance(reported, n_otdr, n_fiber)
    assert true == pytest.approx(otdr_distance_m(t, n_fiber), rel=1e-12, abs=1e-9)
    assert rescale_otdr_distance(true, n_fiber, n_otdr) == pytest.approx(reported, abs=1e-9)


def test_otdr_errors() -> None:
    """Negative times and impossible indices are refused, naming the value."""
    with pytest.raises(ValueError, match="-1"):
        otdr_distance_m(-1.0, 1.4677)
    with pytest.raises(ValueError, match=r"got 0\.5"):
        otdr_distance_m(1e-6, 0.5)
    with pytest.raises(ValueError, match="n_fiber=0"):
        rescale_otdr_distance(100.0, 1.4677, 0)


@pytest.mark.parametrize(
    ("name", "low", "high"),
    [
        ("GPON class B+", 13, 28),  # ITU-T G.984.2 (max seen, min memory)
        ("GPON class C+", 17, 32),
        ("XGS-PON N1", 14, 29),  # ITU-T G.9807.1 (max seen, min memory)
        ("XGS-PON N2", 16, 31),
        ("XGS-PON E1", 18, 33),
    ],
)
def test_pon_budgets(name: str, low: float, high: float) -> None:
    """ITU-T G.984.2 / G.9807.1 optical path loss classes: maxima seen, minima memory."""
    budget = SYSTEM_BUDGETS[name]
    assert budget.max_loss_db.value == high and budget.max_loss_db.grade == "seen"
    assert budget.min_loss_db is not None
    assert budget.min_loss_db.value == low and budget.min_loss_db.grade == "memory"


def test_ethernet_budgets_and_long_routes() -> None:
    """IEEE 802.3: 10GBASE-ER 11 dB at 40 km (seen), 10GBASE-LR 6.2 dB at 10 km (memory);
    trade fact: early 1.3 um undersea systems regenerated about every 50 km."""
    er = SYSTEM_BUDGETS["10GBASE-ER"]
    assert (er.max_loss_db.value, er.max_loss_db.grade) == (11.0, "seen")
    assert er.reach_km is not None and er.reach_km.value == 40
    lr = SYSTEM_BUDGETS["10GBASE-LR"]
    assert (lr.max_loss_db.value, lr.max_loss_db.grade) == (6.2, "memory")
    assert lr.reach_km is not None and lr.reach_km.value == 10
    spacing = catalogue.LONG_ROUTE["early_undersea_regenerator_spacing_km"]
    assert (spacing.value, spacing.grade) == (50, "trade")


def test_every_entry_has_a_source_and_grade() -> None:
    """Every catalogue value carries a published source in words and an allowed grade."""
    entries = dict(catalogue.all_entries())
    assert len(entries) > 100
    for where, entry in entries.items():
        assert isinstance(entry, Sourced), where
        assert entry.source.strip(), where
        assert entry.grade in GRADES, where
        assert math.isfinite(entry.value) and entry.value > 0, where


def test_sourced_refuses_unknown_grade_or_empty_source() -> None:
    """A value without a source or with an unknown grade cannot enter the catalogue."""
    with pytest.raises(ValueError, match="'guess'"):
        Sourced(1.0, "somewhere", "guess")
    with pytest.raises(ValueError, match="no source"):
        Sourced(1.0, "  ", "seen")
