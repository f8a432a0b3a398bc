"""The shape of a bundle: which keys each item may have and what kind of value each holds.

Checked before anything touches the database; every problem is reported with its path
(`cables[3].constuction: unknown key`).
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Callable, Mapping
from typing import Any

FORMAT = "plantdb-bundle"
VERSION = 1

Check = Callable[[Any, str], list[str]]

# The largest value a PostgreSQL INTEGER column holds; a bigger whole number would fail in the
# database instead of here, without the item's path.
INTEGER_MAX = 2**31 - 1
# Counts that generate rows (trays, ports) stop far above anything made, so a typo such as
# 10**9 trays is refused rather than writing a billion rows (trade: large closures hold tens
# of trays, high-density frames a few thousand ports).
MAX_TRAYS = 1000
MAX_SLOTS_PER_TRAY = 1000
MAX_PANEL_PORTS = 10_000


def _text(value: Any, path: str) -> list[str]:
    if not isinstance(value, str) or not value.strip():
        return [f"{path}: expected non-empty text, got {value!r}"]
    if len(value) > 200:
        return [f"{path}: text longer than 200 characters"]
    if "\x00" in value:
        # No label holds one, and PostgreSQL cannot store or even compare text with one.
        return [f"{path}: text holds a NUL character"]
    return []


def _text_up_to(length: int) -> Check:
    """Non-empty text that fits a column of `length` characters."""

    def inner(value: Any, path: str) -> list[str]:
        errors = _text(value, path)
        if not errors and len(value) > length:
            return [f"{path}: text longer than {length} characters"]
        return errors

    return inner


def _label(value: Any, path: str) -> list[str]:
    errors = _text(value, path)
    if errors:
        return errors
    if len(value) > 64:
        return [f"{path}: label {value!r} is longer than 64 characters"]
    if ":" in value or value != value.strip():
        return [f"{path}: label {value!r} may not contain ':' or surrounding spaces"]
    return []


def _optional(check: Check) -> Check:
    def inner(value: Any, path: str) -> list[str]:
        return [] if value is None else check(value, path)

    return inner


def _number(minimum: float | None = None, strict: bool = False) -> Check:
    def inner(value: Any, path: str) -> list[str]:
        if isinstance(value, bool) or not isinstance(value, int | float):
            return [f"{path}: expected a number, got {value!r}"]
        if not math.isfinite(value):
            return [f"{path}: expected a finite number, got {value!r}"]
        if minimum is not None and (value <= minimum if strict else value < minimum):
            sign = ">" if strict else ">="
            return [f"{path}: must be {sign} {minimum:g}, got {value!r}"]
        return []

    return inner


def _between(low: float, high: float) -> Check:
    def inner(value: Any, path: str) -> list[str]:
        errors = _number()(value, path)
        if not errors and not low <= value <= high:
            return [f"{path}: must be from {low:g} to {high:g}, got {value!r}"]
        return errors

    return inner


def _integer(minimum: int, maximum: int = INTEGER_MAX) -> Check:
    def inner(value: Any, path: str) -> list[str]:
        if isinstance(value, bool) or not isinstance(value, int):
            return [f"{path}: expected a whole number, got {value!r}"]
        if value < minimum:
            return [f"{path}: must be at least {minimum}, got {value}"]
        if value > maximum:
            return [f"{path}: must be at most {maximum}, got {value}"]
        return []

    return inner


def _choice(*options: str) -> Check:
    def inner(value: Any, path: str) -> list[str]:
        if value not in options:
            return [f"{path}: {value!r} is not one of {', '.join(options)}"]
        return []

    return inner


def _date(value: Any, path: str) -> list[str]:
    if not isinstance(value, str):
        return [f"{path}: expected an ISO date (YYYY-MM-DD), got {value!r}"]
    try:
        dt.date.fromisoformat(value)
    except ValueError:
        return [f"{path}: {value!r} is not an ISO date (YYYY-MM-DD)"]
    return []


def _position(value: Any, path: str) -> list[str]:
    if not isinstance(value, list) or len(value) != 2:
        return [f"{path}: expected [longitude, latitude], got {value!r}"]
    errors = _number()(value[0], f"{path}[0]") + _number()(value[1], f"{path}[1]")
    if errors:
        return errors
    if not -180 <= value[0] <= 180 or not -90 <= value[1] <= 90:
        return [f"{path}: {value!r} is not a WGS 84 [longitude, latitude]"]
    return []


def _list_of(check: Check, minimum: int = 0) -> Check:
    def inner(value: Any, path: str) -> list[str]:
        if not isinstance(value, list):
            return [f"{path}: expected a list, got {type(value).__name__}"]
        if len(value) < minimum:
            return [f"{path}: needs at least {minimum} entries"]
        errors: list[str] = []
        for i, item in enumerate(value):
            errors += check(item, f"{path}[{i}]")
        return errors

    return inner


def _object(fields: Mapping[str, tuple[Check, bool]]) -> Check:
    def inner(value: Any, path: str) -> list[str]:
        if not isinstance(value, dict):
            return [f"{path}: expected an object, got {type(value).__name__}"]
        errors = [f"{path}.{key}: unknown key" for key in value if key not in fields]
        for key, (check, required) in fields.items():
            if key not in value:
                if required:
                    errors.append(f"{path}.{key}: missing")
                continue
            errors += check(value[key], f"{path}.{key}")
        return errors

    return inner


def _per_wavelength(check: Check) -> Check:
    def inner(value: Any, path: str) -> list[str]:
        if not isinstance(value, dict):
            return [f"{path}: expected an object keyed by wavelength in nm"]
        errors: list[str] = []
        for key, item in value.items():
            if not (isinstance(key, str) and key.isdigit() and 600 <= int(key) <= 1700):
                errors.append(f"{path}.{key}: not a wavelength in nm (600-1700)")
                continue
            errors += check(item, f"{path}.{key}")
        return errors

    return inner


_ATTENUATION = _object(
    {"max": (_optional(_number(0)), False), "typical": (_optional(_number(0)), False)}
)
_NOTES = (_optional(_text), False)

SECTIONS: dict[str, Check] = {
    "fiber_types": _object(
        {
            "name": (_label, True),
            "mode": (_choice("single-mode", "multimode"), True),
            "standard": (_optional(_text_up_to(64)), False),
            "attenuation_db_per_km": (_per_wavelength(_ATTENUATION), False),
            "group_index": (_per_wavelength(_number(1.0)), False),
            "core_index": (_optional(_number(1.0)), False),
            "cladding_index": (_optional(_number(1.0)), False),
            "core_um": (_optional(_number(0, strict=True)), False),
            "cladding_um": (_optional(_number(0, strict=True)), False),
            "notes": _NOTES,
        }
    ),
    "structures": _object(
        {
            "label": (_label, True),
            "kind": (_text, True),
            "lon": (_between(-180, 180), True),
            "lat": (_between(-90, 90), True),
            "name": (_optional(_text), False),
            "notes": _NOTES,
        }
    ),
    "spans": _object(
        {
            "label": (_label, True),
            "from": (_label, True),
            "to": (_label, True),
            "kind": (_text, True),
            "length_m": (_optional(_number(0, strict=True)), False),
            "geometry": (_optional(_list_of(_position, 2)), False),
            "notes": _NOTES,
        }
    ),
    "routes": _object(
        {
            "label": (_label, True),
            "name": (_optional(_text), False),
            "spans": (_list_of(_label, 1), True),
        }
    ),
    "closures": _object(
        {
            "label": (_label, True),
            "at": (_label, True),
            "trays": (_integer(0, MAX_TRAYS), True),
            "slots_per_tray": (_integer(1, MAX_SLOTS_PER_TRAY), False),
            "tray_slots": (_optional(_list_of(_integer(1, MAX_SLOTS_PER_TRAY))), False),
            "notes": _NOTES,
        }
    ),
    "panels": _object(
        {
            "label": (_label, True),
            "at": (_label, True),
            "ports": (_integer(1, MAX_PANEL_PORTS), True),
            "connector": (_optional(_text_up_to(16)), False),
            "polish": (_optional(_choice("UPC", "APC", "PC")), False),
            "rack": (_optional(_text_up_to(64)), False),
            "notes": _NOTES,
        }
    ),
    "equipment": _object(
        {
            "label": (_label, True),
            "at": (_label, True),
            "ports": (_list_of(_text_up_to(32), 1), True),
            "role": (_optional(_text), False),
            "tx_dbm": (_optional(_number()), False),
            "rx_sensitivity_dbm": (_optional(_number()), False),
            "rack": (_optional(_text_up_to(64)), False),
            "notes": _NOTES,
        }
    ),
    "splitters": _object(
        {
            "label": (_label, True),
            "at": (_label, True),
            "ratio": (_text, True),
            "loss_db": (_optional(_number(0)), False),
        }
    ),
    "cables": _object(
        {
            "label": (_label, True),
            "fiber_type": (_label, True),
            "construction": (
                _object(
                    {
                        "kind": (
                            _choice("loose_tube", "ribbon", "tight_buffered", "central_core"),
                            True,
                        ),
                        "units": (_integer(1), True),
                        "fibers_per_unit": (_integer(1), True),
                    }
                ),
                True,
            ),
            "spans": (_list_of(_label), False),
            "stations": (
                _list_of(
                    _object({"at": (_label, True), "mark_m": (_optional(_number()), False)}), 2
                ),
                True,
            ),
            "slack": (
                _list_of(
                    _object({"at": (_label, True), "length_m": (_number(0, strict=True), True)})
                ),
                False,
            ),
            "notes": _NOTES,
        }
    ),
    "cuts": _object({"closure": (_label, True), "fiber": (_text, True)}),
    "splices": _object(
        {
            "closure": (_label, True),
            "a": (_text, True),
            "b": (_text, True),
            "tray": (_integer(1), True),
            "slot": (_integer(1), True),
            "method": (_choice("fusion", "mechanical", "mass_fusion"), False),
            "loss_db": (_optional(_number()), False),
            "spliced_on": (_optional(_date), False),
            "spliced_by": (_optional(_text_up_to(100)), False),
        }
    ),
    "terminations": _object(
        {
            "fiber": (_text, True),
            "port": (_text, True),
            "method": (_optional(_choice("pigtail_splice", "field_connector")), False),
        }
    ),
    "jumpers": _object(
        {"a": (_text, True), "b": (_text, True), "length_m": (_optional(_number(0)), False)}
    ),
    "circuits": _object(
        {
            "label": (_label, True),
            "kind": (_optional(_text_up_to(40)), False),
            "status": (_choice("planned", "reserved", "active", "out_of_service", "retired"), True),
            "a": (_text, True),
            "z": (_optional(_text), False),
            "customer": (_optional(_text), False),
            "notes": _NOTES,
        }
    ),
    "loss_tests": _object(
        {
            "circuit": (_label, True),
            "wavelength_nm": (_integer(600, 1700), True),
            "measured_db": (_number(), True),
            "direction": (_optional(_text_up_to(16)), False),
            "tested_on": (_optional(_date), False),
            "tested_by": (_optional(_text_up_to(100)), False),
            "notes": _NOTES,
        }
    ),
}


def check_shape(data: Any, limit: int = 200) -> list[str]:
    """Every shape problem of a bundle (up to `limit`), each with its path."""
    if not isinstance(data, dict):
        return [f"the bundle must be a JSON object, not {type(data).__name__}"]
    errors: list[str] = []
    if data.get("format") != FORMAT:
        errors.append(f"format: expected {FORMAT!r}, got {data.get('format')!r}")
    version = data.get("version")
    # `True == 1` and `1.0 == 1` in Python; only the whole number 1 is version 1.
    if type(version) is not int or version != VERSION:
        errors.append(f"version: expected {VERSION}, got {data.get('version')!r}")
    for key, value in data.items():
        if key in ("format", "version"):
            continue
        check = SECTIONS.get(key)
        if check is None:
            errors.append(f"{key}: unknown key")
            continue
        errors += _list_of(check)(value, key)
        if len(errors) >= limit:
            break
    return errors[:limit]
