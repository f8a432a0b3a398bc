"""Warnings of the splicing rules: allowed, but said out loud in the report.

Mode mix (single-mode to multimode), a colour change by the TIA-598 code (tube or fiber), and
a measured loss above the ANSI/TIA-568.3-D splice allowance. One line per kind and request,
however many fibers the request splices.
"""

from __future__ import annotations

from plantdb.catalogue import SPLICE_MAX
from plantdb.colours import strand_colours
from plantdb.model import ConstructionKind
from plantdb.records.ends import EndRef
from plantdb.records.lookup import CableInfo
from plantdb.records.splice_requests import SpliceRequest, at

_CENTRAL_CORE = ConstructionKind.CENTRAL_CORE.value


class RowWarnings:
    """Warnings of one request, one line per kind however many fibers the row splices."""

    def __init__(self, request: SpliceRequest, modes: tuple[str, str] | None) -> None:
        self.request = request
        self.modes = modes  # (a's mode, b's mode) when they differ
        self.first: dict[str, str] = {}
        self.count: dict[str, int] = {}

    def _note(self, kind: str, message: str) -> None:
        self.first.setdefault(kind, message)
        self.count[kind] = self.count.get(kind, 0) + 1

    def pair(
        self, a: EndRef, a_cable: CableInfo | None, b: EndRef, b_cable: CableInfo | None
    ) -> None:
        if a_cable is None or b_cable is None or a.strand is None or b.strand is None:
            return  # a splitter leg has neither a colour nor a fiber type of the record
        if self.modes is not None:
            self._note(
                "mode",
                f"mode mix: {a.address} is {self.modes[0]} but {b.address} is {self.modes[1]};"
                " light will not cross this splice as the record expects",
            )
        if _colour_key(a_cable, a.strand) != _colour_key(b_cable, b.strand):
            self._note(
                "colour",
                f"colour change: {a.address} ({_colours(a_cable, a.strand)}) to {b.address}"
                f" ({_colours(b_cable, b.strand)}) by the TIA-598 colour code",
            )

    def messages(self) -> list[str]:
        out = [
            at(self.request.where, message + _more(self.count[kind]))
            for kind, message in self.first.items()
        ]
        loss = self.request.loss_db
        if loss is not None and loss > SPLICE_MAX.value:
            out.append(
                at(
                    self.request.where,
                    f"loss {loss:g} dB is above the {SPLICE_MAX.value:g} dB splice allowance,"
                    f" the {SPLICE_MAX.source}; check the splice or the reading",
                )
            )
        return out


def _more(count: int) -> str:
    return "" if count == 1 else f" (and {count - 1} more on this row)"


def _colour_key(cable: CableInfo, strand: int) -> tuple[int | None, int]:
    """(unit position or None, fiber position): equal keys mean equal TIA-598 colours."""
    if cable.construction == _CENTRAL_CORE:
        return None, strand
    unit, position = divmod(strand - 1, cable.fibers_per_unit)
    return unit + 1, position + 1


def _colours(cable: CableInfo, strand: int) -> str:
    if cable.construction == _CENTRAL_CORE:
        return strand_colours(strand, cable.fiber_count, has_units=False)
    return strand_colours(strand, cable.fibers_per_unit)
