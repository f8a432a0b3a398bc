"""The trace, loss and check commands as a user runs them."""

from __future__ import annotations

import json
from pathlib import Path

from plantdb.safety import FIELD_VERIFY, TRACE_CAUTION
from tests.conftest import PlantCli
from tests.networks import ashgrove


def _load(plant: PlantCli, tmp_path: Path, data: dict) -> None:
    file = tmp_path / "bundle.json"
    file.write_text(json.dumps(data))
    result = plant("load", str(file))
    assert result.exit_code == 0, result.output


def test_trace_text_shows_colours_and_running_totals(plant: PlantCli, tmp_path: Path) -> None:
    _load(plant, tmp_path, ashgrove().data)
    result = plant("trace", "--circuit", "AG-2")
    assert result.exit_code == 0, result.output
    text = result.stdout
    # Strand 5 of a 12-per-tube cable: tube 1 blue, fiber 5 slate (ANSI/TIA-598).
    assert "F-1:5 blue/slate" in text
    assert "AC-1 tray 1 slot 1" in text
    assert "428.0" in text  # 305 m + 123 m running total
    assert "LIT" in text


def test_trace_json_is_the_contract_document(plant: PlantCli, tmp_path: Path) -> None:
    _load(plant, tmp_path, ashgrove().data)
    document = plant.json("trace", "--port", "CO-P1:1")
    assert document["start"] == "CO-P1:1"
    (path,) = document["paths"]
    assert path["end"] == {"kind": "open_port", "at": "CAB-P1:1"}
    fiber = path["elements"][1]
    for key in ("kind", "label", "at", "cable", "strand", "from_station", "to_station", "length_m"):
        assert key in fiber


def test_a_trace_says_to_verify_in_the_field(plant: PlantCli, tmp_path: Path) -> None:
    """A trace marks strands lit or not: an unlit mark is never a clearance, so the document
    and the text end with the field-verification caution."""
    _load(plant, tmp_path, ashgrove().data)
    document = plant.json("trace", "--circuit", "AG-2")
    assert document["caution"] == TRACE_CAUTION and FIELD_VERIFY in TRACE_CAUTION
    text = plant("trace", "--fiber", "F-1:7").stdout
    assert " ".join(text.split()).endswith(" ".join(f"caution: {TRACE_CAUTION}".split()))


def test_loss_command_prints_both_bases(plant: PlantCli, tmp_path: Path) -> None:
    _load(plant, tmp_path, ashgrove().data)
    document = plant.json("loss", "--circuit", "AG-1")
    # 1.02 km x 0.5 + 2 pigtail splices x 0.3 + 2 pairs x 0.75 (ANSI/TIA-568.3-D).
    assert abs(document["wavelengths"]["1310"]["max_db"] - (0.51 + 0.6 + 1.5)) < 1e-9
    text = plant("loss", "--circuit", "AG-1").stdout
    assert "maximum dB" in text and "typical dB" in text and "2.61" in text


def test_refusals_are_one_line_and_exit_1(plant: PlantCli, tmp_path: Path) -> None:
    _load(plant, tmp_path, ashgrove().data)
    for argv in (
        ["trace", "--port", "XX:1"],
        ["trace", "--fiber", "F-1:0"],
        ["loss", "--circuit", "NOPE"],
        ["loss", "--circuit", "AG-1", "--wavelength", "850"],
    ):
        result = plant(*argv)
        assert result.exit_code == 1, argv
        assert result.stderr.startswith("plantdb: ")
        assert "Traceback" not in result.output
    # Usage errors exit 2 (the contract's exit statuses), still as one plain line.
    for argv in (
        ["trace"],  # no start given
        ["trace", "--port", "AG-CO:1", "--circuit", "AG-1"],  # two starts
        ["impact"],  # no place given
        ["trace", "--bogus"],
    ):
        result = plant(*argv)
        assert result.exit_code == 2, argv
        assert "Traceback" not in result.output


def test_check_passes_a_sound_record_and_fails_a_broken_circuit(
    plant: PlantCli, tmp_path: Path
) -> None:
    _load(plant, tmp_path, ashgrove().data)
    assert plant("check").exit_code == 0
    broken = ashgrove()
    broken.data["circuits"] = [
        {"label": "AG-9", "kind": "backbone", "status": "active", "a": "CO-P1:9", "z": "CAB-P1:9"}
    ]
    for section in (
        "fiber_types",
        "structures",
        "spans",
        "closures",
        "panels",
        "cables",
        "splices",
        "terminations",
    ):
        broken.data.pop(section)
    _load(plant, tmp_path, broken.data)
    result = plant("check")
    assert result.exit_code == 1
    assert "AG-9" in result.stdout and "CO-P1:9" in result.stdout
