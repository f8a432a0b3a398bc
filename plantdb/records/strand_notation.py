"""How clerks name strands and splitter legs on a sheet or a command line.

A strand cell names one strand or a run of them, in any letter case:

- a number, ``37``, or a range, ``13-24`` (strand numbers count from 1 across units);
- unit and fiber colours of the ANSI/TIA-598 sequence, ``BR/BL`` (tube 4, fiber 1 of a
  12-per-tube cable: strand 37), or a range of them, ``BL/BL-BL/AQ``;
- a whole unit, ``tube 2``, ``ribbon 3``, ``unit 4``, or by its colour, ``tube OR``.

A splitter's legs are ``in``, ``in2``, a number, or a range of numbers (``1-8``).
These functions are pure: they check the notation against the cable's construction and leave
the record (does the strand exist in this closure, is it free) to the splicing rules.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from plantdb.colours import parse_colour, parse_colour_pair

# The whole-unit words of the trade: a buffer tube, a ribbon, or any unit.
UNIT_WORDS = ("unit", "tube", "ribbon")
_UNIT = re.compile(r"^(unit|tube|ribbon)\s*(.+)$", re.IGNORECASE)
_NUMBER = re.compile(r"^\d+$")
_RANGE = re.compile(r"^(\d+)\s*-\s*(\d+)$")
# A strand count no cable reaches; a longer range is a typo, refused before it is expanded.
MAX_RUN = 10_000


@dataclass(frozen=True)
class Construction:
    """What a strand cell is read against: the cable's units and fibers per unit."""

    units: int
    fibers_per_unit: int
    has_units: bool = True

    @property
    def fiber_count(self) -> int:
        return self.units * self.fibers_per_unit


@dataclass(frozen=True)
class StrandRun:
    """The strands a cell names, in order, and whether it named a whole unit."""

    numbers: tuple[int, ...]
    whole_unit: bool = False


def _in_cable(first: int, last: int, cable: Construction) -> None:
    if first < 1 or last > cable.fiber_count:
        what = f"strand {first}" if first == last else f"strands {first}-{last}"
        raise ValueError(f"the cable has strands 1-{cable.fiber_count}, so no {what}")


def _span(first: int, last: int, cable: Construction) -> tuple[int, ...]:
    if last < first:
        raise ValueError(f"range {first}-{last} runs backwards; write {last}-{first}")
    if last - first >= MAX_RUN:
        raise ValueError(f"range {first}-{last} is longer than any cable")
    _in_cable(first, last, cable)
    return tuple(range(first, last + 1))


def _colour_strand(text: str, cable: Construction) -> int:
    units = cable.units if cable.has_units else 1
    per_unit = cable.fibers_per_unit if cable.has_units else cable.fiber_count
    return parse_colour_pair(text.strip(), per_unit, units)


def _whole_unit(word: str, which: str, cable: Construction) -> StrandRun:
    if not cable.has_units:
        raise ValueError(f"the cable has no {word}s (its fibers lie in one group)")
    which = which.strip()
    unit = int(which) if _NUMBER.match(which) else parse_colour(which)
    if not 1 <= unit <= cable.units:
        raise ValueError(f"the cable has {word}s 1-{cable.units}, no {word} {which}")
    first = (unit - 1) * cable.fibers_per_unit + 1
    return StrandRun(tuple(range(first, first + cable.fibers_per_unit)), whole_unit=True)


def strand_run(text: str, cable: Construction) -> StrandRun:
    """The strands a cell names ("37", "13-24", "BL/OR", "BL/BL-BL/AQ", "tube 2"); ValueError."""
    if text.isdecimal():  # the commonest cell by far, read first (what \d+ matches)
        number = int(text)
        _in_cable(number, number, cable)
        return StrandRun((number,))
    cell = " ".join(text.split())
    if not cell:
        raise ValueError("no strand given")
    if _NUMBER.match(cell):
        number = int(cell)
        _in_cable(number, number, cable)
        return StrandRun((number,))
    numeric = _RANGE.match(cell)
    if numeric:
        return StrandRun(_span(int(numeric.group(1)), int(numeric.group(2)), cable))
    unit = _UNIT.match(cell)
    if unit:
        return _whole_unit(unit.group(1).lower(), unit.group(2), cable)
    if "-" in cell:
        # TIA-598 compact colours never contain "-", so it can only separate a range.
        first, _, last = cell.partition("-")
        return StrandRun(_span(_colour_strand(first, cable), _colour_strand(last, cable), cable))
    return StrandRun((_colour_strand(cell, cable),))


def leg_names(text: str) -> tuple[str, ...]:
    """Splitter legs a cell names: "in", "in2", "3" or a range "1-8"; ValueError."""
    cell = "".join(text.split()).lower()
    if not cell:
        raise ValueError("no splitter leg given")
    numeric = _RANGE.match(cell)
    if numeric:
        first, last = int(numeric.group(1)), int(numeric.group(2))
        if last < first or last - first >= MAX_RUN:
            raise ValueError(f"leg range {cell} must count up, e.g. 1-8")
        return tuple(str(n) for n in range(first, last + 1))
    return (cell,)
