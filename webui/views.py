"""What every page shares: links to things by label, number formats, colour markings."""

from __future__ import annotations

from typing import Any

from flask import Flask, current_app, url_for

from plantdb.colours import TIA_598, Marking, marking, unit_and_position
from plantdb.model import ConstructionKind

# kind of thing -> the endpoint of its page
PAGES = {
    "structure": "places.structure",
    "span": "places.span",
    "closure": "closures.closure",
    "panel": "panels.panel",
    "cable": "cables.cable",
    "circuit": "circuits.circuit",
}


def thing_url(kind: str, label: str) -> str | None:
    """The page of a thing by kind and label; None for a kind without a page."""
    endpoint = PAGES.get(kind)
    return url_for(endpoint, label=label) if endpoint else None


def metres(value: float | None) -> str:
    return "" if value is None else f"{value:,.1f} m"


def decibels(value: float | None) -> str:
    """Losses shown to 0.01 dB (the JSON keeps them exact)."""
    return "" if value is None else f"{value:.2f}"


def words(value: object) -> str:
    """An enum value as words: "out_of_service" -> "out of service"."""
    return "" if value is None else str(value).replace("_", " ")


def strand_markings(
    strand: int, construction: str, fibers_per_unit: int, fiber_count: int
) -> tuple[Marking | None, Marking]:
    """(unit marking or None, fiber marking) of a strand, by TIA-598."""
    if construction == ConstructionKind.CENTRAL_CORE.value:
        return None, marking(strand if strand <= fiber_count else 1)
    unit, position = unit_and_position(strand, fibers_per_unit)
    return marking(unit), marking(position)


def swatch_class(mark: Marking) -> str:
    """CSS classes of a swatch: the base colour, and the stripe colour when striped."""
    classes = f"swatch tia-{TIA_598.index(mark.base) + 1}"
    if mark.stripe is not None:
        classes += f" striped stripe-{mark.stripe.name}"
    return classes


def _context() -> dict[str, Any]:
    return {"read_only": bool(current_app.config.get("READ_ONLY"))}


def install(app: Flask) -> None:
    """Template filters and globals (globals, so imported macros see them too)."""
    app.add_template_filter(metres, "metres")
    app.add_template_filter(decibels, "db")
    app.add_template_filter(words, "words")
    app.jinja_env.globals.update(
        thing_url=thing_url,
        marking=marking,
        swatch_class=swatch_class,
        strand_markings=strand_markings,
    )
    app.context_processor(_context)
