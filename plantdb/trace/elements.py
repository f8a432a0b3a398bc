"""The steps of a traced path: ports, jumpers, fiber pieces, splices, splitters, equipment.

Each element carries the contract's fields for its JSON form and, beside them, the ids that
loss, circuits and the dispatcher answers need. A path walked backwards is flipped element by
element so that "from" and "to" always read in the path's own direction.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

# Pairs of fields that swap when an element is read in the other direction.
_DIRECTIONAL = (
    ("from_station", "to_station"),
    ("from_structure", "to_structure"),
    ("from_end", "to_end"),
    ("from_mark_m", "to_mark_m"),
    ("from_port", "to_port"),
    ("from_leg", "to_leg"),
)


@dataclass(frozen=True)
class Element:
    """One step of a path: its contract fields (`fields`) and its ids (`refs`)."""

    kind: str  # port | jumper | fiber | splice | splitter | equipment
    label: str
    at: str  # structure label
    fields: dict[str, Any] = field(default_factory=dict)
    refs: dict[str, Any] = field(default_factory=dict)

    def flipped(self) -> Element:
        """The same element read in the opposite direction."""
        fields = dict(self.fields)
        for one, other in _DIRECTIONAL:
            if one in fields or other in fields:
                fields[one], fields[other] = self.fields.get(other), self.fields.get(one)
        if "expresses_through" in fields:
            fields["expresses_through"] = list(reversed(fields["expresses_through"]))
        refs = dict(self.refs)
        if "from_seq" in refs:
            refs["from_seq"], refs["to_seq"] = self.refs["to_seq"], self.refs["from_seq"]
        return replace(self, fields=fields, refs=refs)

    def to_json(self) -> dict[str, Any]:
        document = {"kind": self.kind, "label": self.label, "at": self.at}
        document.update({k: v for k, v in self.fields.items() if v is not None})
        return document


@dataclass(frozen=True)
class PathEnd:
    """Where a walk stopped: `equipment`, `open_port` or `dead_end`, and the address there."""

    kind: str
    at: str

    def to_json(self) -> dict[str, str]:
        return {"kind": self.kind, "at": self.at}


@dataclass
class TracedPath:
    """A path from one end reached to the other."""

    elements: list[Element]
    begin: PathEnd
    end: PathEnd

    def reversed(self) -> TracedPath:
        return TracedPath([e.flipped() for e in reversed(self.elements)], self.end, self.begin)

    @property
    def length_m(self) -> float:
        return sum(e.fields["length_m"] for e in self.elements if e.kind == "fiber")

    def to_json(self) -> dict[str, Any]:
        return {
            "begin": self.begin.to_json(),
            "elements": [e.to_json() for e in self.elements],
            "end": self.end.to_json(),
            "length_m": self.length_m,
        }
