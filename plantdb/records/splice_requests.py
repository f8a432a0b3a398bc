"""What is asked of the splicing rules, and what they answer.

A `SpliceRequest` splices one group of fiber ends to another of the same size: strands of a
cable (by the notation of `strand_notation`, with the piece's side at a mid-span access) or
legs of a splitter. A `SpliceReport` says what was added, what was already recorded, and every
warning and problem, each prefixed with where the request came from ("line 7: ...").
"""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from plantdb.addresses import parse_address
from plantdb.errors import PlantError
from plantdb.model import SpliceMethod

METHODS = tuple(m.value for m in SpliceMethod)
# A trailing /A or /B after a strand number or a numeric range is the contract's side suffix.
_SIDE_SUFFIX = re.compile(r"^(\d+(?:\s*-\s*\d+)?)\s*/\s*([ABab])$")

Progress = Callable[[int], None]


@dataclass(frozen=True)
class EndGroup:
    """One side of a splice request: a cable's strands (with the piece's side at a mid-span
    access) or a splitter's legs, in the notation of `strand_notation`."""

    label: str
    points: str
    side: str | None = None

    def __str__(self) -> str:
        side = f" side {self.side}" if self.side else ""
        return f"{self.label}:{self.points}{side}"


def end_group(text: str, side: str | None = None) -> EndGroup:
    """`LABEL:POINTS` (e.g. "C-A:13-24", "C-A:tube 2", "C-A:BL/OR", "F-1:5/A", "SPL-1:in")."""
    address = parse_address(text, "fiber end")
    points = address.point
    suffix = _SIDE_SUFFIX.match(points)
    if suffix:
        if side is not None and side.upper() != suffix.group(2).upper():
            raise PlantError(f"{text}: the address says side {suffix.group(2)}, not {side}")
        points, side = suffix.group(1), suffix.group(2)
    return EndGroup(address.label, points, side.upper() if side else None)


@dataclass(frozen=True)
class SpliceRequest:
    """Splice a group of ends to another of the same size, slots counting up from `slot`."""

    closure: str
    tray: int
    slot: int
    a: EndGroup
    b: EndGroup
    method: str | None = None
    loss_db: float | None = None
    spliced_on: dt.date | None = None
    spliced_by: str | None = None
    where: str = ""  # "line 7" on a sheet: the prefix of every message about this request
    # Set when the request's own cells had problems (an unknown method, a bad date...),
    # reported by whoever read them: check it against the record, but plan nothing for it.
    check_only: bool = False


@dataclass
class SpliceReport:
    """What a splicing call did (or, with problems or a dry run, would have done)."""

    added: int = 0
    already_recorded: int = 0
    removed: int = 0
    moved: int = 0
    cuts: int = 0
    splices: list[dict[str, Any]] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)

    def document(self) -> dict[str, Any]:
        """The report as a JSON document."""
        return {
            "added": self.added,
            "already_recorded": self.already_recorded,
            "removed": self.removed,
            "moved": self.moved,
            "cuts": self.cuts,
            "splices": self.splices,
            "warnings": self.warnings,
            "notes": self.notes,
            "problems": self.problems,
        }

    def refuse_if_problems(self, what: str) -> None:
        """Raise `SpliceRefused` listing every problem (and the warnings after them)."""
        if self.problems:
            raise SpliceRefused(what, self)


class SpliceRefused(PlantError):
    """A batch of splices refused as a whole: every problem found, nothing written."""

    def __init__(self, what: str, report: SpliceReport) -> None:
        count = len(report.problems)
        noun = "problem" if count == 1 else "problems"
        details = report.problems + [f"warning: {w}" for w in report.warnings]
        super().__init__(f"{what} refused, nothing was written: {count} {noun}", details)
        self.report = report


def at(where: str, message: str) -> str:
    """A message about a request, prefixed with where it came from ("line 7: ...")."""
    return f"{where}: {message}" if where else message
