"""The demo town's loss figures, as README.md and docs/loss-method.md print them, worked by
hand from the record's element counts and the published allowances, on SQLite and PostgreSQL.

The expected figures are computed here, never copied from the program's output:

    loss = sum(piece km x coefficient) + splices x allowance + pairs x allowance + splitters

(ITU-T G.652 Appendix I link form A = alpha*L + alpha_s*x + alpha_c*y, seen; plantdb adds the
splitter term). Values, each with its source:

- fiber: ITU-T G.652.D / G.657.A2 single-mode, the demo's fiber types record 0.5 dB/km
  maximum at 1310 and 1550 nm (ANSI/TIA-568.3-D outside-plant cabled maximum, seen) and
  0.35 / 0.22 dB/km typical (single-mode planning values, trade);
- splice: 0.3 dB maximum (ANSI/TIA-568.3-D, memory); typical: the splice's measured loss where
  the record has one, else the catalogue's fusion value 0.1 dB (trade); a pigtail-spliced
  termination is a fusion splice;
- mated connector pair, one per panel port, none at equipment ports: 0.75 dB maximum
  (ANSI/TIA-568.3-D, seen), 0.3 dB typical (catalogue, trade);
- 1x8 planar splitter: typical range 10.2-10.8 dB (vendor application note, seen): the top,
  10.8, as the maximum and the middle, 10.5, as the typical value;
- power budget: margin = (P_tx - S_rx) - loss (the contract's formula); the demo switches'
  optics, +0.5 dBm launch and -14.4 dBm sensitivity, are invented planning values (memory).

Each piece's length is the difference of the sheath marks at its two stations (the contract's
length rule); `test_the_worked_lengths_and_measurements_are_the_demo_record` checks the
lengths and measured splice losses used below against the demo bundle itself.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest

from seed_data.demo_town import build_demo_bundle
from tests.conftest import PlantCli

ROOT = Path(__file__).resolve().parents[2]

FIBER_MAX_DB_PER_KM = 0.5  # ANSI/TIA-568.3-D single-mode outside plant (seen)
FIBER_TYPICAL_DB_PER_KM = {"1310": 0.35, "1550": 0.22}  # planning values (trade)
SPLICE_MAX_DB = 0.3  # ANSI/TIA-568.3-D (memory)
FUSION_TYPICAL_DB = 0.1  # catalogue fusion splice planning value (trade)
PAIR_MAX_DB = 0.75  # ANSI/TIA-568.3-D mated connector pair (seen)
PAIR_TYPICAL_DB = 0.3  # catalogue mated pair planning value (trade)
SPLIT_1X8 = (10.8, 10.5)  # vendor application note 1x8 range 10.2-10.8 dB: top, middle (seen)
SWITCH_TX_DBM, SWITCH_RX_DBM = 0.5, -14.4  # the demo's invented switch optics (memory)


@dataclass(frozen=True)
class Worked:
    """One demo circuit's path, counted by hand from the record."""

    circuit: str
    pieces: tuple[tuple[str, str, str, float], ...]  # cable, from station, to station, metres
    splices_typical: tuple[float, ...]  # each splice's typical value (measured or catalogue)
    pairs: int
    splitter: tuple[float, float] | None = None  # (maximum, typical)

    @property
    def km(self) -> float:
        return sum(p[3] for p in self.pieces) / 1000.0

    def max_db(self) -> float:
        split = self.splitter[0] if self.splitter else 0.0
        return (
            self.km * FIBER_MAX_DB_PER_KM
            + len(self.splices_typical) * SPLICE_MAX_DB
            + self.pairs * PAIR_MAX_DB
            + split
        )

    def typical_db(self, nm: str) -> float:
        split = self.splitter[1] if self.splitter else 0.0
        return (
            self.km * FIBER_TYPICAL_DB_PER_KM[nm]
            + sum(self.splices_typical)
            + self.pairs * PAIR_TYPICAL_DB
            + split
        )


