"""The splicing rules, on SQLite and PostgreSQL: what is spliced, refused, warned about.

The network is `larkspur()` (tests/networks.py): closure LC-1 with 2 trays of 24 slots, where
C-A:48 is already spliced to C-B:48 in tray 2 slot 24.
"""

from __future__ import annotations

from typing import Any

import pytest
from sqlalchemy import func, select

from plantdb.db import Database, run_in_transaction
from plantdb.model import Circuit, Cut, Splice
from plantdb.records.bundle import dump_bundle, load_bundle
from plantdb.records.splice_edits import move_splices, remove_splices
from plantdb.records.splicing import SpliceReport, SpliceRequest, end_group, record_splices
from tests.conftest import PlantCli
from tests.networks import ashgrove, larkspur


@pytest.fixture
def yard(database: Database) -> Database:
    """The larkspur network loaded into a fresh database."""
    run_in_transaction(database, lambda s: load_bundle(s, larkspur().data))
    return database


def request(a: str, b: str, tray: int = 1, slot: int = 1, **extra: Any) -> SpliceRequest:
    sides = {k: extra.pop(k) for k in ("a_side", "b_side") if k in extra}
    return SpliceRequest(
        closure=extra.pop("closure", "LC-1"),
        tray=tray,
        slot=slot,
        a=end_group(a, sides.get("a_side")),
        b=end_group(b, sides.get("b_side")),
        **extra,
    )


def splice(database: Database, *requests: SpliceRequest, dry_run: bool = False) -> SpliceReport:
    return run_in_transaction(
        database, lambda s: record_splices(s, list(requests), dry_run=dry_run)
    )


def recorded(database: Database) -> list[dict[str, Any]]:
    with database.read() as session:
        return dump_bundle(session).get("splices", [])


def count(database: Database, model: Any) -> int:
    with database.read() as session:
        return session.scalar(select(func.count()).select_from(model)) or 0


def refused(database: Database, *requests: SpliceRequest) -> list[str]:
    """The problems of a refused batch, after checking that nothing was written."""
    before = recorded(database)
    report = splice(database, *requests)
    assert report.problems and report.added == 0
    assert recorded(database) == before
    return report.problems


# -- what is spliced ---------------------------------------------------------------------


def test_a_range_splices_to_a_range_with_slots_counting_up(yard: Database) -> None:
    report = splice(yard, request("C-A:13-24", "C-B:1-12", tray=1, slot=1))
    assert report.problems == [] and report.added == 12
    new = [s for s in recorded(yard) if s["tray"] == 1]
    assert [(s["a"], s["b"], s["slot"]) for s in new] == [
        (f"C-A:{13 + i}", f"C-B:{1 + i}", 1 + i) for i in range(12)
    ]
    assert {s["method"] for s in new} == {"fusion"}


def test_a_whole_tube_splices_to_a_tube(yard: Database) -> None:
    report = splice(yard, request("C-A:tube 3", "C-B:tube GR", tray=1, slot=13))
    assert report.added == 12
    pairs = {(s["a"], s["b"]) for s in recorded(yard) if s["tray"] == 1}
    assert pairs == {(f"C-A:{n}", f"C-B:{n}") for n in range(25, 37)}


def test_a_ribbon_to_a_ribbon_is_mass_fusion_one_slot_per_fiber(yard: Database) -> None:
    report = splice(yard, request("R-1:ribbon 1", "R-2:ribbon BL", tray=2, slot=1))
    assert report.added == 12 and report.warnings == []
    ribbon = [s for s in recorded(yard) if s["a"].startswith("R-1:")]
    assert {s["method"] for s in ribbon} == {"mass_fusion"}
    assert sorted(s["slot"] for s in ribbon) == list(range(1, 13))


def test_a_strand_splices_to_a_splitter_leg(yard: Database) -> None:
    report = splice(yard, request("C-A:2", "LS-1:in", tray=1, slot=3))
    assert report.added == 1
    assert {"a": "C-A:2", "b": "LS-1:in"}.items() <= recorded(yard)[-1].items()


def test_splicing_a_side_at_a_mid_span_access_records_the_cut(yard: Database) -> None:
    before = count(yard, Cut)
    report = splice(yard, request("C-T:5", "C-B:5", a_side="A", tray=1, slot=4))
    assert report.added == 1 and report.cuts == 1
    assert count(yard, Cut) == before + 1
    # The other piece of the same strand, spliced later, needs no second cut.
    again = splice(yard, request("C-T:5/B", "C-B:6", tray=1, slot=5))
    assert again.added == 1 and again.cuts == 0


