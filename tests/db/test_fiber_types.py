"""The fiber types' values: a fiber type's own figures beat the catalogue, and say so.

Sources: ANSI/TIA-568.3-D outside-plant single-mode cabled maximum 0.5 dB/km at 1310 and 1550
nm (seen); ITU-T G.652.D cabled maximum 0.40 dB/km across 1310-1625 nm (seen); light guidance
by the textbook relations (physics) with the textbook worked example n1 = 1.50, n2 = 1.47 ->
NA 0.2985, acceptance half-angle 17.37 deg, critical angle 78.52 deg (recomputed).
"""

from __future__ import annotations

import copy
import json
import math
from pathlib import Path

from tests.conftest import PlantCli
from tests.networks import SINGLE_MODE, ashgrove


def _load(plant: PlantCli, tmp_path: Path, data: dict) -> None:
    file = tmp_path / "bundle.json"
    file.write_text(json.dumps(data))
    result = plant("load", str(file))
    assert result.exit_code == 0, result.output


def _own_values_plant() -> dict:
    """Ashgrove with its fiber type measured better than the standard's maximum at 1310 nm
    (0.45 dB/km), nothing of its own at 1625 nm, and its own core and cladding indices."""
    bundle = ashgrove().data
    fiber = copy.deepcopy(SINGLE_MODE)
    fiber["attenuation_db_per_km"]["1310"]["max"] = 0.45
    fiber["core_index"], fiber["cladding_index"] = 1.50, 1.47
    bundle["fiber_types"] = [fiber]
    return bundle


def test_a_fiber_types_own_value_is_used_and_named(plant: PlantCli, tmp_path: Path) -> None:
    _load(plant, tmp_path, _own_values_plant())
    (fiber,) = plant.json("fiber-types")["fiber_types"]
    at_1310 = fiber["wavelengths"]["1310"]["max_db_per_km"]
    assert at_1310 == {"value": 0.45, "source": "record"}
    # Nothing recorded at 1625 nm: the standard's catalogue value, G.652.D 0.40 dB/km (seen).
    at_1625 = fiber["wavelengths"]["1625"]["max_db_per_km"]
    assert at_1625["value"] == 0.40 and at_1625["source"].startswith("catalogue: ")
    assert "G.652.D" in at_1625["source"]

    # The loss count takes the record's 0.45, not TIA's 0.5: AG-1 runs 1.02 km of F-1 between
    # two pigtail splices (2 x 0.3 dB) and two connector pairs (2 x 0.75 dB), ANSI/TIA-568.3-D.
    loss = plant.json("loss", "--circuit", "AG-1")
    at = loss["wavelengths"]["1310"]
    assert math.isclose(at["max_db"], 1.02 * 0.45 + 2 * 0.3 + 2 * 0.75, abs_tol=1e-9)
    (piece,) = [i for i in at["items"] if i["kind"] == "fiber"]
    assert "(record)" in piece["max_source"]
    # At 1550 nm the record again gives TIA's 0.5 dB/km itself.
    assert math.isclose(loss["wavelengths"]["1550"]["max_db"], 1.02 * 0.5 + 0.6 + 1.5)


def test_light_guidance_from_the_recorded_indices(plant: PlantCli, tmp_path: Path) -> None:
    _load(plant, tmp_path, _own_values_plant())
    (fiber,) = plant.json("fiber-types")["fiber_types"]
    guide = fiber["light_guidance"]
    assert guide["source"] == "record"
    # Textbook worked example (recomputed): n1 = 1.50, n2 = 1.47.
    assert math.isclose(guide["numerical_aperture"], 0.2985, abs_tol=5e-5)
    assert math.isclose(guide["acceptance_half_angle_deg"], 17.37, abs_tol=5e-3)
    assert math.isclose(guide["critical_angle_deg"], 78.52, abs_tol=5e-3)
    assert math.isclose(guide["relative_index_difference"], 0.03 / 1.50, rel_tol=1e-12)
    text = plant("fiber-types").stdout
    assert "NA 0.298" in text and "critical angle 78.5 deg" in text
    assert "0.50" in text and "0.45" in text


def test_without_indices_the_catalogue_nominal_ones_are_named(
    plant: PlantCli, tmp_path: Path
) -> None:
    _load(plant, tmp_path, ashgrove().data)
    (fiber,) = plant.json("fiber-types")["fiber_types"]
    guide = fiber["light_guidance"]
    assert guide["source"].startswith("catalogue nominal indices")
    n1, n2 = guide["core_index"], guide["cladding_index"]
    assert math.isclose(guide["numerical_aperture"], math.sqrt(n1 * n1 - n2 * n2))
    # Standard single-mode fiber's NA is about 0.12-0.14 (common practice).
    assert 0.10 < guide["numerical_aperture"] < 0.15
