"""Reading request parameters: each bad one refused with 400, naming the parameter and value."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

from flask import request
from werkzeug.datastructures import MultiDict
from werkzeug.exceptions import BadRequest

Args = MultiDict[str, str] | Mapping[str, str]


def text(args: Args, name: str) -> str | None:
    """A text parameter, stripped; None when absent or empty."""
    value = args.get(name)
    if value is None:
        return None
    value = value.strip()
    return value or None


def required_text(args: Args, name: str) -> str:
    value = text(args, name)
    if value is None:
        raise BadRequest(f"parameter {name} is required")
    return value


def one_of(args: Args, names: Sequence[str]) -> tuple[str, str]:
    """Exactly one of the named parameters, as (name, value)."""
    given = [(name, value) for name in names if (value := text(args, name)) is not None]
    if len(given) != 1:
        choices = ", ".join(names[:-1]) + f" or {names[-1]}"
        raise BadRequest(f"give exactly one of the parameters {choices}")
    return given[0]


def number(args: Args, name: str, *, required: bool = False) -> float | None:
    """A finite number parameter."""
    value = required_text(args, name) if required else text(args, name)
    if value is None:
        return None
    try:
        parsed = float(value)
    except ValueError:
        raise BadRequest(f"parameter {name}: {value!r} is not a number") from None
    if not math.isfinite(parsed):
        raise BadRequest(f"parameter {name}: {value!r} is not a finite number")
    return parsed


def whole(args: Args, name: str) -> int | None:
    """A whole-number parameter."""
    value = text(args, name)
    if value is None:
        return None
    if not value.isdigit():
        raise BadRequest(f"parameter {name}: {value!r} is not a whole number")
    return int(value)


def wavelengths(args: MultiDict[str, str], name: str = "wavelength") -> tuple[int, ...]:
    """Wavelengths in nm, repeated (`wavelength=1310&wavelength=1550`) or comma-separated."""
    found: list[int] = []
    for value in args.getlist(name):
        for part in value.split(","):
            part = part.strip()
            if not part:
                continue
            if not part.isdigit():
                raise BadRequest(f"parameter {name}: {part!r} is not a wavelength in nm")
            found.append(int(part))
    return tuple(found)


def bbox(value: str | None) -> tuple[float, float, float, float]:
    """An RFC 7946 bounding box `W,S,E,N` in degrees; W > E crosses the antimeridian."""
    if value is None or not value.strip():
        raise BadRequest("parameter bbox is required: bbox=WEST,SOUTH,EAST,NORTH in degrees")
    parts = value.split(",")
    if len(parts) != 4:
        raise BadRequest(f"parameter bbox: {value!r} is not four numbers WEST,SOUTH,EAST,NORTH")
    try:
        west, south, east, north = (float(p) for p in parts)
    except ValueError:
        raise BadRequest(
            f"parameter bbox: {value!r} holds something that is not a number"
        ) from None
    for what, v, limit in (("west", west, 180), ("east", east, 180)):
        if not -limit <= v <= limit:
            raise BadRequest(f"parameter bbox: {what} {v:g} is outside -180..180")
    for what, v in (("south", south), ("north", north)):
        if not -90 <= v <= 90:
            raise BadRequest(f"parameter bbox: {what} {v:g} is outside -90..90")
    if south > north:
        raise BadRequest(f"parameter bbox: south {south:g} is north of north {north:g}")
    return west, south, east, north


def refuse_nul_characters() -> None:
    """Refuse (400) a request whose path, parameters or form fields hold a NUL character.

    No label holds one, and PostgreSQL cannot store or even compare text with one: a lookup
    would fail in the database instead of answering "no such thing".
    """
    places = [("parameter", request.args), ("field", request.form)]
    places.append(("path part", MultiDict((request.view_args or {}).items())))
    for what, values in places:
        for name, value in values.items(multi=True):
            if "\x00" in str(name) or (isinstance(value, str) and "\x00" in value):
                shown = str(name).replace("\x00", "\\0")
                raise BadRequest(f"{what} {shown}: a NUL character is not allowed")
