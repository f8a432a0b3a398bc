"""Cable pages: construction, placement on a small map, stations with sheath marks, strands."""

from __future__ import annotations

from flask import Blueprint, render_template, url_for
from sqlalchemy import select

from plantdb.model import Cable, FiberType
from plantdb.safety import FIELD_VERIFY
from plantdb.trace.reader import PlantReader
from webui.cable_view import strand_lines
from webui.history import latest_changes
from webui.store import reading

blueprint = Blueprint("cables", __name__, url_prefix="/cables")


@blueprint.route("/<path:label>")
def cable(label: str) -> str:
    """A cable's page; its strand table carries the field caution (a strand shown open with
    no circuit reads as dark, and the record can be wrong)."""
    with reading() as session:
        reader = PlantReader(session)
        row = reader.cable(reader.cable_id(label))
        info = session.execute(
            select(
                Cable.fiber_count, Cable.notes, FiberType.name, FiberType.mode, FiberType.standard
            )
            .join(FiberType, FiberType.id == Cable.fiber_type_id)
            .where(Cable.id == row.id)
        ).one()
        strands = strand_lines(session, row)
        # The reader fills spans and coils on first use: read them while the session is open.
        spans, coils = list(row.spans), list(row.coils)
        history = latest_changes(session, "cable", label)
    return render_template(
        "cable.html",
        cable=row,
        spans=spans,
        coils=coils,
        info=info,
        strands=strands,
        geometry_url=url_for("map.lines", cable=label),
        history=history,
        caution=FIELD_VERIFY,
    )
