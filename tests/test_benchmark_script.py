"""Smoke test of processing_scripts/benchmark.py on a tiny grid (well under a minute)."""

from __future__ import annotations

import json
import math
import subprocess
import sys
import time
from pathlib import Path

import pytest

SCRIPT = Path(__file__).resolve().parents[1] / "processing_scripts" / "benchmark.py"


def _positive(value) -> bool:
    return isinstance(value, (int, float)) and math.isfinite(value) and value > 0


@pytest.fixture(scope="module")
def tiny_benchmark(tmp_path_factory):
    out = tmp_path_factory.mktemp("bench")
    cmd = [
        sys.executable,
        str(SCRIPT),
        "--sizes", "256",
        "--repeats", "1",
        "--sample-cells", "5",
        "--skip-dask",
        "--out", str(out),
    ]  # fmt: skip
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    elapsed = time.perf_counter() - t0
    assert proc.returncode == 0, proc.stdout[-2000:] + proc.stderr[-2000:]
    return out, proc.stdout, elapsed


def test_finishes_quickly(tiny_benchmark):
    _, _, elapsed = tiny_benchmark
    assert elapsed < 60.0


def test_json_has_every_measurement(tiny_benchmark):
    out, _, _ = tiny_benchmark
    text = (out / "benchmark.json").read_text()
    report = json.loads(text, parse_constant=lambda c: pytest.fail(f"non-JSON constant {c}"))
    assert {"command", "environment", "settings", "targets", "sizes"} <= set(report)
    entry = report["sizes"]["256"]
    assert entry["inputs"]["total_cells"] == 256 * 256
    assert entry["inputs"]["valid_cells"] > 0
    ms = entry["measurements"]
    assert set(ms) == {"io_floor", "geomelt", "per_cell"}
    for kind, m in ms.items():
        for key in ("wall_s", "peak_rss_mib"):
            for stat in ("min", "median", "max"):
                assert _positive(m[key][stat]), (kind, key, stat, m[key])
        assert m["wall_s"]["min"] <= m["wall_s"]["median"] <= m["wall_s"]["max"]
        assert len(m["per_repeat"]) == 1
    assert _positive(ms["per_cell"]["per_cell_s"]["median"])
    assert _positive(ms["per_cell"]["extrapolated_s"]["median"])
    assert ms["per_cell"]["per_repeat"][0]["child"]["cells"] == 5
    for kind in ("io_floor", "geomelt"):
        rep = ms[kind]["per_repeat"][0]
        assert rep["out_files"] > 10
        assert _positive(rep["out_bytes"])
    # the floor writes as many GeoTIFFs as the run
    assert (
        ms["io_floor"]["per_repeat"][0]["out_files"] == ms["geomelt"]["per_repeat"][0]["out_files"]
    )
    # ... and, replaying the reference run, its quick-looks, GeoPackage and report
    floor_products = ms["io_floor"]["per_repeat"][0]["child"]["products"]
    assert floor_products["png_files"] > 10
    assert floor_products["copied"] == ["results.gpkg", "report.html"]
    ratios = entry["ratios"]
    assert set(ratios) == {"b_over_a", "c_over_b"}
    for r in ratios.values():
        assert _positive(r["from_medians"])
        assert all(_positive(v) for v in r["per_repeat"])
    targets = entry["targets"]
    assert {"run_over_io_floor", "speedup_over_per_cell", "geomelt_peak_rss_mib"} <= set(targets)
    assert "dask_over_run" not in targets


def test_per_cell_path_matches_the_run(tiny_benchmark):
    out, _, _ = tiny_benchmark
    report = json.loads((out / "benchmark.json").read_text())
    child = report["sizes"]["256"]["measurements"]["per_cell"]["per_repeat"][0]["child"]
    agreement = child["agreement_with_run"]
    assert agreement["lab_depth_km"]["nodata_mismatch"] == 0
    assert agreement["lab_depth_km"]["max_abs_diff"] < 0.01  # km
    assert agreement["melt_thickness_km"]["max_abs_diff"] < 0.05  # km


def test_prints_the_table(tiny_benchmark):
    _, stdout, _ = tiny_benchmark
    assert "(a) I/O floor" in stdout
    assert "ratio b/a" in stdout
    assert "target speedup_over_per_cell" in stdout


def test_generator_scale_gives_square_cells():
    sys.path.insert(0, str(SCRIPT.parent))
    try:
        from benchmark import generator_scale
    finally:
        sys.path.remove(str(SCRIPT.parent))
    for size in (256, 4096, 8192):
        scale, width, height = generator_scale(size)
        assert height >= size and width >= size
        assert round(400 * float(scale)) == width and round(300 * float(scale)) == height
        assert 3 * width == 4 * height
