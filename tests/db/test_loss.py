"""Expected loss against published allowances and worked examples, on SQLite and PostgreSQL.

Sources: ANSI/TIA-568.3-D (mated connector pair 0.75 dB maximum, seen; splice 0.3 dB maximum,
memory; single-mode outside-plant cabled attenuation 0.5 dB/km, seen; multimode 3.5 dB/km at
850 nm and 1.5 dB/km at 1300 nm, memory); ITU-T G.652 Appendix I link form
A = alpha*L + alpha_s*x + alpha_c*y (seen); planar splitter typical ranges from a vendor
application note (seen); ideal split 10*log10(N) (physics).
"""

from __future__ import annotations

import math
from typing import Any

import pytest

from plantdb.db import Database, run_in_transaction
from plantdb.errors import RecordsError
from plantdb.records.bundle import load_bundle
from plantdb.trace.loss import LossOptions
from plantdb.trace.service import loss_report
from tests.networks import MULTIMODE, SINGLE_MODE, Bundle, ashgrove


def _load(database: Database, bundle: Bundle) -> None:
    run_in_transaction(database, lambda s: load_bundle(s, bundle.data))


def _loss(database: Database, kind: str, value: str, **options: Any) -> dict[str, Any]:
    with database.read() as session:
        return loss_report(session, kind, value, LossOptions(**options))


def _five_km_link() -> Bundle:
    """5.0 km of single-mode fiber in five 1 km cables joined by 4 splices, connectorised
    in the field at both ends (so no pigtail splices): 2 connector pairs."""
    b = Bundle().fiber_type(SINGLE_MODE)
    for i in range(6):
        b.structure(f"N{i}", i * 1000)
    for i in range(5):
        b.span(f"L{i}", f"N{i}", f"N{i + 1}", 990.0)
    b.panel("PA", "N0").panel("PZ", "N5")
    for i in range(1, 5):
        b.closure(f"J{i}", f"N{i}")
    stations = ["PA", "J1", "J2", "J3", "J4", "PZ"]
    for i in range(5):
        b.cable(f"K{i}", [f"L{i}"], [(stations[i], 0.0), (stations[i + 1], 1000.0)])
    for i in range(1, 5):
        b.splice(f"J{i}", f"K{i - 1}:1", f"K{i}:1")
    b.terminate("K0:1", "PA:1", method="field_connector")
    b.terminate("K4:1", "PZ:1", method="field_connector")
    b.circuit("LINK-5K", "PA:1", "PZ:1")
    return b


def test_five_km_link_with_four_splices_and_two_pairs_is_5_20_db(database: Database) -> None:
    """REFERENCES worked check: 5.0 km x 0.5 + 4 x 0.3 + 2 x 0.75 = 2.50 + 1.20 + 1.50."""
    _load(database, _five_km_link())
    document = _loss(database, "circuit", "LINK-5K")
    for nm in ("1310", "1550"):
        assert document["wavelengths"][nm]["max_db"] == pytest.approx(5.20)
    assert document["counts"] == {"splices": 4, "connector_pairs": 2, "splitters": 0}
    assert document["length_m"] == 5000.0


def test_typical_basis_uses_planning_values(database: Database) -> None:
    """Typical 0.35 / 0.22 dB/km (trade) on 5 km: the wavelengths differ by 0.65 dB."""
    _load(database, _five_km_link())
    waves = _loss(database, "circuit", "LINK-5K")["wavelengths"]
    assert waves["1310"]["typical_db"] - waves["1550"]["typical_db"] == pytest.approx(0.65)


def test_measured_splice_loss_is_used_in_the_typical_basis(database: Database) -> None:
    _load(database, ashgrove())
    document = _loss(database, "circuit", "AG-2")
    items = document["wavelengths"]["1310"]["items"]
    splice = next(i for i in items if i["kind"] == "splice" and i["label"].startswith("AC-1"))
    assert splice["typical_db"] == 0.05 and splice["typical_source"] == "measured"
    # The maximum basis ignores the measurement: the ANSI/TIA-568.3-D allowance holds.
    assert splice["max_db"] == 0.3
    # Path: F-1:5/A 305 m + D-1:1 123 m = 0.428 km x 0.5; pigtail at CO-P1 + AC-1 splice
    # (the premises end is a field connector) = 2 x 0.3; two ports = 2 x 0.75.
    assert document["wavelengths"]["1310"]["max_db"] == pytest.approx(0.214 + 0.6 + 1.5)
    assert document["counts"] == {"splices": 2, "connector_pairs": 2, "splitters": 0}


