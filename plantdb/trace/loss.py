"""Expected loss of a traced path, itemised, on two bases, per wavelength.

Counted exactly as the interface document says, so two people get the same figure:
1. each fiber piece: its fiber type's coefficient at that wavelength and basis x length in km;
2. each splice, each fiber of a mass-fusion splice and each pigtail-spliced termination: the
   splice allowance (maximum basis: 0.3 dB, ANSI/TIA-568.3-D) or, typical basis, the splice's
   measured loss where recorded, else the catalogue's typical value for its method;
3. one mated connector pair for every panel port the path passes through or ends on (none at
   an equipment port: the transceiver's interface belongs to its optics budget);
4. each splitter passed: its recorded loss, else the catalogue's for its ratio and basis;
5. nothing else unless a margin is asked for.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Any

from plantdb import catalogue
from plantdb.errors import RecordsError
from plantdb.trace.elements import Element, TracedPath
from plantdb.trace.reader import PlantReader

BASES = ("max", "typical")


@dataclass(frozen=True)
class LossOptions:
    """What the user may set: wavelengths, allowance overrides, a margin."""

    wavelengths: tuple[int, ...] = ()
    splice_max_db: float | None = None
    splice_typical_db: float | None = None
    connector_max_db: float | None = None
    connector_typical_db: float | None = None
    margin_db: float = 0.0


@dataclass(frozen=True)
class Allowance:
    value: float
    source: str


class LossCounter:
    """Turns path elements into loss items, looking values up once per fiber type."""

    def __init__(self, reader: PlantReader, options: LossOptions) -> None:
        self.reader = reader
        self.options = options
        self._fiber: dict[tuple[int, int, str], Allowance] = {}

    # -- per-kind allowances -----------------------------------------------------------
    def fiber(self, fiber_type_id: int, nm: int, basis: str) -> Allowance:
        key = (fiber_type_id, nm, basis)
        if key not in self._fiber:
            self._fiber[key] = self._fiber_value(fiber_type_id, nm, basis)
        return self._fiber[key]

    def _fiber_value(self, fiber_type_id: int, nm: int, basis: str) -> Allowance:
        name, _mode, standard = self.reader.fiber_mode(fiber_type_id)
        values = self.reader.fiber_values(fiber_type_id, nm)
        recorded = values[0] if basis == "max" else values[1]
        if recorded is not None:
            return Allowance(recorded, f"fiber type {name} (record), {basis} at {nm} nm")
        if standard:
            try:
                value = catalogue.attenuation(standard, nm, basis)
            except catalogue.CatalogueLookupError:
                pass
            else:
                return Allowance(
                    value.value,
                    f"catalogue {standard} {basis} at {nm} nm: {value.source} ({value.grade})",
                )
        raise RecordsError(
            f"fiber type {name} has no {basis} attenuation at {nm} nm, and its standard"
            f" ({standard or 'none'}) gives none in the catalogue"
        )

    def splice(self, method: str, measured: float | None, basis: str) -> Allowance:
        if basis == "max":
            if self.options.splice_max_db is not None:
                return Allowance(self.options.splice_max_db, "splice allowance given by user")
            return _sourced(catalogue.SPLICE_MAX)
        if measured is not None:
            return Allowance(measured, "measured")
        if self.options.splice_typical_db is not None:
            return Allowance(self.options.splice_typical_db, "typical splice given by user")
        return _sourced(catalogue.splice_loss(method, "typical"))

    def connector(self, basis: str) -> Allowance:
        given = (
            self.options.connector_max_db if basis == "max" else self.options.connector_typical_db
        )
        if given is not None:
            return Allowance(given, f"connector pair {basis} given by user")
        return _sourced(catalogue.connector_pair_loss(basis))

    def splitter(self, ratio: str, recorded: float | None, label: str, basis: str) -> Allowance:
        if recorded is not None:
            return Allowance(recorded, f"splitter {label} (record)")
        try:
            return _sourced(catalogue.splitter_loss(ratio, basis))
        except catalogue.CatalogueLookupError as exc:
            raise RecordsError(f"splitter {label}: no recorded loss, and {exc}") from exc

    # -- items -------------------------------------------------------------------------
    def items(self, element: Element, nm: int) -> list[dict[str, Any]]:
        """The loss items one element contributes at one wavelength (both bases)."""
        if element.kind == "fiber":
            km = element.fields["length_m"] / 1000.0
            per = {b: self.fiber(element.refs["fiber_type_id"], nm, b) for b in BASES}
            return [
                _item(
                    "fiber",
                    element,
                    per,
                    scale=km,
                    length_m=element.fields["length_m"],
                    coefficient={b: per[b].value for b in BASES},
                )
            ]
        if element.kind == "splice":
            per = {
                b: self.splice(element.refs["method"], element.refs["loss_db"], b) for b in BASES
            }
            return [_item("splice", element, per, method=element.refs["method"])]
        if element.kind == "splitter":
            per = {
                b: self.splitter(element.refs["ratio"], element.refs["loss_db"], element.label, b)
                for b in BASES
            }
            return [_item("splitter", element, per, ratio=element.refs["ratio"])]
        if element.kind == "port":
            found = [_item("connector_pair", element, {b: self.connector(b) for b in BASES})]
            if element.refs.get("termination") == "pigtail_splice":
                per = {b: self.splice("fusion", None, b) for b in BASES}
                found.append(
                    _item(
                        "splice",
                        element,
                        per,
                        method="pigtail_splice",
                        label=f"pigtail splice at {element.label}",
                    )
                )
            return found
        return []


@lru_cache(maxsize=256)
def _sourced(value: catalogue.Sourced) -> Allowance:
    # A long path asks for the same few catalogue values hundreds of times: made once each.
    return Allowance(value.value, f"catalogue: {value.source} ({value.grade})")


def _item(
    kind: str,
    element: Element,
    per: dict[str, Allowance],
    scale: float = 1.0,
    label: str | None = None,
    **extra: Any,
) -> dict[str, Any]:
    item: dict[str, Any] = {"kind": kind, "label": label or element.label, "at": element.at}
    item.update(extra)
    for basis in BASES:
        item[f"{basis}_db"] = per[basis].value * scale
        item[f"{basis}_source"] = per[basis].source
    return item


def path_mode(reader: PlantReader, path: TracedPath) -> str:
    """The path's fiber mode; a path mixing single-mode and multimode is a records error."""
    modes: dict[str, str] = {}
    for element in path.elements:
        if element.kind == "fiber":
            _name, mode, _standard = reader.fiber_mode(element.refs["fiber_type_id"])
            modes.setdefault(mode, element.fields["cable"])
    if len(modes) > 1:
        where = " and ".join(f"{cable} ({mode})" for mode, cable in modes.items())
        raise RecordsError(f"the path mixes single-mode and multimode fiber: {where}")
    return next(iter(modes), "single-mode")