# QM-SW-CO1:4 -j- QM-CO-ODF1:49 (pigtail) -- QM-F288:49 891 m -- QM-SC-VLT1 fusion, measured
# 0.02 -- QM-R72A:1 247 m -- QM-SC-HH01 mass fusion (one of the ribbon joint's fibers),
# measured 0.05 -- QM-R72B:1 150 m -- QM-BE1-MDF:1 (pigtail) -j- QM-SW-BE1:1.
#   max     1.288 x 0.5 + 4 x 0.3 + 2 x 0.75 = 0.644 + 1.2 + 1.5 = 3.344 -> "3.34"
#   typical 1310: 1.288 x 0.35 + (0.1 + 0.02 + 0.05 + 0.1) + 2 x 0.3 = 1.3208 -> "1.32"
#           1550: 1.288 x 0.22 + 0.27 + 0.6 = 1.15336 -> "1.15"
BB_04 = Worked(
    "QM-BB-04",
    (
        ("QM-F288", "QM-CO-ODF1", "QM-SC-VLT1", 891.0),
        ("QM-R72A", "QM-SC-VLT1", "QM-SC-HH01", 247.0),
        ("QM-R72B", "QM-SC-HH01", "QM-BE1-MDF", 150.0),
    ),
    (FUSION_TYPICAL_DB, 0.02, 0.05, FUSION_TYPICAL_DB),
    pairs=2,
)

# QM-OLT1:1/1 -j- QM-CO-ODF2:1 (pigtail) -- QM-F144:1 990 m (marks count down) -- QM-SC-CABN
# slot 1 measured 0.02 -- QM-SPL-N1 1x8, in -> 1 -- slot 3 not measured (fusion 0.1) --
# QM-D48W:1 274 m -- QM-SC-PL02 measured 0.02 -- QM-DR01:1 77 m -- QM-PR01-P:1 (field
# connector, no splice).
#   max     1.341 x 0.5 + 4 x 0.3 + 2 x 0.75 + 10.8 = 0.6705 + 1.2 + 1.5 + 10.8 = 14.1705
#   typical 1310: 0.46935 + (0.1 + 0.02 + 0.1 + 0.02) + 0.6 + 10.5 = 11.80935 -> "11.81"
#           1550: 0.29502 + 0.24 + 0.6 + 10.5 = 11.63502 -> "11.64"
CD_01 = Worked(
    "QM-CD-01",
    (
        ("QM-F144", "QM-CO-ODF2", "QM-SC-CABN", 990.0),
        ("QM-D48W", "QM-SC-CABN", "QM-SC-PL02", 274.0),
        ("QM-DR01", "QM-SC-PL02", "QM-PR01-P", 77.0),
    ),
    (FUSION_TYPICAL_DB, 0.02, FUSION_TYPICAL_DB, 0.02),
    pairs=2,
    splitter=SPLIT_1X8,
)

# QM-SW-CO1:1 -j- QM-CO-ODF1:1 (pigtail) -- QM-F288:1 1912 m, expressing through three
# closures -- QM-HUTE-ODF1:1 (pigtail) -j- QM-SW-HUTE:1.
#   max     1.912 x 0.5 + 2 x 0.3 + 2 x 0.75 = 0.956 + 0.6 + 1.5 = 3.056 -> "3.06"
#   typical 1310: 0.6692 + 0.2 + 0.6 = 1.4692 -> "1.47";  1550: 0.42064 + 0.8 = 1.22064
#   budget  +0.5 - (-14.4) = 14.9 dB each way; margin 14.9 - 3.056 = 11.844 -> "11.84"
BB_01 = Worked(
    "QM-BB-01",
    (("QM-F288", "QM-CO-ODF1", "QM-HUTE-ODF1", 1912.0),),
    (FUSION_TYPICAL_DB, FUSION_TYPICAL_DB),
    pairs=2,
)

