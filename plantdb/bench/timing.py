"""Medians of repeated runs after a warm-up, and the result rows of the benchmark table."""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable
from dataclasses import asdict, dataclass
from typing import Any


@dataclass
class Result:
    name: str
    what: str
    median_s: float
    baseline_median_s: float | None
    target_ratio: float | None
    target_s: float | None
    n: int

    @property
    def ratio(self) -> float | None:
        if self.baseline_median_s is None or self.baseline_median_s <= 0:
            return None
        return self.median_s / self.baseline_median_s

    @property
    def meets(self) -> bool | None:
        """Whether the targets hold (time only where the suite runs at the targets' size)."""
        ok = True
        if self.target_ratio is not None and self.ratio is not None:
            ok = ok and self.ratio <= self.target_ratio
        return ok

    def to_json(self) -> dict[str, Any]:
        document = asdict(self)
        document["ratio"] = self.ratio
        return document


def median_times(
    action: Callable[[], Any],
    baseline: Callable[[], Any] | None,
    repeat: int,
    warmup: int = 1,
    between: Callable[[], Any] | None = None,
    least_s: float = 1.0,
    most: int = 200,
) -> tuple[float, float | None]:
    """Median wall times of `action` and of its `baseline`, run in turn after a warm-up.

    Taking them in turn, one of each per round, lets whatever else the machine is doing
    weigh on both alike, so their ratio holds steadier than their times. At least `repeat`
    rounds, and more (up to `most`) while the rounds so far took under `least_s`: a median
    of seven runs of a millisecond says little. `between` runs untimed after every run (to
    undo a write, for instance).
    """
    timed: list[float] = []
    base: list[float] = []
    rounds = 0
    spent = 0.0
    while rounds < warmup + repeat or (spent < least_s and rounds < warmup + most):
        elapsed = _timed(action, between)
        other = _timed(baseline, between) if baseline is not None else 0.0
        if rounds >= warmup:
            timed.append(elapsed)
            base.append(other)
            spent += elapsed + other
        rounds += 1
    return statistics.median(timed), statistics.median(base) if baseline is not None else None


def _timed(action: Callable[[], Any], between: Callable[[], Any] | None) -> float:
    started = time.perf_counter()
    action()
    elapsed = time.perf_counter() - started
    if between is not None:
        between()
    return elapsed


# name: (what is measured, target ratio to its baseline, target time at 1M strands here)
TARGETS: dict[str, tuple[str, float | None, float]] = {
    "trace": ("trace + loss of the longest circuit", 10.0, 0.010),
    "import": ("import a 100,000-splice sheet, validated, committed", 15.0, 10.0),
    "live": ("live through the busiest closure", 20.0, 0.100),
    "impact": ("cut impact of the busiest span", 20.0, 0.200),
    "map": ("map GeoJSON for a 2 km x 2 km viewport", 10.0, 0.200),
    "page": ("the busiest closure's HTML page via the test client", None, 0.300),
}
