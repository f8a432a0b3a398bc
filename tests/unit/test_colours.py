"""The colour code against ANSI/TIA-598 (C/D) as published.

Sources named beside each check: the ANSI/TIA-598 sequence and abbreviations and its stripe
rule ("seen" in a public summary of the standard); strand numbering across units is arithmetic.
"""

from __future__ import annotations

import re

import pytest
from hypothesis import given
from hypothesis import strategies as st

from plantdb.colours import (
    TIA_598,
    Marking,
    marking,
    parse_colour,
    parse_colour_pair,
    strand_abbrev,
    strand_colours,
    strand_number,
    unit_and_position,
)

# ANSI/TIA-598, positions 1-12 (seen): name and abbreviation in order.
TIA_598_PUBLISHED = [
    ("blue", "BL"),
    ("orange", "OR"),
    ("green", "GR"),
    ("brown", "BR"),
    ("slate", "SL"),
    ("white", "WH"),
    ("red", "RD"),
    ("black", "BK"),
    ("yellow", "YL"),
    ("violet", "VI"),
    ("rose", "RS"),
    ("aqua", "AQ"),
]


def test_sequence_matches_tia_598() -> None:
    """ANSI/TIA-598 (seen): twelve colours, in order, with their abbreviations."""
    assert [(c.name, c.abbrev) for c in TIA_598] == TIA_598_PUBLISHED
    for position, (name, abbrev) in enumerate(TIA_598_PUBLISHED, start=1):
        assert marking(position).name == name
        assert marking(position).abbrev == abbrev
        assert marking(position).stripes == 0


def test_swatches_are_distinct_hex_colours_with_borders() -> None:
    """Display choice (this project): every swatch a distinct #rrggbb, outlined differently."""
    hexes = [c.hex for c in TIA_598]
    assert len(set(hexes)) == 12
    for colour in TIA_598:
        for value in (colour.hex, colour.border):
            assert len(value) == 7 and value.startswith("#")
            int(value[1:], 16)
        assert colour.border != colour.hex


@pytest.mark.parametrize(
    ("position", "name", "abbrev"),
    [
        # ANSI/TIA-598 (seen): 13-24 repeat the sequence with one black stripe ...
        (13, "blue with black stripe", "BL+BK"),
        (19, "red with black stripe", "RD+BK"),
        # ... except black (20), which takes a yellow stripe.
        (20, "black with yellow stripe", "BK+YL"),
        (24, "aqua with black stripe", "AQ+BK"),
        # ANSI/TIA-598 (seen): every further twelve adds one stripe.
        (25, "blue with 2 black stripes", "BL+2BK"),
        (26, "orange with 2 black stripes", "OR+2BK"),
        (32, "black with 2 yellow stripes", "BK+2YL"),
        (37, "blue with 3 black stripes", "BL+3BK"),
        (44, "black with 3 yellow stripes", "BK+3YL"),
        (48, "aqua with 3 black stripes", "AQ+3BK"),
    ],
)
def test_stripe_rule(position: int, name: str, abbrev: str) -> None:
    """ANSI/TIA-598 stripe (dash) marks past position 12 (seen)."""
    mark = marking(position)
    assert mark.name == name
    assert mark.abbrev == abbrev
    assert mark.stripes == (position - 1) // 12
    assert mark.hex == mark.base.hex
    assert mark.stripe_hex == (mark.stripe.hex if mark.stripe else None)
    assert mark.position == position


def test_unmarked_position_has_no_stripe_colour() -> None:
    """ANSI/TIA-598 (seen): positions 1-12 are plain colours."""
    assert marking(1).stripe is None
    assert marking(1).stripe_hex is None


@given(st.integers(min_value=1, max_value=2000))
def test_compact_form_is_unambiguous(position: int) -> None:
    """The compact form reads back to its position and never uses '/' or '-'."""
    mark = marking(position)
    assert "/" not in mark.abbrev and "-" not in mark.abbrev
    assert parse_colour(mark.abbrev) == position
    assert parse_colour(mark.name) == position
    assert parse_colour(mark.abbrev.lower()) == position
    assert parse_colour(mark.name.upper()) == position


def test_strand_37_is_tube_4_fiber_1_brown_blue() -> None:
    """ANSI/TIA-598 unit numbering (seen) with strand arithmetic: tube 4 fiber 1 of 12 = 37."""
    assert unit_and_position(37, 12) == (4, 1)
    assert strand_number(4, 1, 12) == 37
    assert strand_colours(37, 12) == "brown/blue"
    assert strand_abbrev(37, 12) == "BR/BL"


def test_central_core_cable_shows_fiber_colour_only() -> None:
    """A cable without units (central core, 6 fibers): fiber colours alone, ANSI/TIA-598."""
    assert strand_colours(1, 6, has_units=False) == "blue"
    assert strand_colours(6, 6, has_units=False) == "white"
    assert strand_abbrev(5, 6, has_units=False) == "SL"
    with pytest.raises(ValueError, match="strand 7"):
        strand_colours(7, 6, has_units=False)


def test_24_fiber_tubes_use_striped_fibers() -> None:
    """ANSI/TIA-598 (seen): the same stripe rule applies to fibers within a 24-fiber unit."""
    assert strand_abbrev(24 + 13, 24) == "OR/BL+BK"
    assert strand_colours(24 + 20, 24) == "orange/black with yellow stripe"
    assert strand_abbrev(13 * 24, 24) == "BL+BK/AQ+BK"


