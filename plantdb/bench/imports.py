"""The import benchmark: a splice sheet filling the joints of the synthetic plant's unbuilt
trunks, imported whole (validated, committed) and undone between runs; beside it, a raw
executemany of the same final rows."""

from __future__ import annotations

import csv
import json
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from sqlalchemy import select

from plantdb.bench.baselines import RawConnection
from plantdb.bench.timing import TARGETS, Result, median_times
from plantdb.db import Database, run_in_transaction
from plantdb.errors import PlantError
from plantdb.model import Circuit, Setting
from plantdb.records.sheet_files import read_sheet
from plantdb.records.sheet_import import import_sheet
from plantdb.trace.circuits import refresh_circuits
from seed_data import synth_plan as sp

SHEET_SPLICES = 100_000
COLUMNS = [
    "closure",
    "tray",
    "slot",
    "a_cable",
    "a_strand",
    "a_side",
    "b_cable",
    "b_strand",
    "b_side",
    "method",
    "loss_db",
    "spliced_on",
    "spliced_by",
]


@contextmanager
def _transaction(raw: RawConnection) -> Iterator[None]:
    if raw.postgres:
        with raw.connection.transaction():
            yield
        return
    raw.connection.execute("BEGIN IMMEDIATE")
    try:
        yield
    except BaseException:
        raw.connection.execute("ROLLBACK")
        raise
    raw.connection.execute("COMMIT")


