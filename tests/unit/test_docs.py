"""The documentation is kept true: each check fails when the code grows past what the docs say.

- docs/cli.md is exactly what docs/tools/cli_reference.py prints from the commands' --help;
- README.md shows every command;
- docs/interface.md names every field of the JSON documents in the interface;
- docs/bundle.md lists every bundle section and item key, each marked required or not as the
  loader's schema says, and nothing the schema does not know;
- docs/loss-method.md lists every catalogue value with its value and grade.

Files are read from the repository this test lives in (two folders up), nothing else.
"""

from __future__ import annotations

import importlib.util
import itertools
import math
import re
from collections.abc import Callable, Iterator, Mapping
from pathlib import Path
from types import ModuleType
from typing import Any

import click
import pytest

from plantdb import catalogue
from plantdb.cli import cli
from plantdb.records.bundle_schema import SECTIONS

ROOT = Path(__file__).resolve().parents[2]

# The fields each JSON document carries by the interface (see docs/interface.md).
DOCUMENT_FIELDS: Mapping[str, tuple[str, ...]] = {
    "trace": (
        "start", "paths", "elements", "end", "kind", "label", "at", "cable", "strand",
        "from_station", "to_station", "length_m",
    ),
    "loss": (
        "target", "wavelengths", "max_db", "typical_db", "items", "counts", "splices",
        "connector_pairs", "splitters", "length_m",
    ),
    "live": ("closure", "strands", "address", "colours", "state", "circuits"),
    "impact": ("target", "cables", "strands", "circuits", "label", "status", "a", "z", "customer"),
    "locate": (
        "cable", "sheath_mark_m", "between", "from", "structure", "distance_m", "lon", "lat",
        "in_slack_at", "range_m",
    ),
    "check": ("ok", "circuits_checked", "problems", "notices", "kind", "what", "where"),
}  # fmt: skip


def read(name: str) -> str:
    path = ROOT / name
    assert path.is_file(), f"{name} is missing from the repository"
    return path.read_text(encoding="utf-8")


def section(text: str, heading: str) -> str:
    """The text under the markdown heading line `heading`, up to the next heading of its level
    or above."""
    lines = text.splitlines()
    level = len(heading) - len(heading.lstrip("#"))
    try:
        start = next(i for i, line in enumerate(lines) if line.strip() == heading)
    except StopIteration:
        pytest.fail(f"no heading {heading!r}")
    body = []
    for line in lines[start + 1 :]:
        match = re.match(r"^(#+) ", line)
        if match and len(match.group(1)) <= level:
            break
        body.append(line)
    return "\n".join(body)


def table_rows(text: str) -> Iterator[list[str]]:
    """The cells of every markdown table body row in `text` (header and rule rows skipped)."""
    previous: list[str] | None = None
    for line in [*text.splitlines(), ""]:
        stripped = line.strip()
        cells = [c.strip() for c in stripped.strip("|").split("|")]
        is_row = stripped.startswith("|")
        if is_row and all(c and set(c) <= set("-: ") for c in cells):
            previous = None  # the rule under a header: the header row is dropped
            continue
        if previous is not None:
            yield previous
        previous = cells if is_row else None


def mentions(text: str, field: str) -> bool:
    """True when `field` appears in backticks, alone or as the last part of a dotted path
    such as `paths[].elements`."""
    return re.search(rf"`(?:[\w\[\]*.]+\.)?{re.escape(field)}`", text) is not None


# -- the command-line reference ------------------------------------------------------------


def _cli_reference_module() -> ModuleType:
    path = ROOT / "docs" / "tools" / "cli_reference.py"
    spec = importlib.util.spec_from_file_location("cli_reference", path)
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_the_cli_reference_is_generated_from_the_current_commands() -> None:
    expected = _cli_reference_module().reference(cli)
    assert read("docs/cli.md") == expected, (
        "docs/cli.md is out of date with the commands' --help: run `make docs`"
    )


def _command_names(group: click.Group, prefix: str = "plantdb") -> Iterator[str]:
    context = click.Context(group, info_name=prefix)
    for name in group.list_commands(context):
        command = group.get_command(context, name)
        if command is None or command.hidden:
            continue
        yield f"{prefix} {name}"
        if isinstance(command, click.Group):
            yield from _command_names(command, f"{prefix} {name}")


def test_the_reference_covers_nested_commands() -> None:
    names = list(_command_names(cli))
    assert "plantdb import splices" in names and "plantdb export splices" in names
    reference = read("docs/cli.md")
    for name in names:
        assert f"## {name}\n" in reference, f"docs/cli.md has no section for {name}"


def test_the_readme_shows_every_command() -> None:
    readme = read("README.md")
    missing = [name for name in _command_names(cli) if f"`{name}" not in readme]
    assert not missing, f"README.md never shows {', '.join(missing)} (in backticks)"


# -- the interface's JSON documents ---------------------------------------------------------


@pytest.mark.parametrize("document", sorted(DOCUMENT_FIELDS))
def test_every_field_of_each_json_document_is_documented(document: str) -> None:
    text = section(read("docs/interface.md"), f"### `{document}`")
    missing = [f for f in DOCUMENT_FIELDS[document] if not mentions(text, f)]
    assert not missing, f"docs/interface.md, `{document}`: no mention of {missing}"


