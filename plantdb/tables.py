"""Plain-text tables for the command line: columns sized to their contents."""

from __future__ import annotations

from collections.abc import Sequence


def format_table(
    headers: Sequence[str], rows: Sequence[Sequence[object]], right: Sequence[int] = ()
) -> str:
    """A table with a header rule; columns in `right` are right-aligned (numbers)."""
    cells = [[str(h) for h in headers]] + [["" if c is None else str(c) for c in r] for r in rows]
    widths = [max(len(row[i]) for row in cells) for i in range(len(headers))]

    def line(row: list[str]) -> str:
        parts = [
            row[i].rjust(widths[i]) if i in right else row[i].ljust(widths[i])
            for i in range(len(headers))
        ]
        return "  ".join(parts).rstrip()

    rule = "  ".join("-" * w for w in widths)
    return "\n".join([line(cells[0]), rule, *(line(r) for r in cells[1:])])


def metres(value: float | None) -> str:
    return "" if value is None else f"{value:,.1f}"


def decibels(value: float | None) -> str:
    """Losses print to 0.01 dB (the JSON keeps them exact)."""
    return "" if value is None else f"{value:.2f}"
