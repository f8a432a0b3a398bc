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


def median_time(
    action: Callable[[], Any],
    repeat: int,
    warmup: int = 1,
    between: Callable[[], Any] | None = None,
) -> float:
    """Median wall time of `action` over `repeat` runs, after `warmup` untimed runs.

    `between` runs untimed after every run (to undo a write, for instance).
    """
    samples = []
    for i in range(warmup + repeat):
        started = time.perf_counter()
        action()
        elapsed = time.perf_counter() - started
        if between is not None:
            between()
        if i >= warmup:
            samples.append(elapsed)
    return statistics.median(samples)
