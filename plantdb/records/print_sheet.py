"""A closure's splice sheet as a print-ready HTML page: tray by tray, colours as swatches and
as names, the side of every mid-span piece, measured losses.

Plain string templating (no web framework): every label from the record goes through
`html.escape`. Swatches print because the page asks browsers to keep background colours.
"""

from __future__ import annotations

import datetime as dt
from html import escape
from pathlib import Path

from sqlalchemy.orm import Session

from plantdb.colours import TIA_598, Marking
from plantdb.model import ConstructionKind
from plantdb.records.lookup import CableInfo
from plantdb.records.splice_rows import (
    ClosureSheet,
    RecordedEnd,
    RecordedSplice,
    closure_sheet,
    end_markings,
)

_STYLE = """
:root { font-family: system-ui, sans-serif; font-size: 11pt; color: #111; }
body { margin: 1.5em; }
h1 { font-size: 1.5em; margin: 0 0 .2em; }
h2 { font-size: 1.15em; margin: 1.2em 0 .4em; }
p.meta { margin: 0 0 1em; color: #333; }
table { border-collapse: collapse; width: 100%; margin-bottom: .6em; }
th, td { border: 1px solid #999; padding: .25em .45em; text-align: left; vertical-align: top; }
th { background: #eee; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
td.label, td.day { white-space: nowrap; }
.swatch { display: inline-block; width: 1.1em; height: 1.1em; border: 2px solid;
  border-radius: 2px; vertical-align: middle; margin-right: .15em;
  background: var(--swatch); border-color: var(--swatch-edge); }
/* Stripes drawn as bands of the stripe colour across the base colour. */
.swatch.striped {
  background: repeating-linear-gradient(135deg, var(--swatch) 0 4px, var(--stripe) 4px 6px); }
.colours { white-space: nowrap; }
.empty { color: #555; font-style: italic; }
.safety { margin-top: 1.5em; border-top: 1px solid #999; padding-top: .5em; font-size: .9em; }
.legend td { white-space: nowrap; }
* { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
@page { size: A4 landscape; margin: 12mm; }
@media print {
  body { margin: 0; }
  section.tray { break-inside: avoid-page; }
  thead { display: table-header-group; }
  tr { break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
}
"""

_SAFETY = (
    "The record can be wrong. Before cutting or re-splicing, verify each strand in the field"
    " (treat every fiber as live; check with a fiber identifier or power meter; never look into"
    " a fiber or connector) and follow local codes and the operator's own procedures."
)


def swatch_classes(mark: Marking) -> str:
    """CSS classes of a swatch: `tia-N` for the base colour, `striped stripe-NAME` if striped
    (the rules are in `sheet_css`, so the page needs no inline style)."""
    classes = f"swatch tia-{TIA_598.index(mark.base) + 1}"
    if mark.stripe is not None:
        classes += f" striped stripe-{mark.stripe.name}"
    return classes


def _swatch(mark: Marking) -> str:
    return f'<span class="{swatch_classes(mark)}"></span>'


def sheet_css() -> str:
    """The sheet's stylesheet: layout and print rules, then one class per TIA-598 colour."""
    lines = [_STYLE]
    for n, colour in enumerate(TIA_598, start=1):
        lines.append(f".tia-{n} {{ --swatch: {colour.hex}; --swatch-edge: {colour.border}; }}")
    for colour in TIA_598:
        lines.append(f".stripe-{colour.name} {{ --stripe: {colour.hex}; }}")
    return "\n".join(lines) + "\n"


def _colours_cell(end: RecordedEnd) -> str:
    unit, fiber = end_markings(end)
    if fiber is None:
        return '<td class="colours empty">splitter leg</td>'
    parts = []
    if unit is not None:
        parts.append(f"{_swatch(unit)}{escape(unit.name)}")
    parts.append(f"{_swatch(fiber)}{escape(fiber.name)}")
    shown = " / ".join(parts)
    abbrev = f"{unit.abbrev}/{fiber.abbrev}" if unit is not None else fiber.abbrev
    return f'<td class="colours">{shown} <small>({escape(abbrev)})</small></td>'


def _side_cell(end: RecordedEnd) -> str:
    if end.side is None:
        return "<td></td>"
    return f"<td>{escape(end.side)} <small>toward {escape(end.toward or '')}</small></td>"


def _end_cells(end: RecordedEnd) -> str:
    return (
        f'<td class="label">{escape(end.label)}</td><td class=num>{escape(end.point)}</td>'
        f"{_side_cell(end)}{_colours_cell(end)}"
    )


def _splice_row(splice: RecordedSplice) -> str:
    loss = "" if splice.loss_db is None else f"{splice.loss_db:.2f}"
    on = splice.spliced_on.isoformat() if splice.spliced_on else ""
    return (
        f"<tr><td class=num>{splice.slot}</td>{_end_cells(splice.a)}{_end_cells(splice.b)}"
        f"<td>{escape(splice.method.replace('_', ' '))}</td><td class=num>{loss}</td>"
        f'<td class="day">{escape(on)}</td><td>{escape(splice.spliced_by or "")}</td></tr>'
    )