def wavelengths_for(mode: str, asked: tuple[int, ...]) -> tuple[int, ...]:
    """The wavelengths to count: those asked (checked against the mode), else the defaults."""
    supported = catalogue.SUPPORTED_WAVELENGTHS[mode]
    for nm in asked:
        if nm not in supported:
            choices = ", ".join(map(str, supported))
            raise RecordsError(f"{nm} nm is not a {mode} test wavelength here (use {choices})")
    return asked or tuple(catalogue.DEFAULT_WAVELENGTHS[mode])


def count_path(counter: LossCounter, path: TracedPath, nm: int) -> dict[str, Any]:
    """Totals and items of one path at one wavelength."""
    items = [item for element in path.elements for item in counter.items(element, nm)]
    margin = counter.options.margin_db
    if margin:
        items.append(
            {
                "kind": "margin",
                "label": "margin asked for",
                "at": None,
                "max_db": margin,
                "typical_db": margin,
                "max_source": "user",
                "typical_source": "user",
            }
        )
    return {
        "max_db": sum(i["max_db"] for i in items),
        "typical_db": sum(i["typical_db"] for i in items),
        "items": items,
    }


def path_counts(path: TracedPath) -> dict[str, int]:
    """How many splices (pigtails and each mass-fusion fiber included), pairs and splitters."""
    ports = [e for e in path.elements if e.kind == "port"]
    pigtails = sum(1 for e in ports if e.refs.get("termination") == "pigtail_splice")
    return {
        "splices": pigtails + sum(1 for e in path.elements if e.kind == "splice"),
        "connector_pairs": len(ports),
        "splitters": sum(1 for e in path.elements if e.kind == "splitter"),
    }