def test_multimode_link_at_850_and_1300(database: Database) -> None:
    """300 m of OM4 riser, field connectors: ANSI/TIA-568.3-D multimode maxima (memory)
    3.5 dB/km at 850 nm and 1.5 dB/km at 1300 nm, plus 2 x 0.75 dB connector pairs."""
    b = Bundle().fiber_type(MULTIMODE).structure("BLDG", 0, kind="building_entrance")
    b.panel("MDF", "BLDG").panel("IDF3", "BLDG")
    b.cable(
        "RISER",
        [],
        [("MDF", 0.0), ("IDF3", 300.0)],
        units=1,
        per_unit=12,
        kind="tight_buffered",
        fiber_type="MM-TEST",
    )
    b.terminate("RISER:1", "MDF:1", method="field_connector")
    b.terminate("RISER:1", "IDF3:1", method="field_connector")
    b.circuit("LAN-1", "MDF:1", "IDF3:1", kind="lan")
    _load(database, b)
    document = _loss(database, "circuit", "LAN-1")
    assert document["mode"] == "multimode"
    assert set(document["wavelengths"]) == {"850", "1300"}
    assert document["wavelengths"]["850"]["max_db"] == pytest.approx(0.3 * 3.5 + 1.5)
    assert document["wavelengths"]["1300"]["max_db"] == pytest.approx(0.3 * 1.5 + 1.5)


def _split_link(ratio: str) -> Bundle:
    b = ashgrove()
    b.splitter("SP-1", "AC-1", ratio)
    b.cut("AC-1", "F-1:6")
    b.splice("AC-1", "F-1:6/A", "SP-1:in", slot=2)
    b.splice("AC-1", "SP-1:1", "D-1:2", slot=3)
    b.terminate("D-1:2", "PR-P1:2", method="field_connector")
    b.circuit("PON-1", "CO-P1:6", "PR-P1:2", kind="pon")
    return b


def test_a_splitter_adds_its_split_loss_and_excess(database: Database) -> None:
    _load(database, _split_link("1x32"))
    document = _loss(database, "circuit", "PON-1")
    splitter = next(i for i in document["wavelengths"]["1310"]["items"] if i["kind"] == "splitter")
    ideal = 10 * math.log10(32)  # 15.05 dB (physics)
    # Vendor application note: typical 1x32 planar splitters 16.5-17.5 dB (seen).
    assert splitter["max_db"] >= 17.5 > ideal
    assert 16.5 <= splitter["typical_db"] <= 17.5
    # 0.428 km of fiber; splices: the pigtail at CO-P1, feeder to splitter input, leg to drop.
    fiber_and_rest = 0.428 * 0.5 + 3 * 0.3 + 2 * 0.75
    assert document["wavelengths"]["1310"]["max_db"] == pytest.approx(
        fiber_and_rest + splitter["max_db"]
    )
    assert document["counts"]["splitters"] == 1


def test_a_recorded_splitter_loss_wins(database: Database) -> None:
    bundle = _split_link("1x8")
    bundle.data["splitters"][0]["loss_db"] = 10.4
    _load(database, bundle)
    items = _loss(database, "circuit", "PON-1")["wavelengths"]["1550"]["items"]
    splitter = next(i for i in items if i["kind"] == "splitter")
    assert splitter["max_db"] == splitter["typical_db"] == 10.4


def test_a_port_fanning_out_gives_one_entry_per_end(database: Database) -> None:
    _load(database, _split_link("1x4"))
    document = _loss(database, "port", "CO-P1:6")
    assert len(document["paths"]) == 4
    assert [p["end"]["at"] for p in document["paths"]][:2] == ["PR-P1:2", "SP-1:2"]


def test_overrides_and_margin_are_applied_and_stated(database: Database) -> None:
    _load(database, _five_km_link())
    document = _loss(
        database, "circuit", "LINK-5K", splice_max_db=0.1, connector_max_db=0.5, margin_db=3.0
    )
    assert document["wavelengths"]["1310"]["max_db"] == pytest.approx(2.5 + 0.4 + 1.0 + 3.0)
    used = document["values_used"]
    assert used["splice_max"] == {"value_db": 0.1, "source": "given by user"}
    assert used["margin_db"] == 3.0


