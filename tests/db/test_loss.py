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
from tests.networks import MULTIMODE, SINGLE_MODE, Bundle, ashgrove, long_route


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
    # The far receiver never sees the near launch: no end-to-end budget, top level or per path.
    assert "power_budget" not in document
    assert all("power_budget" not in path for path in document["paths"])


def test_each_section_of_a_long_route_has_its_own_margin(database: Database) -> None:
    """60 km then 20 km around a regenerator, optics +2.0 / -18.0 dBm everywhere: 20 dB.

    Each section (worked by hand): two panel ports, each a mated pair and a pigtail splice
    (the default termination), and the fiber; the gear's own ports count nothing.
    Maximum basis, both wavelengths: L x 0.5 dB/km (ANSI/TIA-568.3-D outside plant, seen)
    + 2 x 0.3 (ANSI/TIA-568.3-D splice, memory) + 2 x 0.75 (ANSI/TIA-568.3-D pair, seen):
      60 km: 30.0 + 0.6 + 1.5 = 32.1 dB -> margin 20 - 32.1 = -12.1 dB, over budget;
      20 km: 10.0 + 0.6 + 1.5 = 12.1 dB -> margin 20 - 12.1 = +7.9 dB.
    Typical basis: L x 0.35 / 0.22 dB/km at 1310 / 1550 nm (trade) + 2 x 0.1 (catalogue
    fusion splice, trade) + 2 x 0.3 (catalogue pair, trade):
      60 km: 21.0 + 0.8 = 21.8 / 13.2 + 0.8 = 14.0 dB -> margins -1.8 / +6.0 dB;
      20 km:  7.0 + 0.8 =  7.8 /  4.4 + 0.8 =  5.2 dB -> margins 12.2 / 14.8 dB.
    Early 1.3 um undersea systems regenerated about every 50 km (trade fact): the 60 km
    section is the one that cannot be driven.
    """
    _load(database, long_route(60_000.0, 20_000.0))
    document = _loss(database, "circuit", "LONG")
    first, second = document["sections"]
    assert (first["from"], first["to"]) == ("TE:1", "REGEN:west")
    assert (second["from"], second["to"]) == ("REGEN:west", "TW:1")
    worked = {
        "first": {"1310": (32.1, 21.8), "1550": (32.1, 14.0)},
        "second": {"1310": (12.1, 7.8), "1550": (12.1, 5.2)},
    }
    for section, name in ((first, "first"), (second, "second")):
        assert section["budget_db"] == pytest.approx(20.0)
        for nm, (max_db, typical_db) in worked[name].items():
            assert section["wavelengths"][nm]["max_db"] == pytest.approx(max_db)
            assert section["wavelengths"][nm]["typical_db"] == pytest.approx(typical_db)
            assert section["margin_db"][nm] == pytest.approx(
                {"max": 20.0 - max_db, "typical": 20.0 - typical_db}
            ), f"{name} section margin at {nm} nm"
    assert first["over_budget"] is True and second["over_budget"] is False
    # The whole route's loss is still given (the sum of the sections), but no power budget:
    # each section's optics launch afresh, so none reaches from TE to TW.
    assert document["wavelengths"]["1310"]["max_db"] == pytest.approx(32.1 + 12.1)
    assert "power_budget" not in document
    assert all("power_budget" not in path for path in document["paths"])
    assert document["paths"][0]["sections"] == document["sections"]


def test_a_section_whose_optics_are_unknown_has_no_margin(database: Database) -> None:
    """An amplifier with no launch power or sensitivity on record: each section touching it
    has no budget, so no margin and no flag (nothing to compare the loss against)."""
    _load(database, long_route(30_000.0, 30_000.0, role="amplifier", middle_optics=False))
    sections = _loss(database, "circuit", "LONG")["sections"]
    assert [(s["from"], s["to"]) for s in sections] == [("TE:1", "AMP:west"), ("AMP:west", "TW:1")]
    for section in sections:
        assert section["budget_db"] is None and section["margin_db"] is None
        assert section["over_budget"] is False
        # 30 km x 0.5 + 2 x 0.3 + 2 x 0.75 (ANSI/TIA-568.3-D): the loss is still counted.
        assert section["wavelengths"]["1550"]["max_db"] == pytest.approx(15.0 + 0.6 + 1.5)