@pytest.mark.parametrize(("units", "fibers_per_unit"), [(24, 12), (18, 24)])
def test_every_strand_round_trips(units: int, fibers_per_unit: int) -> None:
    """288 = 24x12 and 432 = 18x24 cables: parse(format(n)) == n for every strand."""
    count = units * fibers_per_unit
    seen: set[str] = set()
    for strand in range(1, count + 1):
        abbrev = strand_abbrev(strand, fibers_per_unit)
        names = strand_colours(strand, fibers_per_unit)
        seen.add(abbrev)
        assert parse_colour_pair(abbrev, fibers_per_unit, units) == strand
        assert parse_colour_pair(names, fibers_per_unit, units) == strand
    assert len(seen) == count


@given(
    st.integers(min_value=1, max_value=48),
    st.integers(min_value=1, max_value=36),
    st.data(),
)
def test_unit_and_position_inverts_strand_number(
    units: int, fibers_per_unit: int, data: st.DataObject
) -> None:
    """Strand = (unit - 1) x fibers per unit + position, and back (arithmetic)."""
    strand = data.draw(st.integers(min_value=1, max_value=units * fibers_per_unit))
    unit, position = unit_and_position(strand, fibers_per_unit)
    assert 1 <= unit <= units and 1 <= position <= fibers_per_unit
    assert strand_number(unit, position, fibers_per_unit) == strand


@pytest.mark.parametrize(
    ("text", "strand"),
    [
        ("BL/OR", 2),
        ("bl/or", 2),
        ("  Bl / oR ", 2),
        ("blue/orange", 2),
        ("Blue / Orange", 2),
        ("BR/BL", 37),
        ("aqua/aqua", 144),
        ("slate/grey", 53),  # "grey" is the field word for slate
        ("BL+BK/BL", 145),
        ("blue with black stripe / blue", 145),
        ("BK+YL/AQ", 19 * 12 + 12),
        ("BL + BK/ OR", 146),
    ],
)
def test_parse_colour_pair(text: str, strand: int) -> None:
    """Splice-sheet "unit/fiber" notation in a 288-fiber (24 x 12) cable (arithmetic)."""
    assert parse_colour_pair(text, 12, 24) == strand


def test_single_colour_only_in_a_one_unit_cable() -> None:
    """A lone fiber colour names a strand only when the cable has one unit (central core)."""
    assert parse_colour_pair("OR", 6, 1) == 2
    assert parse_colour_pair("BL/OR", 6, 1) == 2
    with pytest.raises(ValueError, match="'OR' names only a fiber colour"):
        parse_colour_pair("OR", 12, 24)


@pytest.mark.parametrize(
    ("text", "units", "message"),
    [
        ("BL+BK/BL", 12, r"'BL\+BK/BL' names unit 13, but the cable has 12 units"),
        ("BL/BL+BK", 12, r"'BL/BL\+BK' names fiber 13, but a unit holds 12 fibers"),
        ("BL/XX", 12, r"'BL/XX': 'XX' is not a TIA-598 colour"),
        ("teal/blue", 12, r"'teal/blue': 'teal' is not a TIA-598 colour"),
        ("BL/OR/GR", 12, r"one '/'"),
        ("BL/", 12, r"'' is not a colour"),
        ("BK+BK/BL", 12, r"marks black with yellow stripes, not black"),
        ("BL+YL/BL", 12, r"marks blue with black stripes, not yellow"),
        ("BL+0BK/BL", 12, r"stripe count must be 1 or more"),
        ("blue-orange", 12, r"'blue-orange': 'blue-orange' is not a colour"),
    ],
)
def test_parse_colour_pair_errors(text: str, units: int, message: str) -> None:
    """Bad input gets an error naming the text and what is wrong."""
    with pytest.raises(ValueError, match=message):
        parse_colour_pair(text, 12, units)


@pytest.mark.parametrize("position", [0, -1, True, 1.5])
def test_marking_rejects_bad_positions(position: object) -> None:
    """Positions start at 1; the error names the position."""
    with pytest.raises(ValueError, match=re.escape(f"got {position!r}")):
        marking(position)  # type: ignore[arg-type]


def test_strand_arithmetic_errors() -> None:
    """Zero and out-of-unit positions are errors naming the value."""
    with pytest.raises(ValueError, match="strand number must be a whole number from 1, got 0"):
        unit_and_position(0, 12)
    with pytest.raises(ValueError, match="fibers per unit must be a whole number from 1"):
        unit_and_position(5, 0)
    with pytest.raises(ValueError, match="position 13 is past the end of a unit of 12"):
        strand_number(1, 13, 12)
    with pytest.raises(ValueError, match="unit number must be a whole number from 1, got 0"):
        strand_number(0, 1, 12)


def test_marking_rejects_inconsistent_stripes() -> None:
    """A stripe colour goes with a stripe count above zero, and the reverse."""
    with pytest.raises(ValueError, match="blue"):
        Marking(TIA_598[0], 1, None)
    with pytest.raises(ValueError, match="blue"):
        Marking(TIA_598[0], 0, TIA_598[7])
    with pytest.raises(ValueError, match="-1"):
        Marking(TIA_598[0], -1, TIA_598[7])
