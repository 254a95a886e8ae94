"""Engines and windowing never change a pixel: serial, threads, dask; any block size."""

from __future__ import annotations

import numpy as np
import pytest
import rasterio

from geomelt.io.config import load_config
from geomelt.pipeline import execute_run, plan_run


def run(cfg_path, out, **kw):
    cfg = load_config(cfg_path)
    block = kw.pop("block_size", None)
    if block:
        cfg = cfg.with_overrides(run={"block_size": block})
    execute_run(plan_run(cfg), out, **kw)
    return out


def assert_same_pixels(a_dir, b_dir):
    names = sorted(p.name for p in a_dir.glob("*.tif"))
    assert names == sorted(p.name for p in b_dir.glob("*.tif"))
    assert len(names) > 20
    for name in names:
        with rasterio.open(a_dir / name) as a, rasterio.open(b_dir / name) as b:
            x, y = a.read(1), b.read(1)
            assert a.nodata == b.nodata or (np.isnan(a.nodata) and np.isnan(b.nodata))
            np.testing.assert_array_equal(x, y, err_msg=name)


@pytest.fixture(scope="module")
def reference(tiny_region_module, tmp_path_factory):
    # One window covering the whole grid: the whole-array result.
    out = tmp_path_factory.mktemp("whole") / "out"
    return run(tiny_region_module, out, engine="serial", block_size=64)


def test_streaming_equals_whole_array(tiny_region_module, reference, tmp_path):
    out = run(tiny_region_module, tmp_path / "s", engine="serial", block_size=16)
    assert_same_pixels(reference, out)


def test_threads_equal_serial(tiny_region_module, reference, tmp_path):
    out = run(tiny_region_module, tmp_path / "t", engine="threads", workers=2, block_size=16)
    assert_same_pixels(reference, out)


def test_dask_local_cluster_equals_serial(tiny_region_module, reference, tmp_path):
    pytest.importorskip("dask.distributed")
    out = run(
        tiny_region_module,
        tmp_path / "d",
        engine="dask",
        workers=2,
        scheduler="local",
        block_size=32,
    )
    assert_same_pixels(reference, out)


def test_unknown_engine_is_refused(tiny_region_module, tmp_path):
    from geomelt.errors import GeomeltError

    with pytest.raises(GeomeltError, match="unknown engine"):
        run(tiny_region_module, tmp_path / "x", engine="gpu")


def test_row_bands_change_no_pixel(tiny_region_module, reference, tmp_path, monkeypatch):
    # A window is computed in bands of whole rows (COMPUTE_BAND_CELLS); bands of one row
    # must give the pixels of the whole window (every registered algorithm is cellwise).
    from geomelt.pipeline import engines

    monkeypatch.setattr(engines, "COMPUTE_BAND_CELLS", 100)  # 1 row of the 64-cell grid
    out = run(tiny_region_module, tmp_path / "b", engine="serial", block_size=64)
    assert_same_pixels(reference, out)


def test_bands_only_for_cellwise_algorithms(monkeypatch):
    from geomelt.algorithms import Algorithm, registered_algorithms
    from geomelt.pipeline import engines

    monkeypatch.setattr(engines, "COMPUTE_BAND_CELLS", 8)  # bands of 2 rows of 4 cells
    seen: dict[str, list] = {"cellwise": [], "window": []}

    def fake(key, cellwise):
        def compute(arrays, _params):
            x = arrays["x"]
            seen[key].append(x.shape)
            return {f"{key}_out": x * 2.0}

        return Algorithm(
            id=key,
            version="0",
            title=key,
            description=key,
            inputs=("x",),
            parameters=registered_algorithms()["thermal_state"].parameters,
            outputs=lambda _p: (),
            compute=compute,
            cellwise=cellwise,
        )

    x = np.arange(24.0).reshape(6, 4)
    params = {"cellwise": None, "window": None}
    arrays = {"x": x}
    engines._run_in_bands([fake("cellwise", True)], arrays, params, None, {"cellwise_out"})
    assert seen["cellwise"] == [(2, 4)] * 3
    np.testing.assert_array_equal(arrays["cellwise_out"], 2.0 * x)
    arrays = {"x": x}
    engines._run_in_bands(
        [fake("cellwise", True), fake("window", False)], arrays, params, None, {"window_out"}
    )
    assert seen["window"] == [(6, 4)]  # a stage with a non-cellwise algorithm is not split


def test_runs_bound_gdal_block_cache_in_mib(tiny_region_module, tmp_path, monkeypatch):
    # rasterio hands an integer GDAL_CACHEMAX to GDALSetCacheMax64, which counts bytes
    # (GDAL C API documentation of GDALSetCacheMax64): the bound must be given in bytes,
    # during planning (value pre-scans) as during the run.
    from rasterio.env import get_gdal_config

    from geomelt.pipeline import engines, runner

    expected = engines.GDAL_CACHE_MIB * 1024 * 1024
    with engines.bounded_gdal_cache():
        assert get_gdal_config("GDAL_CACHEMAX") == expected
    seen = []
    original = runner.check_raster_values

    def spy(*args, **kwargs):
        seen.append(get_gdal_config("GDAL_CACHEMAX"))
        return original(*args, **kwargs)

    monkeypatch.setattr(runner, "check_raster_values", spy)
    plan_run(load_config(tiny_region_module))
    assert seen and set(seen) == {expected}
