"""One trunk of the synthetic city: its streets, cables, joints, splitters, drops, circuits."""

from __future__ import annotations

from typing import Any

from seed_data import synth_plan as sp
from seed_data.synth import FIBER_TYPE, Cable, Synth

STATUSES = (("active", 0.82), ("reserved", 0.07), ("out_of_service", 0.04), ("planned", 0.07))


def write_fiber_type(synth: Synth) -> None:
    # ANSI/TIA-568.3-D outside-plant maximum 0.5 dB/km (seen); typical 0.35 / 0.22 (trade);
    # group index 1.4677 / 1.4682 from a fiber datasheet (seen).
    synth.writer.write(
        "fiber_type",
        ("id", "name", "mode", "standard"),
        [(FIBER_TYPE, "SYN-G652D", "single-mode", "ITU-T G.652.D")],
    )
    synth.writer.write(
        "fiber_type_wavelength",
        ("fiber_type_id", "wavelength_nm", "attenuation_max", "attenuation_typical", "group_index"),
        [(FIBER_TYPE, 1310, 0.5, 0.35, 1.4677), (FIBER_TYPE, 1550, 0.5, 0.22, 1.4682)],
    )


def _status(synth: Synth) -> str:
    roll, total = synth.rng.random(), 0.0
    for status, weight in STATUSES:
        total += weight
        if roll < total:
            return status
    return "active"


