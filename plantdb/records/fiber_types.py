"""The record's fiber types: the optical values every answer uses, and where each came from.

A fiber type's own values (in the record) come first; where it has none, its standard's
catalogue value, with that value's published source. The same order as the loss count and the
break location use, so an engineer can see before a test which figures a budget will take.
Light guidance (numerical aperture, acceptance half-angle, critical angle, relative index
difference) is derived from the core and cladding indices: the fiber type's own where recorded,
else the catalogue's nominal ones for its standard.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from plantdb import catalogue
from plantdb.model import FiberType, FiberTypeWavelength
from plantdb.tables import format_table


def _catalogue_class(standard: str | None) -> catalogue.FiberClass | None:
    if not standard:
        return None
    try:
        return catalogue.fiber_class(standard)
    except catalogue.CatalogueLookupError:
        return None


def _value(recorded: float | None, fallback: catalogue.Sourced | None, what: str) -> Any:
    if recorded is not None:
        return {"value": recorded, "source": "record"}
    if fallback is not None:
        return {
            "value": fallback.value,
            "source": f"catalogue: {fallback.source}",
            "grade": fallback.grade,
        }
    return {"value": None, "source": f"no {what} in the record or the catalogue"}


def _attenuation(fiber: catalogue.FiberClass | None, nm: int, basis: str) -> Any:
    if fiber is None:
        return None
    try:
        return catalogue.attenuation(fiber, nm, basis)
    except catalogue.CatalogueLookupError:
        return None


def _guidance(row: FiberType, fiber: catalogue.FiberClass | None) -> dict[str, Any] | None:
    """Light guidance from the indices: the record's where both are given, else nominal."""
    if row.core_index is not None and row.cladding_index is not None:
        n1, n2, source = row.core_index, row.cladding_index, "record"
    elif fiber is not None:
        n1, n2 = fiber.core_index.value, fiber.cladding_index.value
        nm = fiber.index_wavelength_nm
        source = f"catalogue nominal indices at {nm} nm: {fiber.core_index.source}"
    else:
        return None
    return {
        "core_index": n1,
        "cladding_index": n2,
        "source": source,
        "numerical_aperture": catalogue.numerical_aperture(n1, n2),
        "acceptance_half_angle_deg": catalogue.acceptance_half_angle_deg(n1, n2),
        "critical_angle_deg": catalogue.critical_angle_deg(n1, n2),
        "relative_index_difference": catalogue.relative_index_difference(n1, n2),
    }


def fiber_types_document(session: Session) -> dict[str, Any]:
    """Every fiber type with its values per wavelength (and their sources) and light guidance."""
    own: dict[int, dict[int, FiberTypeWavelength]] = {}
    for value in session.scalars(select(FiberTypeWavelength)):
        own.setdefault(value.fiber_type_id, {})[value.wavelength_nm] = value
    types = []
    for row in session.scalars(select(FiberType).order_by(FiberType.name)):
        fiber = _catalogue_class(row.standard)
        mode = row.mode.value
        recorded = own.get(row.id, {})
        wavelengths = sorted(set(catalogue.SUPPORTED_WAVELENGTHS.get(mode, ())) | set(recorded))
        values = {}
        for nm in wavelengths:
            mine = recorded.get(nm)
            values[str(nm)] = {
                "max_db_per_km": _value(
                    mine.attenuation_max if mine else None,
                    _attenuation(fiber, nm, "max"),
                    "maximum attenuation",
                ),
                "typical_db_per_km": _value(
                    mine.attenuation_typical if mine else None,
                    _attenuation(fiber, nm, "typical"),
                    "typical attenuation",
                ),
                "group_index": _value(
                    mine.group_index if mine else None,
                    fiber.group_index.get(nm) if fiber else None,
                    "group index",
                ),
            }
        types.append(
            {
                "name": row.name,
                "mode": mode,
                "standard": row.standard,
                "wavelengths": values,
                "light_guidance": _guidance(row, fiber),
            }
        )
    return {"fiber_types": types}


def _number(entry: dict[str, Any], places: int) -> str:
    value = entry["value"]
    if value is None:
        return "-"
    mark = "" if entry["source"] == "record" else "*"
    return f"{value:.{places}f}{mark}"


def fiber_types_text(document: dict[str, Any]) -> str:
    """A table per fiber type; values the catalogue supplied are starred."""
    out = []
    for item in document["fiber_types"]:
        out.append(f"{item['name']}: {item['mode']}, standard {item['standard'] or 'none'}")
        rows = [
            [
                f"{nm} nm",
                _number(v["max_db_per_km"], 2),
                _number(v["typical_db_per_km"], 2),
                _number(v["group_index"], 4),
            ]
            for nm, v in item["wavelengths"].items()
        ]
        out.append(
            format_table(
                ["wavelength", "max dB/km", "typical dB/km", "group index"], rows, right=(1, 2, 3)
            )
        )
        guide = item["light_guidance"]
        if guide:
            out.append(
                f"  light guidance (indices {guide['core_index']} / {guide['cladding_index']},"
                f" {'recorded' if guide['source'] == 'record' else 'catalogue nominal'}):"
                f" NA {guide['numerical_aperture']:.3f}, acceptance half-angle"
                f" {guide['acceptance_half_angle_deg']:.1f} deg, critical angle"
                f" {guide['critical_angle_deg']:.1f} deg, delta"
                f" {guide['relative_index_difference'] * 100:.2f} %"
            )
        out.append("")
    out.append("* from the catalogue (the fiber type records none); --json names each source")
    return "\n".join(out)
