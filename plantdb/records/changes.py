"""The history rows the record's services write: a readable label for each thing changed, and
what the change concerns (its closure, its cables, its circuit, its panels, its structure, its
span) for the history views.

Labels read like the trade speaks of the thing: "cable F-1", "AC-1 tray 1 slot 3",
"F-1:5 cut at AC-1", "circuit AG-1".
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from plantdb.audit import ChangeRow
from plantdb.model import ChangeAction, Cut
from plantdb.records.ends import EndRef

CHUNK = 500


def added(
    entity: str,
    entity_id: int | None,
    label: str,
    after: dict[str, Any],
    **about: int | None,
) -> ChangeRow:
    """A thing added to the record; `after` is the thing as a bundle item."""
    return ChangeRow(ChangeAction.INSERT, entity, entity_id, label, None, after, **about)


# The kinds of thing that have a history of their own: the column naming one of them.
_ITSELF = {
    "cable": "cable_id",
    "closure": "closure_id",
    "circuit": "circuit_id",
    "panel": "panel_id",
    "structure": "structure_id",
    "span": "span_id",
}


def thing_added(
    entity: str, entity_id: int, label: str, after: dict[str, Any], **about: int | None
) -> ChangeRow:
    """A labelled thing added (a cable, a closure, a circuit...), about itself where it can be
    and about what `about` names (the structure a closure stands in)."""
    itself = _ITSELF.get(entity)
    if itself:
        about[itself] = entity_id
    words = entity.replace("_", " ")
    return added(entity, entity_id, f"{words} {label}", after, **about)


def splice_label(closure: str, tray: int, slot: int) -> str:
    """`AC-1 tray 1 slot 3`."""
    return f"{closure} tray {tray} slot {slot}"


def strand_of(end: EndRef) -> str:
    """The strand an end belongs to (`F-1:5` for the end `F-1:5/A`)."""
    if end.mid_span and end.address[-2:] in ("/A", "/B"):
        return end.address[:-2]
    return end.address


def cut_added(closure_id: int, closure: str, end: EndRef, cut_id: int | None) -> ChangeRow:
    """A strand cut at a mid-span access (named or implied by a splice of one of its pieces)."""
    fiber = strand_of(end)
    return added(
        "cut",
        cut_id,
        f"{fiber} cut at {closure}",
        {"closure": closure, "fiber": fiber},
        closure_id=closure_id,
        cable_id=end.cable_id,
    )


def cuts_added(session: Session, cuts: list[tuple[int, str, EndRef]]) -> list[ChangeRow]:
    """History rows of cuts just written (closure id, closure label, end), their ids read back
    by strand and station: one query per few hundred stations, not a RETURNING per row."""
    stations = sorted({end.station_id for _id, _label, end in cuts if end.station_id})
    ids: dict[tuple[int | None, int | None], int] = {}
    for first in range(0, len(stations), CHUNK):
        rows = session.execute(
            select(Cut.strand_id, Cut.station_id, Cut.id).where(
                Cut.station_id.in_(stations[first : first + CHUNK])
            )
        )
        ids.update(((strand, station), cut_id) for strand, station, cut_id in rows)
    return [
        cut_added(closure_id, label, end, ids.get((end.strand_id, end.station_id)))
        for closure_id, label, end in cuts
    ]


def bundle_item(values: dict[str, Any]) -> dict[str, Any]:
    """A thing's values as a bundle item: keys without a value left out, as a dump does."""
    return {key: value for key, value in values.items() if value is not None}


def splice_added(
    splice_id: int, closure_id: int, a: EndRef, b: EndRef, item: dict[str, Any]
) -> ChangeRow:
    """A splice recorded; `item` is the splice as a bundle item."""
    return added(
        "splice",
        splice_id,
        splice_label(item["closure"], item["tray"], item["slot"]),
        bundle_item(item),
        closure_id=closure_id,
        cable_id=a.cable_id,
        other_cable_id=b.cable_id,
    )