class Trunk:
    """Builds trunk `t` into the synthetic plant."""

    def __init__(self, synth: Synth, t: int, built: bool) -> None:
        self.s = synth
        self.t = t
        self.built = built
        self.plan = synth.plan
        self.rows = (3 * t, 3 * t + 1, 3 * t + 2)
        self.spans: dict[tuple[str, int, int], int] = {}

    def streets(self) -> None:
        r0, r1, r2 = self.rows
        last = 2 * self.plan.cables_per_trunk
        for r in self.rows:
            for c in range(last + 1):
                kind = "manhole" if r != r1 else "handhole"
                if r == r0 and c in (0, last):
                    kind = "central_office" if c == 0 and self.t % 10 == 0 else "hut"
                self.s.structure(r, c, kind)
        for r, kind in ((r0, "underground"), (r1, "aerial"), (r2, "buried")):
            for c in range(last):
                # Odd trunks' streets were drawn east to west: cables run them reversed.
                a, b = ((r, c + 1), (r, c)) if r == r0 and self.t % 2 else ((r, c), (r, c + 1))
                self.spans[("H", r, c)] = self.s.street(f"H{r:04d}-{c:03d}", kind, a, b)
        for c in range(1, last, 2):
            for r in (r0, r1):
                self.spans[("V", r, c)] = self.s.street(
                    f"V{r:04d}-{c:03d}", "underground", (r, c), (r + 1, c)
                )
        if self.t:
            for c in range(0, last + 1, 4):
                self.s.street(f"V{r0 - 1:04d}-{c:03d}", "underground", (r0 - 1, c), (r0, c))

    def trunk_cables(self) -> list[Cable]:
        t, k_max, f = self.t, self.plan.cables_per_trunk, self.plan.trunk_strands
        r0 = self.rows[0]
        s = self.s
        self.west_panel, self.west_ports = s.panel(sp.west_panel(t), s.structures[(r0, 0)], f)
        self.east_panel, self.east_ports = s.panel(
            sp.east_panel(t), s.structures[(r0, 2 * k_max)], f
        )
        self.joints = [
            s.closure(sp.joint(t, k), s.structures[(r0, 2 * k)], f) for k in range(1, k_max)
        ]
        self.mids = [
            s.closure(sp.mid_closure(t, k), s.structures[(r0, 2 * k - 1)], 24)
            for k in range(1, k_max + 1)
        ]
        kind = "ribbon" if t % 4 == 3 and f % 12 == 0 else "loose_tube"
        cables = []
        for k in range(1, k_max + 1):
            start = (None, self.west_panel) if k == 1 else (self.joints[k - 2][0], None)
            end = (None, self.east_panel) if k == k_max else (self.joints[k - 1][0], None)
            base = 1000.0 + 300 * k
            marks = [base, base + 126, base + 252]
            if k % 2:
                marks.reverse()  # sheath marks counting down along alternate cables
            spans = [
                (self.spans[("H", r0, 2 * k - 2)], bool(t % 2)),
                (self.spans[("H", r0, 2 * k - 1)], bool(t % 2)),
            ]
            stations = [
                (*start, marks[0], 0),
                (self.mids[k - 1][0], None, marks[1], 1),
                (*end, marks[2], 2),
            ]
            coil = (s.structures[(r0, 2 * k - 1)], 8.0, 1)
            cables.append(s.cable(sp.trunk_cable(t, k), f, kind, spans, stations, coil))
        for n in range(1, f + 1):
            s.terminate(cables[0].strand(n), cables[0].stations[0], "B", self.west_ports[n - 1])
            s.terminate(cables[-1].strand(n), cables[-1].stations[2], "A", self.east_ports[n - 1])
        if self.built:
            method = "mass_fusion" if kind == "ribbon" else "fusion"
            for k, (closure, trays) in enumerate(self.joints, start=1):
                left, right = cables[k - 1], cables[k]
                for n in range(1, f + 1):
                    s.splice(
                        closure,
                        trays,
                        n,
                        (left.strand(n), left.stations[2], "A"),
                        (right.strand(n), right.stations[0], "B"),
                        method,
                    )
        return cables

    def backbone_circuits(self, cables: list[Cable]) -> None:
        s, t = self.s, self.t
        count = self.plan.backbone_strands if self.built else 2
        for n in range(1, count + 1):
            status = _status(s) if self.built else "planned"
            dark = n % 3 == 0
            circuit = s.new(
                "circuit",
                f"T{t:03d}-BB{n:03d}",
                "dark_fiber" if dark else "backbone",
                status,
                self.west_ports[n - 1],
                self.east_ports[n - 1],
                f"Lessee {t:03d}-{n:03d}" if dark else None,
                "complete" if self.built else "incomplete",
                f"{sp.west_panel(t)}:{n}",
                f"{sp.east_panel(t)}:{n}",
            )
            if not self.built:
                # The joints are not spliced yet: what A reaches is the first cable's glass.
                s.new(
                    "circuit_path_item",
                    circuit,
                    0,
                    "port",
                    None,
                    None,
                    None,
                    None,
                    None,
                    None,
                    self.west_ports[n - 1],
                    None,
                )
                s.new(
                    "circuit_path_item",
                    circuit,
                    1,
                    "fiber",
                    cables[0].strand(n),
                    cables[0].id,
                    0,
                    2,
                    0,
                    2,
                    None,
                    None,
                )
                continue
            s.new(
                "circuit_path_item",
                circuit,
                0,
                "port",
                None,
                None,
                None,
                None,
                None,
                None,
                self.west_ports[n - 1],
                None,
            )
            for k, cable in enumerate(cables, start=1):
                s.new(
                    "circuit_path_item",
                    circuit,
                    2 * k - 1,
                    "fiber",
                    cable.strand(n),
                    cable.id,
                    0,
                    2,
                    0,
                    2,
                    None,
                    None,
                )
            s.new(
                "circuit_path_item",
                circuit,
                2 * len(cables),
                "port",
                None,
                None,
                None,
                None,
                None,
                None,
                self.east_ports[n - 1],
                None,
            )

    def access_points(self, cables: list[Cable]) -> None:
        """At each cable's mid-span closure, one strand feeds a splitter and its drops."""
        s, t, plan = self.s, self.t, self.plan
        r0 = self.rows[0]
        olt = s.new("equipment", f"T{t:03d}-OLT", s.structures[(r0, 0)], "olt", 3.0, -28.0)
        for k, cable in enumerate(cables, start=1):
            number = plan.backbone_strands + k
            olt_port = s.new("port", None, olt, f"1/{k}", None, None, None, None, None)
            s.jumper(olt_port, self.west_ports[number - 1])
            self._access(k, cable, number, olt_port, cables)

    def _access(
        self, k: int, cable: Cable, number: int, olt_port: int, cables: list[Cable]
    ) -> None:
        s, t, plan = self.s, self.t, self.plan
        r0, _r1, r2 = self.rows
        column, drops = 2 * k - 1, plan.drops_per_splitter
        mid_closure, mid_trays = self.mids[k - 1]
        s.new("cut", cable.strand(number), cable.stations[1])
        splitter = s.new("splitter", f"T{t:03d}-S{k:02d}", mid_closure, 1, drops)
        legs = {
            name: s.new("splitter_leg", splitter, name)
            for name in ["in"] + [str(j) for j in range(1, drops + 1)]
        }
        s.splice(
            mid_closure,
            mid_trays,
            1,
            (cable.strand(number), cable.stations[1], "A"),
            ("leg", legs["in"]),
        )
        end_closure, end_trays = s.closure(f"T{t:03d}-D{k:02d}", s.structures[(r2, column)], drops)
        dist = s.cable(
            f"T{t:03d}-DC{k:02d}",
            plan.distribution_strands,
            "loose_tube",
            [(self.spans[("V", r0, column)], False), (self.spans[("V", r0 + 1, column)], False)],
            [(mid_closure, None, 0.0, 0), (end_closure, None, 246.0, 2)],
        )
        for j in range(1, drops + 1):
            s.splice(
                mid_closure,
                mid_trays,
                j + 1,
                ("leg", legs[str(j)]),
                (dist.strand(j), dist.stations[0], "B"),
            )
            drop, port = self._drop(k, j, end_closure)
            s.splice(
                end_closure,
                end_trays,
                j,
                (dist.strand(j), dist.stations[1], "A"),
                (drop.strand(1), drop.stations[0], "B"),
            )
            self._customer(k, j, olt_port, port, splitter, cables, dist, drop)

    def _drop(self, k: int, j: int, end_closure: int) -> tuple[Cable, int]:
        s, t, plan = self.s, self.t, self.plan
        r2, column = self.rows[2], 2 * k - 1
        east, north = sp.grid_point(r2, column)
        spot = (east + (j - (plan.drops_per_splitter + 1) / 2) * 12.0, north - 45.0)
        premises = s.new(
            "structure", f"P{t:03d}-{k:02d}-{j}", "customer_premises", *sp.to_lonlat(*spot)
        )
        line = [sp.to_lonlat(east, north), sp.to_lonlat(*spot)]
        span = s.span(f"P{t:03d}-{k:02d}-{j}", "aerial", s.structures[(r2, column)], premises, line)
        panel, ports = s.panel(f"P{t:03d}-{k:02d}-{j}-NID", premises, 2)
        drop = s.cable(
            f"T{t:03d}-DR{k:02d}-{j}",
            plan.drop_strands,
            "central_core",
            [(span, False)],
            [(end_closure, None, 0.0, 0), (None, panel, 48.0, 1)],
        )
        s.terminate(drop.strand(1), drop.stations[1], "A", ports[0], "field_connector")
        return drop, ports[0]

    def _customer(
        self,
        k: int,
        j: int,
        olt_port: int,
        port: int,
        splitter: int,
        cables: list[Cable],
        dist: Cable,
        drop: Cable,
    ) -> None:
        s, t = self.s, self.t
        status = "active" if s.rng.random() < 0.9 else "planned"
        circuit = s.new(
            "circuit",
            f"T{t:03d}-CU{k:02d}-{j}",
            "customer_drop",
            status,
            olt_port,
            port,
            f"Subscriber {t:03d}-{k:02d}-{j}",
            "complete",
            f"T{t:03d}-OLT:1/{k}",
            f"P{t:03d}-{k:02d}-{j}-NID:1",
        )
        number = self.plan.backbone_strands + k
        items: list[tuple[Any, ...]] = [
            (0, "equipment", None, None, None, None, None, None, olt_port, None),
            (2, "port", None, None, None, None, None, None, self.west_ports[number - 1], None),
        ]
        for i, cable in enumerate(cables[: k - 1], start=1):
            items.append(
                (1 + 2 * i, "fiber", cable.strand(number), cable.id, 0, 2, 0, 2, None, None)
            )
        p = 3 + 2 * (k - 1)
        items += [
            (p, "fiber", cables[k - 1].strand(number), cables[k - 1].id, 0, 1, 0, 1, None, None),
            (p + 2, "splitter", None, None, None, None, None, None, None, splitter),
            (p + 4, "fiber", dist.strand(j), dist.id, 0, 1, 0, 2, None, None),
            (p + 6, "fiber", drop.strand(1), drop.id, 0, 1, 0, 1, None, None),
            (p + 7, "port", None, None, None, None, None, None, port, None),
        ]
        for item in items:
            s.new("circuit_path_item", circuit, *item)


def build_trunk(synth: Synth, t: int, built: bool) -> None:
    """Generate every row of trunk `t` into the synth's buffers."""
    trunk = Trunk(synth, t, built)
    trunk.streets()
    cables = trunk.trunk_cables()
    trunk.backbone_circuits(cables)
    if built:
        trunk.access_points(cables)
