"""How long a piece of fiber is, and how that length lies along the street.

A piece runs between two stations of its cable. Its length is the difference of their sheath
marks (marks may count up or down); where either mark is missing it falls back to the spans'
lengths plus slack. Laid along the street, each span takes its span length, each slack coil its
length at its structure, and any remainder (marks minus spans minus slack: the sheath's own
excess over the surveyed route) is shared among the spans in proportion to their lengths.

A coil at a structure strictly inside the piece counts in full. A coil at a mid-span station
where the piece begins or ends is shared half and half with the piece on its other side (the
loop is stored on both sides of the closure); a coil at the cable's own end counts in full.
"""

from __future__ import annotations

from dataclasses import dataclass

from plantdb.trace.reader import CableRow, SpanRow, StationRow


@dataclass(frozen=True)
class Stretch:
    """One part of a piece laid along the street: a span, or a coil standing still."""

    kind: str  # "span" | "coil" | "inside" (a cable with no spans, within one structure)
    fiber_m: float  # fiber length this part takes
    span: SpanRow | None = None  # for a span: which, in the cable's running direction
    structure: str | None = None  # for a coil: where it lies


def _coil_share(cable: CableRow, position: int, lo: int, hi: int) -> float:
    last = len(cable.spans)
    if lo < position < hi:
        return 1.0
    if position in (lo, hi):
        return 1.0 if position in (0, last) else 0.5
    return 0.0


def piece_layout(cable: CableRow, a: StationRow, b: StationRow) -> tuple[list[Stretch], str]:
    """The stretches of the piece from station `a` to `b` in walking order, and the length's
    source ("sheath marks" or "spans and slack")."""
    lo, hi = sorted((a.path_index, b.path_index))
    spans = cable.spans[lo:hi]
    coils = [
        (pos, where, length * _coil_share(cable, pos, lo, hi))
        for pos, where, length in cable.coils
        if _coil_share(cable, pos, lo, hi) > 0
    ]
    span_total = sum(s.length_m for s in spans)
    coil_total = sum(c[2] for c in coils)
    if a.mark_m is not None and b.mark_m is not None:
        total, source = abs(b.mark_m - a.mark_m), "sheath marks"
    else:
        total, source = span_total + coil_total, "spans and slack"
    remainder = total - span_total - coil_total
    stretches: list[Stretch] = []
    for index in range(lo, hi + 1):
        for pos, where, length in coils:
            if pos == index:
                stretches.append(Stretch("coil", length, structure=where))
        if index < hi:
            span = cable.spans[index]
            share = remainder * span.length_m / span_total if span_total else 0.0
            stretches.append(Stretch("span", span.length_m + share, span=span))
    if not spans and remainder:
        # A cable inside one building (a riser): no span to share the length with.
        stretches.append(Stretch("inside", remainder, structure=a.structure))
    if a.path_index > b.path_index or (a.path_index == b.path_index and a.seq > b.seq):
        stretches.reverse()
    return stretches, source


def piece_length(cable: CableRow, a: StationRow, b: StationRow) -> tuple[float, str]:
    """Fiber length between two stations of a cable, and where the figure came from."""
    if a.mark_m is not None and b.mark_m is not None:
        return abs(b.mark_m - a.mark_m), "sheath marks"
    stretches, source = piece_layout(cable, a, b)
    return sum(s.fiber_m for s in stretches), source