class ImportBench:
    """Builds the sheet once, then times the import and the raw baseline."""

    def __init__(self, database: Database, raw: RawConnection) -> None:
        self.database = database
        self.raw = raw
        self.folder = Path(tempfile.mkdtemp(prefix="plantdb-bench-"))
        self.joints: list[tuple[str, str, str, int, str]] = []
        self.trunks: list[int] = []
        self.last_change = 0

    def _plan(self) -> sp.Plan:
        with self.database.read() as session:
            stored = session.scalar(select(Setting.value).where(Setting.key == "synth"))
        if stored is None:
            raise PlantError("the import benchmark needs a plant built by `plantdb synth`")
        settings = json.loads(stored)
        return sp.make_plan(settings["fibers"], settings["seed"])

    def _write_sheet(self) -> Path:
        plan = self._plan()
        strands = plan.trunk_strands
        for t in range(plan.built, plan.trunks):
            self.trunks.append(t)
            method = "mass_fusion" if t % 4 == 3 and strands % 12 == 0 else "fusion"
            for k in range(1, plan.cables_per_trunk):
                if len(self.joints) * strands >= SHEET_SPLICES:
                    break
                self.joints.append(
                    (
                        sp.joint(t, k),
                        sp.trunk_cable(t, k),
                        sp.trunk_cable(t, k + 1),
                        strands,
                        method,
                    )
                )
        path = self.folder / "unbuilt-joints.csv"
        with path.open("w", newline="", encoding="utf-8") as handle:
            writer = csv.writer(handle)
            writer.writerow(COLUMNS)
            for closure, left, right, count, method in self.joints:
                for n in range(1, count + 1):
                    writer.writerow(
                        [
                            closure,
                            (n - 1) // 24 + 1,
                            (n - 1) % 24 + 1,
                            left,
                            n,
                            "",
                            right,
                            n,
                            "",
                            method,
                            "",
                            "",
                            "bench",
                        ]
                    )
        return path

    def _closure_ids(self) -> list[int]:
        return [
            self.raw.query("SELECT id FROM closure WHERE label = ?", (j[0],))[0][0]
            for j in self.joints
        ]

    def _final_rows(self) -> tuple[list[tuple[Any, ...]], list[tuple[Any, ...]]]:
        """The splice and fiber-end rows the import writes (ids looked up beforehand)."""
        splices, ends = [], []
        for closure, left, right, count, method in self.joints:
            closure_id = self.raw.query("SELECT id FROM closure WHERE label = ?", (closure,))[0][0]
            trays = dict(
                self.raw.query("SELECT number, id FROM tray WHERE closure_id = ?", (closure_id,))
            )
            sides = []
            for label, seq in ((left, -1), (right, 0)):
                cable_id = self.raw.query("SELECT id FROM cable WHERE label = ?", (label,))[0][0]
                stations = self.raw.query(
                    "SELECT id FROM station WHERE cable_id = ? ORDER BY seq", (cable_id,)
                )
                numbers = dict(
                    self.raw.query("SELECT number, id FROM strand WHERE cable_id = ?", (cable_id,))
                )
                sides.append((stations[seq][0], numbers))
            for n in range(1, count + 1):
                splices.append((closure_id, trays[(n - 1) // 24 + 1], 24, (n - 1) % 24 + 1, method))
                ends.append((sides[0][1][n], sides[0][0], "A"))
                ends.append((sides[1][1][n], sides[1][0], "B"))
        return splices, ends

    def _baseline(self, splices: list[tuple[Any, ...]], ends: list[tuple[Any, ...]]) -> None:
        with _transaction(self.raw):
            first = self.raw.query("SELECT COALESCE(MAX(id), 0) FROM splice")[0][0]
            self.raw.executemany(
                "INSERT INTO splice (closure_id, tray_id, tray_capacity, slot,"
                " method) VALUES (?, ?, ?, ?, ?)",
                splices,
            )
            ids = [
                r[0]
                for r in self.raw.query("SELECT id FROM splice WHERE id > ? ORDER BY id", (first,))
            ]
            rows = [(*end, ids[i // 2], i % 2 + 1) for i, end in enumerate(ends)]
            self.raw.executemany(
                "INSERT INTO fiber_end (strand_id, station_id, side, splice_id,"
                " splice_side) VALUES (?, ?, ?, ?, ?)",
                rows,
            )

    def _undo(self) -> None:
        """Take the sheet's splices out again, and their history rows, so that every run
        imports into the same record (a history that grew run by run would not be)."""
        closures = [(closure_id,) for closure_id in self._closure_ids()]
        with _transaction(self.raw):
            self.raw.executemany(
                "DELETE FROM fiber_end WHERE splice_id IN (SELECT id FROM splice"
                " WHERE closure_id = ?)",
                closures,
            )
            self.raw.executemany("DELETE FROM splice WHERE closure_id = ?", closures)

        def reset(session: Any) -> int:
            prefixes = [f"T{t:03d}-%" for t in self.trunks]
            ids = [
                cid
                for prefix in prefixes
                for cid in session.scalars(select(Circuit.id).where(Circuit.label.like(prefix)))
            ]
            return refresh_circuits(session, ids)

        run_in_transaction(self.database, reset)
        with _transaction(self.raw):
            self.raw.execute("DELETE FROM change WHERE id > ?", (self.last_change,))
        if self.raw.postgres:
            # PostgreSQL keeps deleted rows until a vacuum: without one, each run would find
            # the tables and their indexes a little more bloated than the run before.
            self.raw.execute(
                "VACUUM (ANALYZE) splice, fiber_end, cut, change, circuit, circuit_path_item"
            )

    def run(self, repeat: int) -> Result:
        path = self._write_sheet()
        self.last_change = self.raw.query("SELECT COALESCE(MAX(id), 0) FROM change")[0][0]
        count = sum(j[3] for j in self.joints)

        def action() -> None:
            def work(session: Any) -> None:
                report = import_sheet(session, read_sheet(path))
                if report.problems:
                    raise PlantError(f"the benchmark sheet was refused: {report.problems[:3]}")

            run_in_transaction(self.database, work)

        what, ratio, seconds = TARGETS["import"]
        splices, ends = self._final_rows()
        median, base = median_times(
            action,
            lambda: self._baseline(splices, ends),
            repeat,
            between=self._undo,
            least_s=0.0,  # each run takes seconds: the given rounds are enough
        )
        assert base is not None
        return Result(
            "import", f"{what} ({count:,} splices here)", median, base, ratio, seconds, count
        )