def test_the_documented_exit_statuses_are_those_of_the_command() -> None:
    text = section(read("docs/interface.md"), "## Exit status")
    statuses = {cells[0].strip("`") for cells in table_rows(text)}
    assert statuses == {"0", "1", "2"}


# -- the bundle format ---------------------------------------------------------------------

Check = Callable[[Any, str], list[str]]


def _fields_of(check: Check) -> dict[str, tuple[Check, bool]] | None:
    """The {key: (check, required)} an object check closes over, found through nested
    checks (optional, list-of, per-wavelength wrappers), or None for a plain value."""
    for cell in check.__closure__ or ():
        value = cell.cell_contents
        if (
            isinstance(value, dict)
            and value
            and all(
                isinstance(v, tuple) and len(v) == 2 and isinstance(v[1], bool)
                for v in value.values()
            )
        ):
            return value
    for cell in check.__closure__ or ():
        value = cell.cell_contents
        if callable(value) and getattr(value, "__closure__", None):
            found = _fields_of(value)
            if found is not None:
                return found
    return None


def schema_keys(check: Check, prefix: str = "") -> dict[str, bool]:
    """Dotted key -> required, for every key of an item and of the objects nested in it."""
    keys: dict[str, bool] = {}
    for key, (inner, required) in (_fields_of(check) or {}).items():
        keys[prefix + key] = required
        keys.update(schema_keys(inner, f"{prefix}{key}."))
    return keys


def documented_keys(section_name: str) -> dict[str, bool]:
    """Dotted key -> required, from the key table under the section's heading."""
    text = section(read("docs/bundle.md"), f"### `{section_name}`")
    keys: dict[str, bool] = {}
    for cells in table_rows(text):
        match = re.fullmatch(r"`([\w.]+)`", cells[0])
        if match is None or len(cells) < 2:
            continue
        required = cells[1].lower()
        assert required in ("yes", "no"), f"{section_name}.{match.group(1)}: {cells[1]!r}"
        keys[match.group(1)] = required == "yes"
    return keys


def test_the_schema_walk_finds_nested_keys() -> None:
    """The introspection below must see nested objects, or the doc check would be hollow."""
    cables = schema_keys(SECTIONS["cables"])
    assert cables["construction.kind"] is True
    assert cables["stations.mark_m"] is False
    assert cables["slack.length_m"] is True
    assert "attenuation_db_per_km.max" in schema_keys(SECTIONS["fiber_types"])


@pytest.mark.parametrize("section_name", sorted(SECTIONS))
def test_every_bundle_key_is_documented_as_the_schema_has_it(section_name: str) -> None:
    expected = schema_keys(SECTIONS[section_name])
    documented = documented_keys(section_name)
    assert set(documented) == set(expected), (
        f"docs/bundle.md `{section_name}`: undocumented {sorted(set(expected) - set(documented))},"
        f" unknown to the loader {sorted(set(documented) - set(expected))}"
    )
    wrong = [k for k in expected if documented[k] != expected[k]]
    assert not wrong, f"docs/bundle.md `{section_name}`: required column wrong for {wrong}"


def test_the_bundle_doc_has_no_section_the_loader_lacks() -> None:
    headings = re.findall(r"^### `(\w+)`$", read("docs/bundle.md"), flags=re.MULTILINE)
    assert sorted(headings) == sorted(SECTIONS)


# -- the catalogue -------------------------------------------------------------------------


def _expand(name: str) -> list[str]:
    """`{A,B}.x` -> [`A.x`, `B.x`]: the doc lists classes with equal values on one row."""
    parts = re.split(r"\{([^{}]*)\}", name)
    choices = [[p] if i % 2 == 0 else p.split(",") for i, p in enumerate(parts)]
    return ["".join(c.strip() for c in combo) for combo in itertools.product(*choices)]


def documented_catalogue() -> dict[str, tuple[str, str]]:
    """Catalogue name -> (value cell, grade cell) from the loss method's value tables."""
    text = section(read("docs/loss-method.md"), "## Every default value")
    found: dict[str, tuple[str, str]] = {}
    for cells in table_rows(text):
        match = re.fullmatch(r"`([^`]+)`", cells[0])
        if match is None:
            continue
        for name in _expand(match.group(1)):
            assert name not in found, f"{name} is listed twice in docs/loss-method.md"
            found[name] = (cells[1], cells[2])
    return found


def test_every_catalogue_value_is_in_the_loss_method_with_its_value_and_grade() -> None:
    documented = documented_catalogue()
    entries = dict(catalogue.all_entries())
    problems = []
    for name, entry in entries.items():
        if name not in documented:
            problems.append(f"{name}: missing")
            continue
        value, grade = documented[name]
        if not math.isclose(float(value), entry.value, rel_tol=0, abs_tol=1e-9):
            problems.append(f"{name}: doc says {value}, catalogue {entry.value}")
        if grade != entry.grade:
            problems.append(f"{name}: doc grades it {grade}, catalogue {entry.grade}")
    problems += [f"{name}: not in the catalogue" for name in set(documented) - set(entries)]
    assert not problems, "docs/loss-method.md disagrees with plantdb/catalogue.py:\n" + "\n".join(
        problems
    )