# QM-OLT1:1/1 -j- QM-CO-ODF2:1 (pigtail) -- QM-F144:1 990 m -- QM-SC-CABN slot 1 measured
# 0.02 -- QM-SPL-N1 in -> 8 -- slot 14 measured 0.05 -- QM-K12C:1 3 m (the cabinet stub) --
# QM-CABN-P1:1 (pigtail).
#   max     0.993 x 0.5 + 4 x 0.3 + 2 x 0.75 + 10.8 = 13.9965 -> "14.00"
#   typical 1310: 0.34755 + 0.27 + 0.6 + 10.5 = 11.71755 -> "11.72"
#           1550: 0.21846 + 0.27 + 0.6 + 10.5 = 11.58846 -> "11.59"
PON_N1 = Worked(
    "QM-PON-N1",
    (
        ("QM-F144", "QM-CO-ODF2", "QM-SC-CABN", 990.0),
        ("QM-K12C", "QM-SC-CABN", "QM-CABN-P1", 3.0),
    ),
    (FUSION_TYPICAL_DB, 0.02, 0.05, FUSION_TYPICAL_DB),
    pairs=2,
    splitter=SPLIT_1X8,
)

WORKED = (BB_04, CD_01, BB_01, PON_N1)

# The figures the docs print, rounded as printed: (max, typical) per wavelength.
PRINTED = {
    "QM-BB-04": {"1310": ("3.34", "1.32"), "1550": ("3.34", "1.15")},
    "QM-CD-01": {"1310": ("14.17", "11.81"), "1550": ("14.17", "11.64")},
    "QM-BB-01": {"1310": ("3.06", "1.47"), "1550": ("3.06", "1.22")},
    "QM-PON-N1": {"1310": ("14.00", "11.72"), "1550": ("14.00", "11.59")},
}


def _marks(bundle: dict[str, Any], cable: str) -> dict[str, float]:
    (found,) = [c for c in bundle["cables"] if c["label"] == cable]
    return {s["at"]: s["mark_m"] for s in found["stations"]}


def _splice_loss(bundle: dict[str, Any], closure: str, tray: int, slot: int) -> float | None:
    (found,) = [
        s
        for s in bundle["splices"]
        if (s["closure"], s["tray"], s["slot"]) == (closure, tray, slot)
    ]
    loss: float | None = found.get("loss_db")
    return loss


def test_the_worked_lengths_and_measurements_are_the_demo_record() -> None:
    """Every piece length above is the difference of the demo cable's sheath marks, and every
    measured splice loss is the one the demo records at that tray and slot."""
    bundle = build_demo_bundle()
    for worked in WORKED:
        for cable, start, stop, metres in worked.pieces:
            marks = _marks(bundle, cable)
            assert abs(marks[stop] - marks[start]) == metres, f"{worked.circuit}: {cable}"
    assert _splice_loss(bundle, "QM-SC-VLT1", 1, 1) == 0.02
    assert _splice_loss(bundle, "QM-SC-HH01", 1, 1) == 0.05
    assert _splice_loss(bundle, "QM-SC-CABN", 1, 1) == 0.02
    assert _splice_loss(bundle, "QM-SC-CABN", 1, 3) is None
    assert _splice_loss(bundle, "QM-SC-CABN", 1, 14) == 0.05
    assert _splice_loss(bundle, "QM-SC-PL02", 1, 1) == 0.02
    equipment = {e["label"]: e for e in bundle["equipment"]}
    for switch in ("QM-SW-CO1", "QM-SW-HUTE"):
        assert (equipment[switch]["tx_dbm"], equipment[switch]["rx_sensitivity_dbm"]) == (
            SWITCH_TX_DBM,
            SWITCH_RX_DBM,
        )
    assert "tx_dbm" not in equipment["QM-SW-BE1"]  # so QM-BB-04 has no power budget


