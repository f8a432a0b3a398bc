"""Hypothesis strategies for hostile input: JSON-ish values, and one-step mutations of a valid
document (a value replaced, a key dropped or added, an item doubled, a label swapped)."""

from __future__ import annotations

import copy
from typing import Any

from hypothesis import strategies as st

Path = tuple[str | int, ...]

SCALARS = (
    st.none()
    | st.booleans()
    | st.integers(min_value=-(2**70), max_value=2**70)
    | st.floats()  # NaN and the infinities included
    | st.text(max_size=20)
    | st.sampled_from(["", " ", "0", "-1", "1e309", "NaN", "<b>", ":", "CBL-1:1", "x" * 300])
)
JSON = st.recursive(
    SCALARS,
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=10), inner),
    max_leaves=12,
)


def paths(document: Any, here: Path = ()) -> list[Path]:
    """Every place in a JSON document: each key of each object and each item of each list."""
    found: list[Path] = [here]
    if isinstance(document, dict):
        for key, value in document.items():
            found += paths(value, (*here, key))
    elif isinstance(document, list):
        for index, value in enumerate(document):
            found += paths(value, (*here, index))
    return found


def _holder(document: Any, path: Path) -> Any:
    for step in path[:-1]:
        document = document[step]
    return document


def mutate(document: Any, path: Path, operation: str, value: Any) -> Any:
    """A copy of `document` changed at `path` by `operation` (using `value` where one is put)."""
    changed = copy.deepcopy(document)
    if not path:
        return value if operation == "replace" else changed
    holder, last = _holder(changed, path), path[-1]
    if operation == "replace":
        holder[last] = value
    elif operation == "drop":
        del holder[last]
    elif operation == "double" and isinstance(holder, list):
        holder.insert(int(last), copy.deepcopy(holder[int(last)]))
    elif operation == "add_key" and isinstance(holder[last], dict):
        holder[last][str(value)[:20] or "extra"] = value
    elif operation == "to_text" and not isinstance(holder[last], dict | list):
        holder[last] = str(holder[last])
    elif operation == "swap_label" and isinstance(value, str):
        # Another item's label (or the same text in another letter case): duplicates,
        # references that point at the wrong kind of thing.
        holder[last] = value
    return changed


OPERATIONS = st.sampled_from(
    ["replace", "drop", "double", "add_key", "to_text", "swap_label", "nudge", "nudge", "nudge"]
)


def _nudged(value: Any, labels: list[str]) -> st.SearchStrategy[Any]:
    if isinstance(value, bool):
        return st.booleans()
    if isinstance(value, int):
        return st.sampled_from([0, 1, -1, 2, 12, 13, 24, 25, 1000, 2**31, value + 1, value - 1])
    if isinstance(value, float):
        return st.floats(min_value=-1e6, max_value=1e7) | st.sampled_from([0.0, -0.0, 1e-9])
    if isinstance(value, str):
        return st.sampled_from(labels) | st.sampled_from(
            [value + "x", value.upper(), f"{value}:1", f"{value}/A", "1-2", "99", "in", "9/9"]
        )
    return st.just(copy.deepcopy(value))


@st.composite
def mutations(draw: st.DrawFn, document: Any, labels: list[str]) -> Any:
    """One to three mutations of `document`."""
    changed = document
    for _ in range(draw(st.integers(1, 3))):
        places = paths(changed)[1:]  # not the whole document: JSON covers that
        if not places:
            break
        path = draw(st.sampled_from(places))
        operation = draw(OPERATIONS)
        current = _holder(changed, path)[path[-1]]
        if operation == "swap_label":
            label = draw(st.sampled_from(labels))
            value: Any = draw(st.sampled_from([label, label.lower(), label + " "]))
        elif operation == "nudge":
            # A value of the same kind, so the shape check passes and the loader's own rules
            # (references, marks, counts, slots) meet it.
            value, operation = draw(_nudged(current, labels)), "replace"
        else:
            value = draw(JSON)
        changed = mutate(changed, path, operation, value)
    return changed


def labels_of(document: Any) -> list[str]:
    """Every "label" and "name" value in a document."""
    found: list[str] = []
    if isinstance(document, dict):
        for key, value in document.items():
            if key in ("label", "name") and isinstance(value, str):
                found.append(value)
            found += labels_of(value)
    elif isinstance(document, list):
        for value in document:
            found += labels_of(value)
    return found
