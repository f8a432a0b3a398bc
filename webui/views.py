"""What every page shares: links to things by label, number formats, colour markings."""

from __future__ import annotations

import functools
from collections.abc import Callable
from typing import Any
from urllib.parse import quote

from flask import Flask, current_app, g, url_for
from markupsafe import Markup, escape

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


_SLOT = "LABEL-SLOT"


def thing_url(kind: str, label: str) -> str | None:
    """The page of a thing by kind and label; None for a kind without a page.

    A busy closure page links hundreds of things: the route is built once per kind and
    request, and each label quoted as werkzeug's path converter would (same URL as url_for).
    """
    routes: dict[str, str] = g.setdefault("thing_routes", {})
    return _page_url(routes, kind, label)


def page_urls() -> Callable[[str, str], str]:
    """`thing_url` for one request that links thousands of things (a map viewport): the
    routes are looked up once, not through the request context for every thing; "" for a
    kind without a page."""
    routes: dict[str, str] = g.setdefault("thing_routes", {})
    return lambda kind, label: _page_url(routes, kind, label) or ""


def _page_url(routes: dict[str, str], kind: str, label: str) -> str | None:
    route = routes.get(kind)
    if route is None:
        endpoint = PAGES.get(kind)
        if endpoint is None:
            return None
        route = routes[kind] = url_for(endpoint, label=_SLOT)
    return route.replace(_SLOT, quote(str(label), safe="!$&'()*+,/:;=@"))


def metres(value: float | None) -> str:
    return "" if value is None else f"{value:,.1f} m"


def decibels(value: object) -> str:
    """Losses shown to 0.01 dB (the JSON keeps them exact); blank where none is recorded
    (documents leave out a loss nobody measured, so templates may see it undefined)."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        return ""
    return f"{value:.2f}"


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


@functools.lru_cache(maxsize=1024)
def swatch_class(mark: Marking) -> str:
    """CSS classes of a swatch: the base colour, and the stripe colour when striped."""
    classes = f"swatch tia-{TIA_598.index(mark.base) + 1}"
    if mark.stripe is not None:
        classes += f" striped stripe-{mark.stripe.name}"
    return classes


def _context() -> dict[str, Any]:
    return {"read_only": bool(current_app.config.get("READ_ONLY"))}


def _swatch_html(mark: Marking | None) -> str:
    if mark is None:
        return ""
    return f'<span class="{escape(swatch_class(mark))}" aria-hidden="true"></span>'


@functools.lru_cache(maxsize=8192)
def colours_html(unit: Marking | None, fiber: Marking | None) -> Markup:
    """A strand's colours as swatches with their names and codes (as the `colours` macro).

    Built in Python: a busy closure page shows a thousand of these, and nested template
    macros cost several times more per call.
    """
    if fiber is None:
        return Markup("")
    names = f"{_swatch_html(unit)}{escape(unit.name)} / " if unit is not None else ""
    codes = f"{escape(unit.abbrev)}/" if unit is not None else ""
    return Markup(
        f'<span class="colours">{names}{_swatch_html(fiber)}{escape(fiber.name)}\n'
        f'<span class="abbr">({codes}{escape(fiber.abbrev)})</span></span>'
    )


def circuit_links_html(circuits: list[dict[str, Any]]) -> Markup:
    """Links to circuits with their status badges (as the `circuit_links` macro)."""
    parts = []
    for circuit in circuits:
        label, status = str(circuit["label"]), str(circuit["status"])
        parts.append(
            f'<a href="{escape(thing_url("circuit", label) or "")}">{escape(label)}</a> '
            f'<span class="status status-{escape(status)}">{escape(words(status))}</span>'
        )
    return Markup(", ".join(parts))


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
        colours_html=colours_html,
        circuit_links_html=circuit_links_html,
    )
    app.context_processor(_context)