def test_a_dry_run_checks_everything_and_writes_nothing(yard: Database) -> None:
    report = splice(yard, request("C-A:13-24", "C-B:1-12"), dry_run=True)
    assert report.added == 0 and len(report.splices) == 12 and report.problems == []
    assert count(yard, Splice) == 1


# -- what is refused, naming the strand --------------------------------------------------


def test_refuses_a_strand_outside_its_cable(yard: Database) -> None:
    assert refused(yard, request("C-A:49", "C-B:2")) == [
        "C-A:49: the cable has strands 1-48, so no strand 49"
    ]


def test_refuses_a_cable_with_no_station_in_the_closure(yard: Database) -> None:
    assert refused(yard, request("C-X:1", "C-B:2")) == [
        "C-X:1: cable C-X has no station in closure LC-1"
    ]


def test_refuses_an_end_already_spliced(yard: Database) -> None:
    assert refused(yard, request("C-A:48", "C-B:2")) == [
        "C-A:48 is already spliced to C-B:48 (tray 2 slot 24)"
    ]


def test_refuses_an_end_already_terminated(yard: Database) -> None:
    assert refused(yard, request("C-A:3", "LS-2:1")) == ["LS-2:1 at LC-1 is already terminated"]


def test_refuses_a_tray_that_does_not_exist(yard: Database) -> None:
    assert refused(yard, request("C-A:3", "C-B:3", tray=3)) == [
        "closure LC-1 has trays 1-2, no tray 3"
    ]


def test_refuses_a_slot_taken(yard: Database) -> None:
    assert refused(yard, request("C-A:3", "C-B:3", tray=2, slot=24)) == [
        "tray 2 slot 24 at LC-1 is taken: it holds C-A:48 to C-B:48"
    ]


def test_refuses_slots_past_the_trays_capacity(yard: Database) -> None:
    assert refused(yard, request("C-A:13-24", "C-B:1-12", tray=1, slot=20)) == [
        "tray 1 of LC-1 has slots 1-24, so no slots 20-31"
    ]


def test_refuses_ranges_of_different_sizes(yard: Database) -> None:
    assert refused(yard, request("C-A:13-24", "C-B:1-10")) == [
        "C-A:13-24 names 12 but C-B:1-10 names 10; a range must be spliced to a range of the"
        " same size"
    ]


def test_refuses_a_strand_spliced_to_itself(yard: Database) -> None:
    assert refused(yard, request("C-T:7/A", "C-T:7/B")) == [
        "C-T:7/A would be spliced to C-T:7/B, the same strand"
    ]


@pytest.mark.parametrize("loss", [-0.05, 5.5])
def test_refuses_a_negative_or_absurd_loss(yard: Database, loss: float) -> None:
    (problem,) = refused(yard, request("C-A:3", "C-B:3", loss_db=loss))
    assert problem.startswith(f"loss_db {loss:g} dB is not a splice loss (0 to 5 dB")


def test_a_loss_of_exactly_5_db_is_accepted(yard: Database) -> None:
    # Only a loss over 5 dB is refused as absurd; 5 dB itself is recorded, and warned about
    # as above the 0.3 dB splice allowance of ANSI/TIA-568.3-D (value from memory).
    report = splice(yard, request("C-A:3", "C-B:3", loss_db=5.0))
    assert report.problems == [] and report.added == 1
    assert recorded(yard)[-1]["loss_db"] == 5.0
    (warning,) = report.warnings
    assert warning.startswith("loss 5 dB is above the 0.3 dB splice allowance")


def test_refuses_a_mid_span_strand_without_a_side_naming_both_pieces(yard: Database) -> None:
    (problem,) = refused(yard, request("C-T:8", "C-B:8"))
    assert "C-T:8/A (toward LK-P1) or C-T:8/B (toward LK-P3)" in problem


def test_refuses_the_whole_batch_when_any_request_is_bad(yard: Database) -> None:
    problems = refused(
        yard,
        request("C-A:2", "C-B:2", slot=1),
        request("C-A:3", "C-B:3", slot=1),  # the same slot again
        request("C-A:2", "C-B:4", slot=2),  # C-A:2 again
    )
    assert problems == [
        "tray 1 slot 1 at LC-1 is already used on another splice of this request",
        "C-A:2 is already spliced on another splice of this request",
    ]


# -- what is warned about, but allowed --------------------------------------------------