def test_more_wavelengths_on_request(database: Database) -> None:
    _load(database, _five_km_link())
    document = _loss(database, "circuit", "LINK-5K", wavelengths=(1310, 1490, 1625))
    assert list(document["wavelengths"]) == ["1310", "1490", "1625"]
    # SM-TEST records no 1625 nm value: the catalogue's G.652.D cabled maximum 0.40 dB/km
    # (ITU-T G.652.D, seen via the G.657.A table) applies.
    fiber = next(i for i in document["wavelengths"]["1625"]["items"] if i["kind"] == "fiber")
    assert fiber["coefficient"]["max"] == pytest.approx(0.40)
    assert "catalogue" in fiber["max_source"]


def test_a_path_mixing_modes_is_a_records_error(database: Database) -> None:
    b = ashgrove().fiber_type(MULTIMODE)
    b.structure("AG-MM", 300, -80, kind="building_entrance")
    b.span("S6", "AH-1", "AG-MM", 80.0).panel("MM-P", "AG-MM")
    b.cable("M-1", ["S6"], [("AC-1", 0.0), ("MM-P", 82.0)], units=1, fiber_type="MM-TEST")
    b.cut("AC-1", "F-1:7")
    b.splice("AC-1", "F-1:7/A", "M-1:1", slot=5)
    b.terminate("M-1:1", "MM-P:1")
    b.circuit("MIX", "CO-P1:7", "MM-P:1")
    _load(database, b)
    with pytest.raises(RecordsError, match=r"mixes single-mode and multimode.*F-1.*M-1"):
        _loss(database, "circuit", "MIX")


def test_power_budget_and_margin_between_optics(database: Database) -> None:
    b = _five_km_link()
    b.equipment("TX-A", "N0", ["1"], tx_dbm=0.0, rx_sensitivity_dbm=-14.4)
    b.equipment("TX-Z", "N5", ["1"], tx_dbm=-1.0, rx_sensitivity_dbm=-14.4)
    b.jumper("TX-A:1", "PA:1").jumper("PZ:1", "TX-Z:1")
    b.data["circuits"][0].update(a="TX-A:1", z="TX-Z:1")
    _load(database, b)
    document = _loss(database, "circuit", "LINK-5K")
    forward, backward = document["power_budget"]
    assert forward["budget_db"] == pytest.approx(14.4)
    assert forward["margin_db"]["1310"]["max"] == pytest.approx(14.4 - 5.2)
    assert backward["budget_db"] == pytest.approx(13.4)


def test_a_long_route_splits_at_a_regenerator_and_flags_a_short_budget(
    database: Database,
) -> None:
    """Two 60 km sections around a regenerator. Early 1.3 um undersea systems regenerated
    about every 50 km (trade fact): optics with a 20 dB budget cannot drive 60 km at the
    0.5 dB/km acceptance maximum (30 dB plus pairs), so both sections are flagged."""
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("EAST", 0, kind="central_office").structure("MID", 60_000, kind="hut")
    b.structure("WEST", 120_000, kind="central_office")
    b.span("E-M", "EAST", "MID", 60_000.0).span("M-W", "MID", "WEST", 60_000.0)
    b.panel("PE", "EAST").panel("PM1", "MID").panel("PM2", "MID").panel("PW", "WEST")
    b.cable("LH-1", ["E-M"], [("PE", 0.0), ("PM1", 60_000.0)])
    b.cable("LH-2", ["M-W"], [("PM2", 0.0), ("PW", 60_000.0)])
    b.terminate("LH-1:1", "PE:1").terminate("LH-1:1", "PM1:1")
    b.terminate("LH-2:1", "PM2:1").terminate("LH-2:1", "PW:1")
    b.equipment("TE", "EAST", ["1"], tx_dbm=2.0, rx_sensitivity_dbm=-18.0)
    b.equipment(
        "REGEN", "MID", ["west", "east"], role="regenerator", tx_dbm=2.0, rx_sensitivity_dbm=-18.0
    )
    b.equipment("TW", "WEST", ["1"], tx_dbm=2.0, rx_sensitivity_dbm=-18.0)
    b.jumper("TE:1", "PE:1").jumper("PM1:1", "REGEN:west").jumper("REGEN:east", "PM2:1")
    b.jumper("PW:1", "TW:1")
    b.circuit("LONG", "TE:1", "TW:1")
    _load(database, b)
    document = _loss(database, "circuit", "LONG")
    sections = document["sections"]
    assert [(s["from"], s["to"]) for s in sections] == [
        ("TE:1", "REGEN:west"),
        ("REGEN:west", "TW:1"),
    ]
    assert [s["length_m"] for s in sections] == [60_000.0, 60_000.0]
    assert all(s["budget_db"] == 20.0 and s["over_budget"] for s in sections)
    assert document["length_m"] == 120_000.0
