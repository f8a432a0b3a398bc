"""The ANSI/TIA-598 fiber colour code: positions, stripe marks, names and parsing.

Units (buffer tubes, ribbons) and the fibers within a unit are both identified by the same
twelve-colour sequence: blue, orange, green, brown, slate, white, red, black, yellow, violet,
rose, aqua. Positions past 12 repeat the sequence with stripe (or dash) marks: 13-24 carry one
black stripe, except the black position (20), which takes a yellow stripe so the mark shows;
every further twelve adds one more stripe (25-36 two, 37-48 three, ...).

Compact form ("abbrev") used on splice sheets and screens:

- an unmarked position is its two-letter code: ``BL`` (1), ``AQ`` (12);
- a striped position is ``BASE+STRIPE``, with the stripe count before the stripe code when it
  is more than one: ``BL+BK`` (13, blue with black stripe), ``BK+YL`` (20), ``OR+2BK`` (26,
  orange with 2 black stripes), ``BK+3YL`` (44).

The compact form never contains "/" (which separates unit from fiber, "BR/BL") nor "-" (left
free for ranges such as "BL/BL-BL/AQ"). :func:`parse_colour` reads it back, along with the
spoken names ("blue with black stripe", "orange with 2 black stripes"), in any letter case.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass

__all__ = [
    "TIA_598",
    "Colour",
    "Marking",
    "marking",
    "parse_colour",
    "parse_colour_pair",
    "strand_abbrev",
    "strand_colours",
    "strand_number",
    "unit_and_position",
]


@dataclass(frozen=True)
class Colour:
    """One colour of the sequence, with a display swatch and an outline for the swatch."""

    name: str
    abbrev: str
    hex: str
    # Light swatches (white, yellow, rose, aqua) vanish on a white page without an outline,
    # so every colour carries a darker border to draw around its swatch.
    border: str


# ANSI/TIA-598 order (positions 1-12). The hex values are display choices of this project,
# picked to be told apart on screen and in print; the standard names colours, not hex codes.
TIA_598: tuple[Colour, ...] = (
    Colour("blue", "BL", "#1f5fbf", "#123a75"),
    Colour("orange", "OR", "#f28c1b", "#a35a0a"),
    Colour("green", "GR", "#2e8b3d", "#1b5424"),
    Colour("brown", "BR", "#7b4a26", "#4a2c16"),
    Colour("slate", "SL", "#708090", "#434d57"),
    Colour("white", "WH", "#f7f7f2", "#8a8a8a"),
    Colour("red", "RD", "#d62d2d", "#8a1a1a"),
    Colour("black", "BK", "#1c1c1c", "#000000"),
    Colour("yellow", "YL", "#f5d90a", "#9c8a00"),
    Colour("violet", "VI", "#7d3cb5", "#4b2370"),
    Colour("rose", "RS", "#f4a3b8", "#b0566d"),
    Colour("aqua", "AQ", "#2ec4c9", "#17787b"),
)

_BLACK = TIA_598[7]
_YELLOW = TIA_598[8]
_BY_ABBREV = {c.abbrev.lower(): c for c in TIA_598}
# Field words clerks write for the same colours; the standard's names stay the display names.
_BY_NAME = {c.name: c for c in TIA_598} | {
    "grey": TIA_598[4],
    "gray": TIA_598[4],
    "pink": TIA_598[10],
    "purple": TIA_598[9],
}


@dataclass(frozen=True)
class Marking:
    """A base colour with zero or more stripes of one stripe colour."""

    base: Colour
    stripes: int = 0
    stripe: Colour | None = None

    def __post_init__(self) -> None:
        if self.stripes < 0:
            raise ValueError(f"stripe count must be 0 or more, got {self.stripes}")
        if (self.stripes == 0) != (self.stripe is None):
            raise ValueError(
                f"{self.base.name}: a stripe colour goes with a stripe count above 0 "
                f"(got {self.stripes} stripes, stripe colour {self.stripe})"
            )

    @property
    def position(self) -> int:
        """Position in the sequence (1-based) that this marking identifies."""
        return self.stripes * 12 + TIA_598.index(self.base) + 1

    @property
    def name(self) -> str:
        """Spoken name: "blue", "blue with black stripe", "orange with 2 black stripes"."""
        if self.stripe is None:
            return self.base.name
        if self.stripes == 1:
            return f"{self.base.name} with {self.stripe.name} stripe"
        return f"{self.base.name} with {self.stripes} {self.stripe.name} stripes"

    @property
    def abbrev(self) -> str:
        """Compact form: "BL", "BL+BK", "BK+YL", "OR+2BK" (see the module docstring)."""
        if self.stripe is None:
            return self.base.abbrev
        count = "" if self.stripes == 1 else str(self.stripes)
        return f"{self.base.abbrev}+{count}{self.stripe.abbrev}"

    @property
    def hex(self) -> str:
        """Swatch colour of the base."""
        return self.base.hex

    @property
    def stripe_hex(self) -> str | None:
        """Swatch colour of the stripes, or None when unmarked."""
        return None if self.stripe is None else self.stripe.hex


def _stripe_colour(base: Colour) -> Colour:
    # A black stripe would not show on a black fiber, so TIA-598 marks black with yellow.
    return _YELLOW if base == _BLACK else _BLACK


@functools.lru_cache(maxsize=4096)
def marking(position: int) -> Marking:
    """The TIA-598 marking of a unit or fiber position (1-based)."""
    if isinstance(position, bool) or not isinstance(position, int) or position < 1:
        raise ValueError(f"colour position must be a whole number from 1, got {position!r}")
    stripes, index = divmod(position - 1, 12)
    base = TIA_598[index]
    if stripes == 0:
        return Marking(base)
    return Marking(base, stripes, _stripe_colour(base))


def _check_positive(value: int, what: str) -> None:
    if isinstance(value, bool) or not isinstance(value, int) or value < 1:
        raise ValueError(f"{what} must be a whole number from 1, got {value!r}")


def unit_and_position(strand: int, fibers_per_unit: int) -> tuple[int, int]:
    """Split a strand number into (unit, position in unit), both 1-based."""
    _check_positive(strand, "strand number")
    _check_positive(fibers_per_unit, "fibers per unit")
    unit, offset = divmod(strand - 1, fibers_per_unit)
    return unit + 1, offset + 1


def strand_number(unit: int, position: int, fibers_per_unit: int) -> int:
    """Strand number counted across units: (unit - 1) x fibers per unit + position."""
    _check_positive(unit, "unit number")
    _check_positive(position, "position in unit")
    _check_positive(fibers_per_unit, "fibers per unit")
    if position > fibers_per_unit:
        raise ValueError(
            f"position {position} is past the end of a unit of {fibers_per_unit} fibers"
        )
    return (unit - 1) * fibers_per_unit + position


def _strand_markings(
    strand: int, fibers_per_unit: int, has_units: bool
) -> tuple[Marking | None, Marking]:
    unit, position = unit_and_position(strand, fibers_per_unit)
    if has_units:
        return marking(unit), marking(position)
    # A central-core cable is one group of fibers: pass its fiber count as fibers_per_unit.
    if unit != 1:
        raise ValueError(
            f"strand {strand} is past the end of a cable without units "
            f"holding {fibers_per_unit} fibers"
        )
    return None, marking(position)


@functools.lru_cache(maxsize=65536)
def strand_colours(strand: int, fibers_per_unit: int, has_units: bool = True) -> str:
    """Colour names of a strand: "brown/blue" (unit/fiber), or "blue" in a cable without units."""
    unit, fiber = _strand_markings(strand, fibers_per_unit, has_units)
    return fiber.name if unit is None else f"{unit.name}/{fiber.name}"


def strand_abbrev(strand: int, fibers_per_unit: int, has_units: bool = True) -> str:
    """Splice-sheet notation of a strand: "BR/BL" (unit/fiber), or "BL" without units."""
    unit, fiber = _strand_markings(strand, fibers_per_unit, has_units)
    return fiber.abbrev if unit is None else f"{unit.abbrev}/{fiber.abbrev}"


_COMPACT = re.compile(r"([a-z]{2})(?:\+(\d*)([a-z]{2}))?")
_SPOKEN = re.compile(r"([a-z]+)(?: with (?:(\d+) )?([a-z]+) (?:stripes?|dash(?:es)?))?")


def _lookup(word: str, table: dict[str, Colour], text: str) -> Colour:
    try:
        return table[word]
    except KeyError:
        raise ValueError(f"{text.strip()!r} is not a TIA-598 colour ({word!r} unknown)") from None


def parse_colour(text: str) -> int:
    """Position (1-based) named by one colour: "OR", "orange", "BL+BK", "blue with black stripe"."""
    cleaned = " ".join(text.lower().split())
    compact = _COMPACT.fullmatch(cleaned.replace(" ", ""))
    spoken = _SPOKEN.fullmatch(cleaned)
    if compact:
        base_word, count, stripe_word = compact.groups()
        table = _BY_ABBREV
    elif spoken:
        base_word, count, stripe_word = spoken.groups()
        table = _BY_NAME
    else:
        raise ValueError(
            f"{text!r} is not a colour: expected e.g. 'BL', 'blue', 'BL+BK', "
            "'blue with black stripe' or 'OR+2BK'"
        )
    base = _lookup(base_word, table, text)
    if stripe_word is None:
        return TIA_598.index(base) + 1
    stripes = int(count) if count else 1
    if stripes < 1:
        raise ValueError(f"{text!r}: stripe count must be 1 or more")
    stripe = _lookup(stripe_word, table, text)
    if stripe != _stripe_colour(base):
        raise ValueError(
            f"{text!r}: TIA-598 marks {base.name} with {_stripe_colour(base).name} stripes, "
            f"not {stripe.name}"
        )
    return Marking(base, stripes, stripe).position


def parse_colour_pair(text: str, fibers_per_unit: int, units: int) -> int:
    """Strand number named by "unit/fiber" colours ("BL/OR" -> 2); a lone colour needs 1 unit."""
    _check_positive(fibers_per_unit, "fibers per unit")
    _check_positive(units, "unit count")
    parts = text.split("/")
    try:
        if len(parts) == 2:
            unit, position = parse_colour(parts[0]), parse_colour(parts[1])
        elif len(parts) == 1:
            unit, position = 1, parse_colour(parts[0])
        else:
            raise ValueError("expected 'unit/fiber' colours with one '/', e.g. 'BL/OR'")
    except ValueError as error:
        raise ValueError(f"{text!r}: {error}") from None
    if len(parts) == 1 and units != 1:
        raise ValueError(
            f"{text!r} names only a fiber colour; a cable with {units} units needs "
            "unit/fiber, e.g. 'BL/OR'"
        )
    if unit > units:
        raise ValueError(f"{text!r} names unit {unit}, but the cable has {units} units")
    if position > fibers_per_unit:
        raise ValueError(
            f"{text!r} names fiber {position}, but a unit holds {fibers_per_unit} fibers"
        )
    return strand_number(unit, position, fibers_per_unit)
