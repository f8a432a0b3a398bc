"""The shape of a synthetic city plant of about N strands: sizes, grid, labels, geometry.

The city is a street grid. Each trunk runs along its own street: huts at both ends with
patch panels, a chain of K cables of F strands (two blocks each) joined end to end in joint
closures where every strand is spliced through, and a mid-span access in the middle of every
cable where one strand is cut and feeds a 1xD splitter. The splitter's legs run up a side
street in a distribution cable to a closure where each is spliced to a drop to a customer's
premises. A few trunks are left unbuilt (joints not yet spliced) for a splice-sheet import.
Backbone circuits run the whole trunk (about 2K elements); customer circuits run from the
OLT at the west hut through k joints to the k-th splitter and on to the premises.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

BLOCK_M = 120.0
ORIGIN = (0.30, 0.30)  # open water in the Gulf of Guinea: no real town is implied
M_PER_DEG = 111_195.0


@dataclass(frozen=True)
class Plan:
    """Sizes derived from the target strand count."""

    fibers: int
    seed: int
    trunk_strands: int  # F
    cables_per_trunk: int  # K
    drops_per_splitter: int  # D
    distribution_strands: int
    drop_strands: int
    built: int
    unbuilt: int

    @property
    def trunks(self) -> int:
        return self.built + self.unbuilt

    @property
    def columns(self) -> int:
        """Intersections along a trunk street: two blocks per cable."""
        return 2 * self.cables_per_trunk + 1

    @property
    def strands_per_built_trunk(self) -> int:
        k, d = self.cables_per_trunk, self.drops_per_splitter
        return k * (self.trunk_strands + self.distribution_strands + d * self.drop_strands)

    @property
    def backbone_strands(self) -> int:
        """Strands 1..this run end to end; the last K feed one splitter each."""
        return self.trunk_strands - self.cables_per_trunk


def make_plan(fibers: int, seed: int = 1) -> Plan:
    """Pick sizes so the plant holds about `fibers` strands (at least one trunk)."""
    if fibers < 500:
        raise ValueError(f"a synthetic plant needs at least 500 strands, not {fibers}")
    if fibers >= 500_000:
        f, k, d, dist = 288, 50, 8, 48
    elif fibers >= 50_000:
        f, k, d, dist = 144, 30, 8, 48
    elif fibers >= 5_000:
        f, k, d, dist = 48, 12, 8, 12
    else:
        f, k, d, dist = 24, 6, 4, 12
    drop = 12
    per_built = k * (f + dist + d * drop)
    # A tenth of the strands lie in unbuilt trunks, whose joints a splice sheet will fill.
    unbuilt = max(1, round(0.1 * fibers / (k * f)))
    built = max(1, round((fibers - unbuilt * k * f) / per_built))
    return Plan(fibers, seed, f, k, d, dist, drop, built, unbuilt)


def to_lonlat(east_m: float, north_m: float) -> list[float]:
    lat = ORIGIN[1] + north_m / M_PER_DEG
    lon = ORIGIN[0] + east_m / (M_PER_DEG * math.cos(math.radians(ORIGIN[1])))
    return [round(lon, 7), round(lat, 7)]


def grid_point(row: int, column: int) -> tuple[float, float]:
    """Metres east and south-to-north of the intersection (row counts southward)."""
    return column * BLOCK_M, -row * BLOCK_M


# Labels: one scheme, so a benchmark or a test can name things without asking the database.
def structure_label(row: int, column: int) -> str:
    return f"X{row:04d}-{column:03d}"


def trunk_cable(t: int, k: int) -> str:
    return f"T{t:03d}-C{k:02d}"


def joint(t: int, k: int) -> str:
    """The closure where trunk cable k meets cable k + 1."""
    return f"T{t:03d}-J{k:02d}"


def mid_closure(t: int, k: int) -> str:
    return f"T{t:03d}-M{k:02d}"


def west_panel(t: int) -> str:
    return f"T{t:03d}-WP"


def east_panel(t: int) -> str:
    return f"T{t:03d}-EP"