def _three_splice_link() -> Bundle:
    """4.0 km from PA to PZ in four cables joined in J1, J2, J3:

    PA:1 (pigtail splice) - K0:1 1.0 km - J1 fusion, measured 0.04 dB - K1:1 1.5 km -
    J2 fusion, measured 0.07 dB - K2:1 0.5 km - J3 mechanical, not measured - K3:1 1.0 km -
    PZ:1 (field connector, no splice).
    """
    b = Bundle().fiber_type(SINGLE_MODE)
    lengths = [1000.0, 1500.0, 500.0, 1000.0]
    places = [0.0, 1000.0, 2500.0, 3000.0, 4000.0]
    for i, east in enumerate(places):
        b.structure(f"T{i}", east)
    for i, length in enumerate(lengths):
        b.span(f"TS{i}", f"T{i}", f"T{i + 1}", length)
    b.panel("PA", "T0").panel("PZ", "T4")
    for i in range(1, 4):
        b.closure(f"J{i}", f"T{i}")
    stations = ["PA", "J1", "J2", "J3", "PZ"]
    for i, length in enumerate(lengths):
        b.cable(f"K{i}", [f"TS{i}"], [(stations[i], 0.0), (stations[i + 1], length)])
    b.splice("J1", "K0:1", "K1:1", loss_db=0.04)
    b.splice("J2", "K1:1", "K2:1", loss_db=0.07)
    b.splice("J3", "K2:1", "K3:1", method="mechanical")
    b.terminate("K0:1", "PA:1")
    b.terminate("K3:1", "PZ:1", method="field_connector")
    b.circuit("TYP-1", "PA:1", "PZ:1")
    return b


def test_typical_totals_with_measured_and_unmeasured_splices(database: Database) -> None:
    """Worked by hand from the catalogue's typical values (plantdb/catalogue.py, each trade):
    fiber 0.35 dB/km at 1310 nm and 0.22 at 1550 (single-mode planning values, also recorded
    on SM-TEST), fusion splice 0.1, mechanical splice 0.2, mated pair 0.3 dB.

      fiber      4.0 km x 0.35 = 1.40 (1310)    4.0 km x 0.22 = 0.88 (1550)
      splices    0.04 + 0.07 (measured) + 0.2 (J3, mechanical) + 0.1 (pigtail at PA) = 0.41
      pairs      2 x 0.3 = 0.60
      total      2.41 dB at 1310 nm,  1.89 dB at 1550 nm

    Maximum basis, both wavelengths (ANSI/TIA-568.3-D; the measurements do not count):
    4.0 x 0.5 + 4 x 0.3 + 2 x 0.75 = 2.0 + 1.2 + 1.5 = 4.70 dB.
    """
    _load(database, _three_splice_link())
    document = _loss(database, "circuit", "TYP-1")
    waves = document["wavelengths"]
    assert waves["1310"]["typical_db"] == pytest.approx(1.40 + 0.41 + 0.60)
    assert waves["1550"]["typical_db"] == pytest.approx(0.88 + 0.41 + 0.60)
    for nm in ("1310", "1550"):
        assert waves[nm]["max_db"] == pytest.approx(2.0 + 1.2 + 1.5)
    splices = [i for i in waves["1310"]["items"] if i["kind"] == "splice"]
    assert [(i["label"], i["typical_db"]) for i in splices] == [
        ("pigtail splice at PA:1", pytest.approx(0.1)),
        ("J1 tray 1 slot 1", pytest.approx(0.04)),
        ("J2 tray 1 slot 1", pytest.approx(0.07)),
        ("J3 tray 1 slot 1", pytest.approx(0.2)),
    ]
    assert [i["typical_source"] for i in splices[1:3]] == ["measured", "measured"]
    assert "mechanical" in splices[3]["typical_source"]
    assert all(i["max_db"] == pytest.approx(0.3) for i in splices)
    assert document["counts"] == {"splices": 4, "connector_pairs": 2, "splitters": 0}