def test_the_hand_worked_figures_round_to_what_the_docs_print() -> None:
    for worked in WORKED:
        for nm, (max_text, typical_text) in PRINTED[worked.circuit].items():
            assert f"{worked.max_db():.2f}" == max_text, f"{worked.circuit} {nm} max"
            assert f"{worked.typical_db(nm):.2f}" == typical_text, f"{worked.circuit} {nm}"


def _doc(name: str) -> str:
    return " ".join((ROOT / name).read_text(encoding="utf-8").split())


def _table_row(nm: str, max_text: str, typical_text: str) -> str:
    return rf"{nm} nm\s+{re.escape(max_text)}\s+{re.escape(typical_text)}"


def test_the_docs_show_the_hand_worked_figures() -> None:
    method, readme = _doc("docs/loss-method.md"), _doc("README.md")
    for nm in ("1310", "1550"):
        assert re.search(_table_row(nm, *PRINTED["QM-BB-04"][nm]), method), nm
        assert re.search(_table_row(nm, *PRINTED["QM-PON-N1"][nm]), readme), nm
    # The prose of docs/loss-method.md, to the digits it gives.
    assert f"{BB_04.max_db():.3f} dB" in method
    assert f"{BB_04.typical_db('1310'):.4f} dB" in method
    assert f"{CD_01.max_db():.2f} dB" in method
    assert f"({CD_01.km * FIBER_MAX_DB_PER_KM:.4f})" in method
    budget = SWITCH_TX_DBM - SWITCH_RX_DBM
    assert f"{budget:.1f} dB budget, {budget - BB_01.max_db():.2f} dB of it spare" in method


def _check_document(worked: Worked, document: dict[str, Any]) -> None:
    where = worked.circuit
    assert document["length_m"] == pytest.approx(worked.km * 1000.0), where
    assert document["counts"] == {
        "splices": len(worked.splices_typical),
        "connector_pairs": worked.pairs,
        "splitters": 1 if worked.splitter else 0,
    }, where
    for nm in ("1310", "1550"):
        totals = document["wavelengths"][nm]
        assert totals["max_db"] == pytest.approx(worked.max_db()), f"{where} {nm} max"
        assert totals["typical_db"] == pytest.approx(worked.typical_db(nm)), f"{where} {nm}"


def test_the_demo_loss_figures_match_the_hand_worked_counts(plant: PlantCli) -> None:
    result = plant("demo")
    assert result.exit_code == 0, result.output
    for worked in WORKED:
        document = plant.json("loss", "--circuit", worked.circuit)
        _check_document(worked, document)
        # The text form prints the same figures, rounded as the docs show them.
        text = plant("loss", "--circuit", worked.circuit).output
        for nm, printed in PRINTED[worked.circuit].items():
            assert re.search(_table_row(nm, *printed), text), f"{worked.circuit} {nm}: {text}"
        if worked is not BB_01:
            # Either end is a panel port, or (QM-BB-04) the far switch records no optics.
            assert "power_budget" not in document, worked.circuit
    document = plant.json("loss", "--circuit", "QM-BB-01")
    budget = SWITCH_TX_DBM - SWITCH_RX_DBM  # 14.9 dB
    directions = [(b["from"], b["to"]) for b in document["power_budget"]]
    assert directions == [("QM-SW-CO1:1", "QM-SW-HUTE:1"), ("QM-SW-HUTE:1", "QM-SW-CO1:1")]
    for entry in document["power_budget"]:
        assert entry["budget_db"] == pytest.approx(budget)
        for nm in ("1310", "1550"):
            assert entry["margin_db"][nm]["max"] == pytest.approx(budget - BB_01.max_db())
            assert entry["margin_db"][nm]["typical"] == pytest.approx(budget - BB_01.typical_db(nm))
    text = plant("loss", "--circuit", "QM-BB-01").output
    assert "QM-SW-CO1:1 -> QM-SW-HUTE:1: 14.90 dB; margin 1310 nm 11.84 dB (max basis)" in text
