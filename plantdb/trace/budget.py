"""The `loss` document: expected loss per wavelength, power budget, and long-route sections."""

from __future__ import annotations

import itertools
from typing import Any

from plantdb import catalogue
from plantdb.errors import RecordsError
from plantdb.trace.elements import Element, TracedPath
from plantdb.trace.loss import (
    LossCounter,
    LossOptions,
    count_path,
    path_counts,
    path_mode,
    wavelengths_for,
)
from plantdb.trace.reader import PlantReader
from plantdb.trace.tracing import Trace


def _optics(element: Element) -> tuple[float | None, float | None]:
    return element.refs.get("tx_dbm"), element.refs.get("rx_sensitivity_dbm")


def _power(first: Element, last: Element, losses: dict[str, Any]) -> list[dict[str, Any]]:
    """Margin = (launch power - receiver sensitivity) - loss, for each direction with optics."""
    out = []
    for source, sink in ((first, last), (last, first)):
        tx, _ = _optics(source)
        _, rx = _optics(sink)
        if tx is None or rx is None:
            continue
        budget = tx - rx
        out.append(
            {
                "from": source.label,
                "to": sink.label,
                "tx_dbm": tx,
                "rx_sensitivity_dbm": rx,
                "budget_db": budget,
                "margin_db": {
                    nm: {"max": budget - w["max_db"], "typical": budget - w["typical_db"]}
                    for nm, w in losses.items()
                },
            }
        )
    return out


def _sections(
    counter: LossCounter, path: TracedPath, wavelengths: tuple[int, ...]
) -> list[dict[str, Any]]:
    """Split a long route at regenerators and amplifiers: each section with its own budget."""
    cuts = [i for i, e in enumerate(path.elements) if e.refs.get("inline")]
    if not cuts:
        return []
    bounds = [0, *cuts, len(path.elements) - 1]
    sections = []
    for start, stop in itertools.pairwise(bounds):
        part = TracedPath(path.elements[start : stop + 1], path.begin, path.end)
        losses = {str(nm): count_path(counter, part, nm) for nm in wavelengths}
        first, last = part.elements[0], part.elements[-1]
        tx, _ = _optics(first)
        _, rx = _optics(last)
        budget = None if tx is None or rx is None else tx - rx
        worst = max(w["max_db"] for w in losses.values())
        sections.append(
            {
                "from": first.label,
                "to": last.label,
                "length_m": part.length_m,
                "wavelengths": {
                    nm: {"max_db": w["max_db"], "typical_db": w["typical_db"]}
                    for nm, w in losses.items()
                },
                "budget_db": budget,
                "margin_db": None
                if budget is None
                else {
                    nm: {"max": budget - w["max_db"], "typical": budget - w["typical_db"]}
                    for nm, w in losses.items()
                },
                "over_budget": budget is not None and worst > budget,
            }
        )
    return sections


def path_loss(reader: PlantReader, counter: LossCounter, path: TracedPath) -> dict[str, Any]:
    """The loss entry of one path: per wavelength totals and items, counts, length."""
    mode = path_mode(reader, path)
    wavelengths = wavelengths_for(mode, counter.options.wavelengths)
    losses = {str(nm): count_path(counter, path, nm) for nm in wavelengths}
    entry: dict[str, Any] = {
        "begin": path.begin.to_json(),
        "end": path.end.to_json(),
        "mode": mode,
        "wavelengths": losses,
        "counts": path_counts(path),
        "length_m": path.length_m,
    }
    sections = _sections(counter, path, wavelengths)
    if sections:
        # Each regenerator or amplifier launches the light again: the optics at the two ends
        # never see each other, so each section has its own budget and there is no end-to-end
        # one (it would set the far receiver against the whole route's loss).
        entry["sections"] = sections
    elif path.elements:
        power = _power(path.elements[0], path.elements[-1], losses)
        if power:
            entry["power_budget"] = power
    return entry


def _values_used(options: LossOptions) -> dict[str, Any]:
    def pick(given: float | None, default: catalogue.Sourced) -> dict[str, Any]:
        if given is not None:
            return {"value_db": given, "source": "given by user"}
        return {"value_db": default.value, "source": default.source, "grade": default.grade}

    return {
        "splice_max": pick(options.splice_max_db, catalogue.SPLICE_MAX),
        "splice_typical": (
            {"value_db": options.splice_typical_db, "source": "given by user"}
            if options.splice_typical_db is not None
            else {
                "source": "measured loss where recorded, else catalogue by method: "
                + ", ".join(f"{m} {v.value} dB" for m, v in catalogue.SPLICE_TYPICAL.items())
            }
        ),
        "connector_pair_max": pick(options.connector_max_db, catalogue.CONNECTOR_PAIR_MAX),
        "connector_pair_typical": pick(
            options.connector_typical_db, catalogue.CONNECTOR_PAIR_TYPICAL
        ),
        "margin_db": options.margin_db,
    }


def loss_document(
    reader: PlantReader, traced: Trace, target: str, options: LossOptions
) -> dict[str, Any]:
    """The contract's loss document for a trace (one entry per end reached under "paths")."""
    if traced.circuit is not None and not traced.circuit["reaches_z"]:
        raise RecordsError(traced.notes[0] if traced.notes else f"{target} does not reach Z")
    counter = LossCounter(reader, options)
    entries = [path_loss(reader, counter, path) for path in traced.paths]
    document: dict[str, Any] = {"target": target}
    if len(entries) == 1:
        document.update(
            {
                k: entries[0][k]
                for k in ("wavelengths", "counts", "length_m", "mode", "begin", "end")
            }
        )
        for key in ("power_budget", "sections"):
            if key in entries[0]:
                document[key] = entries[0][key]
    document["paths"] = entries
    if traced.circuit is not None:
        document["circuit"] = traced.circuit
    document["values_used"] = _values_used(options)
    return document
