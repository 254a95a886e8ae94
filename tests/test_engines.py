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
