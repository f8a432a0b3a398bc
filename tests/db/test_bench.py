"""The benchmark suite runs end to end on a tiny synthetic plant (timings are not checked
here: they belong to `make bench`, never to the pass/fail run)."""

from __future__ import annotations

from tests.conftest import PlantCli


def test_bench_runs_every_benchmark_and_reports_the_documented_shape(plant: PlantCli) -> None:
    document = plant.json("bench", "--fibers", "2000", "--repeat", "1")
    assert document["fibers"] == 2000
    assert document["database"] in ("sqlite", "postgresql")
    names = [r["name"] for r in document["results"]]
    assert names == ["trace", "live", "impact", "map", "page", "import"]
    for result in document["results"]:
        assert set(result) >= {
            "name",
            "median_s",
            "baseline_median_s",
            "ratio",
            "target_ratio",
            "n",
        }
        assert result["median_s"] > 0
        assert (result["baseline_median_s"] is None) == (result["name"] == "page")
    assert document["peak_memory_mb"] > 0
    # A second run reuses the plant built by the first (same size and seed).
    again = plant.json("bench", "--fibers", "2000", "--repeat", "1", "--no-memory")
    assert [r["name"] for r in again["results"]] == names
    refused = plant("bench", "--fibers", "3000", "--repeat", "1", "--no-memory")
    assert refused.exit_code == 1 and "different record" in refused.stderr
