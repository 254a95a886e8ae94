"""Writing outputs: the writer threads (OutputSink) and the Cloud-Optimized GeoTIFFs.

The COG checks use GDAL's own reader (through rasterio): GDAL reports
``LAYOUT=COG`` in the IMAGE_STRUCTURE metadata only for a file whose header
and tile order follow the COG layout (GDAL COG driver documentation). All
data is invented.
"""

from __future__ import annotations

import threading
from pathlib import Path

import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin
from rasterio.windows import Window

from geomelt.classes import SCHEMES
from geomelt.io.geotiff import WORKING_SUFFIX, GeoTiffWriter
from geomelt.io.rasters import RasterGrid
from geomelt.pipeline.writing import OutputSink
from tests.conftest import LAEA


def _grid(width: int, height: int) -> RasterGrid:
    return RasterGrid(
        crs=rasterio.crs.CRS.from_user_input(LAEA),
        transform=from_origin(-1_000_000, 800_000, 5000, 5000),
        width=width,
        height=height,
    )


class _Recorder:
    """Stands in for a GeoTiffWriter: records the windows it gets and the thread."""

    def __init__(self, fail_at: int | None = None):
        self.windows: list[tuple[int, int]] = []
        self.threads: set[str] = set()
        self.fail_at = fail_at

    def write(self, values, window) -> None:
        if self.fail_at is not None and len(self.windows) == self.fail_at:
            raise OSError(28, "No space left on device")
        self.windows.append((int(window.row_off), int(window.col_off)))
        self.threads.add(threading.current_thread().name)


def test_sink_writes_every_window_in_order_one_thread_per_file():
    writers = {f"out{i}": _Recorder() for i in range(5)}
    seen = {name: 0 for name in writers}
    sink = OutputSink(writers, threads=2, inspect=lambda n, v: seen.__setitem__(n, seen[n] + 1))
    windows = [Window(c, r, 4, 4) for r in range(0, 16, 4) for c in range(0, 16, 4)]
    for w in windows:
        sink.put(w, {name: np.zeros((4, 4), np.float32) for name in writers})
    sink.close()
    order = [(int(w.row_off), int(w.col_off)) for w in windows]
    for name, rec in writers.items():
        assert rec.windows == order, name  # same order on every run: same file bytes
        assert len(rec.threads) == 1, name  # a GDAL dataset is never shared by threads
        assert seen[name] == len(windows)
    assert len({t for rec in writers.values() for t in rec.threads}) == 2


def test_sink_flush_waits_for_queued_windows():
    writers = {"a": _Recorder(), "b": _Recorder()}
    sink = OutputSink(writers, threads=2)
    for r in range(3):
        sink.put(Window(0, r, 1, 1), {"a": np.zeros((1, 1)), "b": np.zeros((1, 1))})
    sink.flush()
    assert len(writers["a"].windows) == 3 and len(writers["b"].windows) == 3
    sink.close()


def test_sink_raises_the_writer_error_and_does_not_hang():
    writers = {"a": _Recorder(fail_at=2), "b": _Recorder()}
    sink = OutputSink(writers, threads=2)
    with pytest.raises(OSError, match="No space left"):
        for r in range(50):
            sink.put(Window(0, r, 1, 1), {"a": np.zeros((1, 1)), "b": np.zeros((1, 1))})
        sink.close()
    sink.abandon()


@pytest.mark.parametrize(
    ("dtype", "scheme", "compression"),
    [("float32", None, "ZSTD"), ("uint8", "setting", "DEFLATE")],
    ids=["float", "classes"],
)
def test_writer_makes_a_cloud_optimized_geotiff(tmp_path: Path, dtype, scheme, compression):
    grid = _grid(600, 520)  # larger than one 256-cell tile: the COG needs overviews
    rng = np.random.default_rng(7)
    if dtype == "float32":
        data = rng.normal(30.0, 5.0, grid.shape).astype(np.float32)
        data[:40, :40] = np.nan
        nodata = float("nan")
    else:
        codes = [e.code for e in SCHEMES[scheme].entries]
        data = rng.choice(codes, size=grid.shape).astype(np.uint8)
        nodata = 255
    staging = tmp_path / "staging"
    writer = GeoTiffWriter(
        tmp_path / "quantity.tif",
        staging,
        grid,
        dtype=dtype,
        nodata=nodata,
        description="quantity",
        unit="km",
        band_tags={"source": "invented"},
        block_size=256,
        categorical=scheme is not None,
        scheme=SCHEMES[scheme] if scheme else None,
    )
    for w in grid.windows(256):
        r, c = int(w.row_off), int(w.col_off)
        writer.write(data[r : r + int(w.height), c : c + int(w.width)], w)
    assert (staging / f"quantity{WORKING_SUFFIX}").exists()
    final = writer.finish()
    assert not any(staging.iterdir())  # working and staged copies are gone
    with rasterio.open(final) as ds:
        structure = ds.tags(ns="IMAGE_STRUCTURE")
        assert structure["LAYOUT"] == "COG"
        assert structure["COMPRESSION"] == compression
        assert ds.overviews(1) == [2, 4]
        assert ds.block_shapes[0] == (256, 256)
        np.testing.assert_array_equal(ds.read(1), data)  # lossless, NaN where NaN
        assert ds.descriptions[0] == "quantity" and ds.units[0] == "km"
        assert ds.tags(1)["source"] == "invented"
        expected = "nearest" if scheme else "average"
        assert ds.tags(1)["overview_resampling"] == expected
        if scheme:
            assert ds.colormap(1)[int(codes[0])][3] == 255


def test_aborted_writer_leaves_nothing(tmp_path: Path):
    grid = _grid(64, 48)
    staging = tmp_path / "staging"
    writer = GeoTiffWriter(tmp_path / "q.tif", staging, grid, block_size=16)
    writer.write(np.ones(grid.shape, np.float32), Window(0, 0, 64, 48))
    writer.abort()
    assert not any(staging.iterdir()) and not (tmp_path / "q.tif").exists()