def _ribbon_joint() -> Bundle:
    """Two 2-ribbon cables joined ribbon to ribbon in JR: RA (PA -> JR, 800 m) and RB
    (JR -> PZ, 700 m), 12 mass-fusion splices in tray 1, one per fiber (the way a ribbon
    joint is recorded); fiber 1's measured at 0.06 dB, fiber 2's not. Field connectors at
    both panels. Circuits RIB-1 and RIB-2 ride fibers 1 and 2."""
    b = Bundle().fiber_type(SINGLE_MODE)
    b.structure("RW", 0).structure("RM", 800).structure("RE", 1500)
    b.span("RS1", "RW", "RM", 800.0).span("RS2", "RM", "RE", 700.0)
    b.panel("PA", "RW").panel("PZ", "RE").closure("JR", "RM")
    b.cable("RA", ["RS1"], [("PA", 0.0), ("JR", 800.0)], kind="ribbon")
    b.cable("RB", ["RS2"], [("JR", 0.0), ("PZ", 700.0)], kind="ribbon")
    for n in range(1, 13):
        loss = 0.06 if n == 1 else None
        b.splice("JR", f"RA:{n}", f"RB:{n}", slot=n, method="mass_fusion", loss_db=loss)
    for n in (1, 2):
        b.terminate(f"RA:{n}", f"PA:{n}", method="field_connector")
        b.terminate(f"RB:{n}", f"PZ:{n}", method="field_connector")
    b.circuit("RIB-1", "PA:1", "PZ:1").circuit("RIB-2", "PA:2", "PZ:2")
    return b


def test_a_mass_fusion_splice_counts_once_per_fiber(database: Database) -> None:
    """CONTRACT "How expected loss is counted", rule 2: each fiber of a mass-fusion splice is
    a splice. A path on one fiber of the ribbon joint carries one splice allowance, not twelve
    and not none. Worked by hand:

      maximum (ANSI/TIA-568.3-D), both wavelengths: 1.5 km x 0.5 + 1 x 0.3 + 2 x 0.75
        = 0.75 + 0.3 + 1.5 = 2.55 dB;
      typical, fiber 2 (catalogue mass-fusion 0.15 dB per fiber, trade):
        1310: 1.5 x 0.35 + 0.15 + 2 x 0.3 = 0.525 + 0.15 + 0.6 = 1.275 dB
        1550: 1.5 x 0.22 + 0.15 + 2 x 0.3 = 0.330 + 0.15 + 0.6 = 1.080 dB;
      typical, fiber 1 (its own measurement, 0.06 dB): 1310: 0.525 + 0.06 + 0.6 = 1.185 dB.
    """
    _load(database, _ribbon_joint())
    two = _loss(database, "circuit", "RIB-2")
    assert two["counts"] == {"splices": 1, "connector_pairs": 2, "splitters": 0}
    (splice,) = [i for i in two["wavelengths"]["1310"]["items"] if i["kind"] == "splice"]
    assert (splice["label"], splice["method"]) == ("JR tray 1 slot 2", "mass_fusion")
    assert (splice["max_db"], splice["typical_db"]) == (pytest.approx(0.3), pytest.approx(0.15))
    for nm in ("1310", "1550"):
        assert two["wavelengths"][nm]["max_db"] == pytest.approx(2.55)
    assert two["wavelengths"]["1310"]["typical_db"] == pytest.approx(1.275)
    assert two["wavelengths"]["1550"]["typical_db"] == pytest.approx(1.080)
    one = _loss(database, "circuit", "RIB-1")
    assert one["wavelengths"]["1310"]["typical_db"] == pytest.approx(1.185)
    assert one["wavelengths"]["1310"]["max_db"] == pytest.approx(2.55)
