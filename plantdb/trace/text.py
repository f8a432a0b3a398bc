"""Human-readable forms of the trace and loss documents (the --json forms are the documents)."""

from __future__ import annotations

from typing import Any

from plantdb.tables import decibels, format_table, metres


def _describe(element: dict[str, Any]) -> tuple[str, str, str]:
    """(what, where, notes) of one trace element."""
    kind = element["kind"]
    if kind == "fiber":
        remarks = []
        if element.get("expresses_through"):
            remarks.append("expresses through " + ", ".join(element["expresses_through"]))
        if element.get("length_source") != "sheath marks":
            remarks.append("length from spans and slack (marks missing)")
        what = f"{element['label']} {element['colours']}"
        where = f"{element['from_station']} -> {element['to_station']}"
        return what, where, "; ".join(remarks)
    if kind == "splice":
        loss = element.get("loss_db")
        measured = f", measured {decibels(loss)} dB" if loss is not None else ""
        return (
            f"{element['closure']} tray {element['tray']} slot {element['slot']}",
            element["at"],
            f"{element['method']}{measured}: {element['from_end']} to {element['to_end']}",
        )
    if kind == "port":
        plug = "/".join(p for p in (element.get("connector"), element.get("polish")) if p)
        notes = plug
        if element.get("termination"):
            notes += f"; {element['termination'].replace('_', ' ')} to {element['fiber']}"
        return element["label"], element["at"], notes.strip("; ")
    if kind == "splitter":
        return (
            f"{element['label']} {element['ratio']}",
            element["at"],
            f"leg {element['from_leg']} -> {element['to_leg']} in {element['place']}",
        )
    if kind == "jumper":
        return "jumper", element["at"], element["label"]
    notes = element.get("role") or ""
    if element.get("passes_to"):
        notes += f", passes light to {element['passes_to']}"
    return element["label"], element["at"], notes


def trace_text(document: dict[str, Any]) -> str:
    """One table per path, a row per element, with lengths and running totals."""
    paths = document["paths"]
    out = [f"trace from {document['start']}: {len(paths)} path(s)"]
    for note in document.get("notes", []):
        out.append(f"note: {note}")
    for n, path in enumerate(paths, start=1):
        out.append("")
        out.append(
            f"path {n}: {path['begin']['at']} ({path['begin']['kind']}) to "
            f"{path['end']['at']} ({path['end']['kind'].replace('_', ' ')}), "
            f"{metres(path['length_m'])} m of fiber"
        )
        rows, total = [], 0.0
        for i, element in enumerate(path["elements"], start=1):
            what, where, notes = _describe(element)
            length = element.get("length_m") if element["kind"] == "fiber" else None
            total += length or 0.0
            lit = "LIT" if element.get("lit") else ""
            rows.append(
                [
                    i,
                    element["kind"],
                    what,
                    where,
                    metres(length),
                    metres(total) if length is not None else "",
                    lit,
                    notes,
                ]
            )
        out.append(
            format_table(
                ["#", "kind", "what", "where", "length m", "total m", "lit", "notes"],
                rows,
                right=(0, 4, 5),
            )
        )
    out.append("")
    out.append(f"caution: {document['caution']}")
    return "\n".join(out)


def loss_text(document: dict[str, Any]) -> str:
    """Totals per wavelength on both bases, then the items of the first wavelength's count."""
    out = [f"expected loss of {document['target']}"]
    for n, entry in enumerate(document["paths"], start=1):
        out.append("")
        out.append(
            f"path {n}: {entry['begin']['at']} to {entry['end']['at']}, "
            f"{metres(entry['length_m'])} m, {entry['mode']}; splices "
            f"{entry['counts']['splices']}, connector pairs "
            f"{entry['counts']['connector_pairs']}, splitters "
            f"{entry['counts']['splitters']}"
        )
        totals = [
            [f"{nm} nm", decibels(w["max_db"]), decibels(w["typical_db"])]
            for nm, w in entry["wavelengths"].items()
        ]
        out.append(format_table(["wavelength", "maximum dB", "typical dB"], totals, right=(1, 2)))
        first = next(iter(entry["wavelengths"]))
        items = [
            [
                i["kind"].replace("_", " "),
                i["label"],
                decibels(i["max_db"]),
                decibels(i["typical_db"]),
                i["typical_source"],
            ]
            for i in entry["wavelengths"][first]["items"]
        ]
        out.append(f"items at {first} nm:")
        out.append(
            format_table(
                ["item", "what", "max dB", "typical dB", "typical from"], items, right=(2, 3)
            )
        )
        for power in entry.get("power_budget", []):
            margins = ", ".join(
                f"{nm} nm {decibels(m['max'])} dB (max basis)"
                for nm, m in power["margin_db"].items()
            )
            out.append(
                f"power budget {power['from']} -> {power['to']}: "
                f"{decibels(power['budget_db'])} dB; margin {margins}"
            )
        for section in entry.get("sections", []):
            flag = "  OVER BUDGET" if section["over_budget"] else ""
            worst = max(w["max_db"] for w in section["wavelengths"].values())
            margin = ""
            if section.get("margin_db"):
                margin = "; margin " + ", ".join(
                    f"{nm} nm {decibels(m['max'])} dB" for nm, m in section["margin_db"].items()
                )
            out.append(
                f"section {section['from']} -> {section['to']}: "
                f"{metres(section['length_m'])} m, up to {decibels(worst)} dB, budget "
                f"{decibels(section['budget_db']) or 'unknown'}{margin}{flag}"
            )
    used = document["values_used"]
    out.append("")
    out.append(
        f"allowances: splice {used['splice_max']['value_db']} dB max, connector pair "
        f"{used['connector_pair_max']['value_db']} dB max (ANSI/TIA-568.3-D unless given);"
        f" margin {used['margin_db']} dB"
    )
    return "\n".join(out)
