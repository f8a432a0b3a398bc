"""Human-readable forms of the live, impact and locate documents, each ending in its caution."""

from __future__ import annotations

import textwrap
from itertools import groupby
from typing import Any

from plantdb.tables import format_table, metres


def _caution(text: str) -> str:
    return "\n".join(
        ["", "CAUTION:", *textwrap.wrap(text, 92, initial_indent="  ", subsequent_indent="  ")]
    )


# How a circuit's kept path stands, where it is not a complete walk from A to Z.
_PATH_STATES = {
    "incomplete": "path broken",
    "no_z": "no Z end",
    "records_error": "records error",
}


def _status(circuit: dict[str, Any]) -> str:
    words = circuit["status"].replace("_", " ")
    state = _PATH_STATES.get(circuit.get("path_state") or "")
    return f"{words}, {state}" if state else words


def _circuits(strand: dict[str, Any]) -> str:
    return ", ".join(f"{c['label']} ({_status(c)})" for c in strand["circuits"])


def _untraced(document: dict[str, Any]) -> list[str]:
    """A warning naming circuits no answer can place (their paths hit a records error)."""
    untraced = document.get("untraced_circuits") or []
    if not untraced:
        return []
    names = ", ".join(f"{c['label']} ({c['status'].replace('_', ' ')})" for c in untraced)
    return [
        "",
        f"WARNING: {len(untraced)} circuit(s) cannot be traced because of a records error and"
        f" may run here: {names}. See `plantdb check`.",
    ]


def _splices(strand: dict[str, Any]) -> str:
    parts = []
    for s in strand["splices"]:
        side = f"/{s['side']} " if s.get("side") else ""
        parts.append(f"{side}tray {s['tray']} slot {s['slot']} to {s['to']}")
    return "; ".join(parts)


def live_text(document: dict[str, Any]) -> str:
    """Live strands first, then every strand grouped by cable and tube."""
    summary = document["summary"]
    out = [
        f"closure {document['closure']} at {document['structure']}: {summary['strands']} "
        f"strands, {summary['live']} LIVE (carrying active circuits)"
    ]
    for cable in document["cables"]:
        out.append(
            f"  {cable['cable']}: {cable['access']} access, mark {metres(cable['mark_m'])}"
            f" (A toward {cable['toward_a']}, B toward {cable['toward_b']})"
        )
    live = [s for s in document["strands"] if s["live"]]
    if live:
        out += ["", "LIVE STRANDS - active service passes here:"]
        out.append(
            format_table(
                ["", "strand", "colours", "state", "splice", "circuits"],
                [
                    ["***", s["address"], s["colours"], s["state"], _splices(s), _circuits(s)]
                    for s in live
                ],
            )
        )
    for cable, strands in groupby(document["strands"], key=lambda s: s["cable"]):
        for unit, members in groupby(strands, key=lambda s: s["unit"]):
            ordered = sorted(members, key=lambda s: (not s["live"], s["strand"]))
            title = f"{cable}, unit {unit}" if unit else f"{cable}"
            out += ["", title]
            out.append(
                format_table(
                    ["", "strand", "colours", "state", "splice", "circuits"],
                    [
                        [
                            "LIVE" if s["live"] else "",
                            s["address"],
                            s["colours"],
                            s["state"],
                            _splices(s),
                            _circuits(s),
                        ]
                        for s in ordered
                    ],
                )
            )
    out += _untraced(document)
    out.append(_caution(document["caution"]))
    return "\n".join(out)


def impact_text(document: dict[str, Any]) -> str:
    summary = document["summary"]
    out = [
        f"cut at {document['kind']} {document['target']}: {len(document['cables'])} cable(s),"
        f" {document['strands']} strands; {summary['circuits']} circuit(s), "
        f"{summary['active']} active",
        "cables: " + (", ".join(document["cables"]) or "none"),
    ]
    if document["circuits"]:
        out.append(
            format_table(
                ["circuit", "status", "kind", "A end", "Z end", "customer"],
                [
                    [
                        c["label"],
                        _status(c),
                        c["kind"],
                        c["a"],
                        c["z"] or "",
                        c["customer"] or "",
                    ]
                    for c in document["circuits"]
                ],
            )
        )
    out += _untraced(document)
    out.append(_caution(document["caution"]))
    return "\n".join(out)


def locate_text(document: dict[str, Any]) -> str:
    where = document["from"]
    if document["in_slack_at"]:
        place = f"inside the slack coil at {document['in_slack_at']}"
    else:
        place = (
            f"between {document['between'][0]} and {document['between'][1]}, "
            f"{metres(where['distance_m'])} m from {where['structure']}"
        )
    mark = document["sheath_mark_m"]
    low, high = document["range_m"]
    marks = document["range_marks_m"]
    out = [
        f"OTDR at {document['port']}: {metres(document['distance_m'])} m at "
        f"{document['wavelength_nm']} nm"
        + (f", index setting {document['otdr_index']}" if document["otdr_index"] else ""),
        f"cable {document['cable']} strand {document['strand']}, sheath mark "
        f"{metres(mark) if mark is not None else 'unknown (marks missing)'}",
        f"{place}",
        f"position {document['lat']:.6f}, {document['lon']:.6f} (lat, lon)",
        f"range {metres(low)}-{metres(high)} m from the port"
        + (f" (sheath marks {metres(marks[0])}-{metres(marks[1])})" if None not in marks else ""),
        f"uncertainty: {document['uncertainty']['explained']}",
    ]
    if document.get("note"):
        out.append(f"note: {document['note']}")
    out.append(_caution(document["caution"]))
    return "\n".join(out)
