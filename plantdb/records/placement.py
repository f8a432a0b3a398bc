"""A cable's placement: its spans joined end to end, and its stations in order along them.

These are rules no constraint can hold, so the service that writes a cable checks them.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Sequence
from dataclasses import dataclass

from plantdb.errors import PlantError


@dataclass(frozen=True)
class SpanEnds:
    """What placement needs of a span: its label and its drawn from/to structures."""

    label: str
    from_id: int
    to_id: int


@dataclass(frozen=True)
class Path:
    """The structures a cable visits (one more than its spans) and how it runs each span."""

    nodes: list[int]
    reversed: list[bool]


def chain_spans(spans: Sequence[SpanEnds], start: int, name_of: Callable[[int], str]) -> Path:
    """Join the spans end to end from the structure `start` (where the first station is).

    A span may be walked against its drawn direction. Refuses spans that do not join.
    """
    if not spans:
        return Path([start], [])
    nodes = [start]
    flags: list[bool] = []
    for span in spans:
        here = nodes[-1]
        if span.from_id == here:
            nodes.append(span.to_id)
            flags.append(False)
        elif span.to_id == here:
            nodes.append(span.from_id)
            flags.append(True)
        else:
            where = "the cable's first station" if len(nodes) == 1 else "the previous span"
            raise PlantError(
                f"span {span.label} ({name_of(span.from_id)} - "
                f"{name_of(span.to_id)}) does not continue from "
                f"{name_of(here)}, where {where} is"
            )
    return Path(nodes, flags)


def station_positions(
    path: Path, structures: Sequence[int], labels: Sequence[str], name_of: Callable[[int], str]
) -> list[int]:
    """For each station (in order), how many spans lie between the A end and it.

    The first station is at the path's start, the last at its end, the rest in order between.
    """
    last_index = len(path.nodes) - 1
    positions: list[int] = []
    previous = 0
    for k, (structure, label) in enumerate(zip(structures, labels, strict=True)):
        where = name_of(structure)
        if k == len(structures) - 1:
            if path.nodes[last_index] != structure:
                raise PlantError(
                    f"the last station, {label} at {where}, is not where the cable's last span"
                    f" ends ({name_of(path.nodes[last_index])})"
                )
            position = last_index
        else:
            candidates = [p for p in range(previous, last_index + 1) if path.nodes[p] == structure]
            if not candidates:
                raise PlantError(
                    f"station {label} at {where} is not on the cable's spans after the"
                    " station before it (stations go in order from the A end)"
                )
            position = candidates[0]
        positions.append(position)
        previous = position
    if len(positions) >= 2 and positions[-1] < positions[-2]:
        raise PlantError(f"station {labels[-1]} comes before the station listed ahead of it")
    return positions


def check_marks(marks: Sequence[float | None], labels: Sequence[str]) -> None:
    """Sheath marks may count up or down along a cable, but one way only."""
    known = [(m, label) for m, label in zip(marks, labels, strict=True) if m is not None]
    direction = 0
    for (m1, l1), (m2, l2) in itertools.pairwise(known):
        step = (m2 > m1) - (m2 < m1)
        if step and direction and step != direction:
            raise PlantError(
                f"sheath marks go both up and down: {l1} at {m1:g} m, then {l2} at {m2:g} m"
            )
        direction = direction or step


def slack_position(path: Path, structure: int, where: str) -> int:
    """Where along the cable's spans a slack coil at `structure` lies."""
    for position, node in enumerate(path.nodes):
        if node == structure:
            return position
    raise PlantError(f"slack coil at {where}: the cable does not pass through {where}")