def test_warns_of_single_mode_spliced_to_multimode(yard: Database) -> None:
    # C-A:3 and M-1:3 are both blue/green (TIA-598): only the mode differs.
    report = splice(yard, request("C-A:3", "M-1:3"))
    assert report.added == 1
    assert report.warnings == [
        "mode mix: C-A:3 is single-mode but M-1:3 is multimode; light will not cross this"
        " splice as the record expects"
    ]


def test_warns_of_a_colour_change(yard: Database) -> None:
    # TIA-598: fiber 2 is orange, fiber 3 green; both in tube 1, blue.
    report = splice(yard, request("C-A:2", "C-B:3"))
    assert report.added == 1
    assert report.warnings == [
        "colour change: C-A:2 (blue/orange) to C-B:3 (blue/green) by the TIA-598 colour code"
    ]


def test_warns_once_per_row_of_a_tube_colour_change(yard: Database) -> None:
    # TIA-598: tube 2 is orange, tube 1 blue; the fibers match position for position.
    report = splice(yard, request("C-A:13-24", "C-B:1-12"))
    assert report.warnings == [
        "colour change: C-A:13 (orange/blue) to C-B:1 (blue/blue) by the TIA-598 colour code"
        " (and 11 more on this row)"
    ]


def test_warns_of_a_loss_above_the_splice_allowance(yard: Database) -> None:
    # ANSI/TIA-568.3-D splice maximum 0.3 dB (memory, see the catalogue).
    report = splice(yard, request("C-A:4", "C-B:4", loss_db=0.45))
    assert report.added == 1
    (warning,) = report.warnings
    assert warning.startswith("loss 0.45 dB is above the 0.3 dB splice allowance")
    assert "ANSI/TIA-568.3-D" in warning
    assert recorded(yard)[-1]["loss_db"] == 0.45


def test_a_loss_at_the_allowance_is_not_warned_about(yard: Database) -> None:
    assert splice(yard, request("C-A:4", "C-B:4", loss_db=0.3)).warnings == []


# -- corrections ---------------------------------------------------------------------------


def test_removing_a_splice_frees_its_ends_and_slot(yard: Database) -> None:
    report = run_in_transaction(yard, lambda s: remove_splices(s, "LC-1", 2, [24]))
    assert report.removed == 1 and report.problems == []
    assert recorded(yard) == []
    assert splice(yard, request("C-A:48", "C-B:1", tray=2, slot=24)).added == 1


def test_removing_an_empty_slot_is_refused(yard: Database) -> None:
    report = run_in_transaction(yard, lambda s: remove_splices(s, "LC-1", 2, [23, 24]))
    assert report.problems == ["tray 2 slot 23 at LC-1 holds no splice"]
    assert count(yard, Splice) == 1


def test_removing_a_mid_span_splice_leaves_the_strand_cut(yard: Database) -> None:
    splice(yard, request("C-T:9/B", "C-B:9", slot=9))
    report = run_in_transaction(yard, lambda s: remove_splices(s, "LC-1", 1, [9]))
    assert report.notes == ["these pieces stay cut at LC-1, now unconnected: C-T:9/B"]
    assert count(yard, Cut) == 1


def test_moving_splices_to_another_tray(yard: Database) -> None:
    report = run_in_transaction(yard, lambda s: move_splices(s, "LC-1", 2, [24], 1, 7))
    assert report.moved == 1
    (moved,) = recorded(yard)
    assert (moved["tray"], moved["slot"], moved["a"]) == (1, 7, "C-A:48")


def test_moving_a_range_up_by_one_slot_within_its_tray(yard: Database) -> None:
    splice(yard, request("C-A:13-24", "C-B:1-12", slot=1))
    report = run_in_transaction(
        yard, lambda s: move_splices(s, "LC-1", 1, list(range(1, 13)), 1, 2)
    )
    assert report.moved == 12
    slots = {s["a"]: s["slot"] for s in recorded(yard) if s["tray"] == 1}
    assert slots == {f"C-A:{13 + i}": 2 + i for i in range(12)}


def test_moving_onto_a_taken_slot_is_refused(yard: Database) -> None:
    splice(yard, request("C-A:2", "C-B:2", tray=1, slot=1))
    report = run_in_transaction(yard, lambda s: move_splices(s, "LC-1", 1, [1], 2, 24))
    assert report.problems == ["tray 2 slot 24 at LC-1 is taken: it holds C-A:48 to C-B:48"]
    assert {(s["tray"], s["slot"]) for s in recorded(yard)} == {(1, 1), (2, 24)}


# -- the command line ----------------------------------------------------------------------


