"""Addresses of the contract: `CABLE:STRAND[/A|/B]`, `PANEL:PORT`, `EQUIPMENT:PORT`, `SPLITTER:LEG`.

What the part after the colon means depends on what the label names, so an address is split
here and interpreted once the label's kind is known.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from plantdb.errors import PlantError

_STRAND = re.compile(r"^(\d+)(?:/([ABab]))?$")


@dataclass(frozen=True)
class Address:
    """A label and the text after its colon."""

    label: str
    point: str

    def __str__(self) -> str:
        return f"{self.label}:{self.point}"


def parse_address(text: object, what: str = "address") -> Address:
    """Split `LABEL:POINT`; a clear refusal when there is no colon or an empty part."""
    if not isinstance(text, str):
        raise PlantError(f"{what} must be text like LABEL:POINT, not {text!r}")
    label, colon, point = text.strip().partition(":")
    label, point = label.strip(), point.strip()
    if not colon or not label or not point:
        raise PlantError(f"{what} {text!r} is not of the form LABEL:POINT")
    return Address(label, point)


def parse_strand_point(address: Address) -> tuple[int, str | None]:
    """(strand number, side 'A'|'B'|None) from the point of a strand address."""
    match = _STRAND.match(address.point)
    if not match:
        raise PlantError(
            f"{address}: after the cable label give a strand number, optionally with /A or /B"
        )
    side = match.group(2).upper() if match.group(2) else None
    return int(match.group(1)), side


def strand_address(cable: str, strand: int, side: str | None = None) -> str:
    """`CABLE:STRAND` or `CABLE:STRAND/SIDE`."""
    return f"{cable}:{strand}/{side}" if side else f"{cable}:{strand}"