_TRAY_HEAD = (
    "<thead><tr><th rowspan=2>slot</th><th colspan=4>A</th><th colspan=4>B</th>"
    "<th rowspan=2>method</th><th rowspan=2>loss dB</th><th rowspan=2>spliced on</th>"
    "<th rowspan=2>by</th></tr><tr>"
    + "<th>cable</th><th>strand</th><th>side</th><th>colours (tube / fiber)</th>" * 2
    + "</tr></thead>"
)


def _tray(number: int, slots: int, splices: list[RecordedSplice]) -> str:
    used = f"{len(splices)} of {slots} slots used"
    head = f'<section class="tray"><h2>Tray {number} <small>({used})</small></h2>'
    if not splices:
        return head + '<p class="empty">No splices recorded in this tray.</p></section>'
    rows = "".join(_splice_row(s) for s in splices)
    return f"{head}<table>{_TRAY_HEAD}<tbody>{rows}</tbody></table></section>"


def _how_worked(cable: CableInfo, closure: str) -> str:
    station = next(s for s in cable.stations if s.place == closure)
    first, last = cable.stations[0].place, cable.stations[-1].place
    side = cable.end_side(station)
    if side == "B":
        return f"starts here, runs to {escape(last)}"
    if side == "A":
        return f"ends here, from {escape(first)}"
    return f"passes through: side A toward {escape(first)}, side B toward {escape(last)}"


def _cables(sheet: ClosureSheet) -> str:
    rows = []
    for cable in sheet.cables:
        kind = cable.construction.replace("_", " ")
        if cable.construction == ConstructionKind.CENTRAL_CORE.value:
            build = f"{cable.fiber_count} fibers, {kind}"
        else:
            build = f"{cable.units} × {cable.fibers_per_unit}, {kind}"
        rows.append(
            f"<tr><td>{escape(cable.label)}</td><td>{escape(build)}</td>"
            f"<td>{_how_worked(cable, sheet.closure)}</td></tr>"
        )
    body = "".join(rows) or '<tr><td colspan=3 class="empty">none</td></tr>'
    return (
        "<h2>Cables</h2><table><thead><tr><th>cable</th><th>construction</th>"
        f"<th>here</th></tr></thead><tbody>{body}</tbody></table>"
    )


def _legend() -> str:
    cells = "".join(
        f"<td>{n}. {_swatch(Marking(c))}{escape(c.name)} ({c.abbrev})</td>"
        for n, c in enumerate(TIA_598, start=1)
    )
    return (
        '<h2>Colour code (ANSI/TIA-598)</h2><table class="legend"><tr>'
        f"{cells}</tr></table><p>Positions 13-24 repeat the sequence with one black stripe"
        " (black takes a yellow stripe); every further twelve adds one more stripe.</p>"
    )


def render_sheet_html(
    sheet: ClosureSheet, *, printed: dt.date | None = None, stylesheet: str | None = None
) -> str:
    """The print-ready page of a closure sheet read by `closure_sheet`.

    With `stylesheet` (a URL), the page links to `sheet_css` served there, as a web server
    whose content security policy refuses inline styles needs; without, the rules are inline,
    so a written file stands alone.
    """
    by_tray: dict[int, list[RecordedSplice]] = {}
    for splice in sheet.splices:
        by_tray.setdefault(splice.tray, []).append(splice)
    trays = "".join(_tray(n, slots, by_tray.get(n, [])) for n, slots in sheet.trays)
    day = (printed or dt.date.today()).isoformat()
    title = f"Splice sheet {escape(sheet.closure)}"
    meta = (
        f"Closure {escape(sheet.closure)} at {escape(sheet.structure)}."
        f" {len(sheet.splices)} splices in {len(sheet.trays)} trays. Printed {day}."
    )
    if stylesheet is None:
        style = f"<style>{sheet_css()}</style>"
    else:
        style = f'<link rel="stylesheet" href="{escape(stylesheet)}">'
    return (
        f'<!doctype html>\n<html lang="en"><head><meta charset="utf-8">'
        f"<title>{title}</title>{style}</head><body>"
        f'<header><h1>{title}</h1><p class="meta">{meta}</p></header>'
        f"{_cables(sheet)}{trays}{_legend()}"
        f'<p class="safety">{escape(_SAFETY)}</p></body></html>\n'
    )


def splice_sheet_html(session: Session, closure: str) -> str:
    """A closure's print-ready splice sheet as one HTML page (a string)."""
    return render_sheet_html(closure_sheet(session, closure))


def write_html(sheet: ClosureSheet, path: Path) -> None:
    """Write the print-ready page of a closure sheet."""
    path.write_text(render_sheet_html(sheet), encoding="utf-8")