def test_splice_command_splices_a_range_in_one_step(yard: Database, plant: PlantCli) -> None:
    result = plant(
        "splice", "--closure", "LC-1", "--a", "C-A:13-24", "--b", "C-B:1-12",
        "--tray", "1", "--slot", "1", "--loss-db", "0.02",
    )  # fmt: skip
    assert result.exit_code == 0, result.output
    assert "added 12 splices" in result.stdout
    assert "warning: colour change: C-A:13 (orange/blue) to C-B:1 (blue/blue)" in result.stdout
    assert count(yard, Splice) == 13


def test_splice_command_refuses_with_exit_1_naming_the_strand(
    yard: Database, plant: PlantCli
) -> None:
    result = plant(
        "splice", "--closure", "LC-1", "--a", "C-A:48", "--b", "C-B:7",
        "--tray", "1", "--slot", "1",
    )  # fmt: skip
    assert result.exit_code == 1
    assert "C-A:48 is already spliced to C-B:48 (tray 2 slot 24)" in result.stderr
    assert count(yard, Splice) == 1


def test_side_options_and_json_report(yard: Database, plant: PlantCli) -> None:
    document = plant.json(
        "splice", "--closure", "LC-1", "--a", "C-T:10", "--a-side", "b", "--b", "C-B:10",
        "--tray", "1", "--slot", "10",
    )  # fmt: skip
    assert document["added"] == 1 and document["cuts"] == 1
    assert document["splices"][0]["a"] == "C-T:10/B"
    # C-T runs LK-P1 (its A end) -> LC-1 -> LC-2 -> LK-P3 (its B end).
    assert document["splices"][0]["a_toward"] == "LK-P3"
    assert "b_toward" not in document["splices"][0]  # C-B ends at LC-1: no side to name


def test_command_lines_say_which_way_a_mid_span_piece_runs(yard: Database, plant: PlantCli) -> None:
    # C-T passes through LC-1 from LK-P1 (A end) to LK-P3 (B end); C-B ends at LC-1.
    dry = plant(
        "splice", "--closure", "LC-1", "--a", "C-T:11/A", "--b", "C-B:11",
        "--tray", "1", "--slot", "11", "--dry-run",
    )  # fmt: skip
    assert dry.exit_code == 0, dry.output
    assert "LC-1 tray 1 slot 11: C-T:11/A (toward LK-P1) to C-B:11 (fusion)" in dry.stdout
    done = plant(
        "splice", "--closure", "LC-1", "--a", "C-B:12", "--b", "C-T:12", "--b-side", "B",
        "--tray", "1", "--slot", "12",
    )  # fmt: skip
    assert done.exit_code == 0, done.output
    assert "LC-1 tray 1 slot 12: C-B:12 to C-T:12/B (toward LK-P3) (fusion)" in done.stdout
    removed = plant("unsplice", "--closure", "LC-1", "--tray", "1", "--slot", "12")
    assert removed.exit_code == 0, removed.output
    assert "C-B:12 to C-T:12/B (toward LK-P3)" in removed.stdout


def test_unsplice_and_move_splice_commands(yard: Database, plant: PlantCli) -> None:
    moved = plant(
        "move-splice", "--closure", "LC-1", "--tray", "2", "--slot", "24",
        "--to-tray", "1", "--to-slot", "3",
    )  # fmt: skip
    assert moved.exit_code == 0 and "moved 1 splices" in moved.stdout
    removed = plant("unsplice", "--closure", "LC-1", "--tray", "1", "--slot", "3")
    assert removed.exit_code == 0 and "removed 1 splices" in removed.stdout
    assert count(yard, Splice) == 0
    empty = plant("unsplice", "--closure", "LC-1", "--tray", "1", "--slot", "3")
    assert empty.exit_code == 1
    assert "tray 1 slot 3 at LC-1 holds no splice" in empty.stderr


def test_splicing_and_unsplicing_keep_circuit_paths_current(database: Database) -> None:
    # ashgrove(): circuit AG-2 runs CO-P1:5 -> F-1:5/A -s(AC-1)- D-1:1 -> PR-P1:1.
    run_in_transaction(database, lambda s: load_bundle(s, ashgrove().data))

    def state() -> str:
        with database.read() as session:
            return str(session.scalar(select(Circuit.path_state).where(Circuit.label == "AG-2")))

    assert state() == "complete"
    run_in_transaction(database, lambda s: remove_splices(s, "AC-1", 1, [1]))
    assert state() == "incomplete"
    report = splice(database, request("F-1:5/A", "D-1:1", closure="AC-1", slot=2))
    assert report.added == 1 and state() == "complete"
