"""Alignment of inputs onto the reference grid, checked against GDAL's own warper.

Reference: ``rasterio.warp.reproject`` (GDAL warp) applied eagerly to the
whole raster must give the same pixels as geomelt's window-by-window lazy
reading through a WarpedVRT.
"""

from __future__ import annotations

import numpy as np
import pytest
import rasterio
from rasterio.enums import Resampling
from rasterio.transform import from_origin
from rasterio.warp import reproject

from geomelt.errors import InputLayerError, LayerMismatchError, MissingLayerError
from geomelt.io.rasters import AlignedRaster, RasterGrid, read_grid
from tests.conftest import LAEA, write_raster


@pytest.fixture
def reference_grid(tmp_path):
    arr = np.zeros((40, 56), dtype="float32")
    path = write_raster(
        tmp_path / "ref.tif", arr, transform=from_origin(-280_000, 200_000, 10_000, 10_000)
    )
    return read_grid(path, "crustal_thickness_km")


@pytest.fixture
def geographic_raster(tmp_path):
    """A smooth field on a 0.05 degree geographic grid around the LAEA centre, with a nodata hole."""
    lon = np.arange(-33.5, -26.5, 0.05)
    lat = np.arange(13.5, 6.5, -0.05)
    lo, la = np.meshgrid(lon, lat)
    field = (100.0 + 10.0 * np.sin(np.radians(lo) * 40) + 5.0 * la).astype("float32")
    field[60:70, 60:75] = -9999.0
    tr = from_origin(lon[0] - 0.025, lat[0] + 0.025, 0.05, 0.05)
    return write_raster(tmp_path / "geo.tif", field, crs="EPSG:4326", transform=tr, nodata=-9999.0)


def test_window_reads_match_gdal_reproject(reference_grid, geographic_raster):
    grid = reference_grid
    expected = np.full(grid.shape, np.nan, dtype="float32")
    with rasterio.open(geographic_raster) as src:
        reproject(
            rasterio.band(src, 1),
            expected,
            dst_transform=grid.transform,
            dst_crs=grid.crs,
            src_nodata=src.nodata,
            dst_nodata=np.nan,
            resampling=Resampling.bilinear,
        )
    got = np.full(grid.shape, np.nan)
    with AlignedRaster(geographic_raster, "slab_depth_km", grid) as ar:
        assert ar.reprojected
        for w in grid.windows(16):
            got[w.row_off : w.row_off + w.height, w.col_off : w.col_off + w.width] = ar.read(w)
    assert np.isnan(got).sum() > 0, "the nodata hole must stay nodata"
    np.testing.assert_array_equal(np.isnan(got), np.isnan(expected), err_msg="nodata masks differ")
    np.testing.assert_allclose(got, expected, rtol=1e-6, equal_nan=True)


def test_same_grid_is_read_directly_and_nodata_becomes_nan(tmp_path, reference_grid):
    arr = np.arange(40 * 56, dtype="int16").reshape(40, 56)
    arr[3, 4] = -1
    path = write_raster(tmp_path / "same.tif", arr, transform=reference_grid.transform, nodata=-1)
    with AlignedRaster(path, "heat_flow_mw_m2", reference_grid) as ar:
        assert not ar.reprojected
        out = ar.read()
    assert out.dtype == np.float64
    assert np.isnan(out[3, 4])
    assert out[0, 1] == 1.0


def test_windows_cover_grid_exactly(reference_grid):
    covered = np.zeros(reference_grid.shape, dtype=int)
    for w in reference_grid.windows(16):
        covered[w.row_off : w.row_off + w.height, w.col_off : w.col_off + w.width] += 1
    assert (covered == 1).all()


def test_missing_file_names_layer(tmp_path, reference_grid):
    with pytest.raises(MissingLayerError, match="heat_flow_mw_m2"):
        AlignedRaster(tmp_path / "nope.tif", "heat_flow_mw_m2", reference_grid)


def test_not_a_raster(tmp_path, reference_grid):
    bad = tmp_path / "notes.tif"
    bad.write_text("this is not a raster")
    with pytest.raises(InputLayerError, match="cannot be read as a raster"):
        AlignedRaster(bad, "heat_flow_mw_m2", reference_grid)


def test_raster_without_crs(tmp_path, reference_grid):
    path = write_raster(tmp_path / "nocrs.tif", np.ones((5, 5), "float32"), crs=None)
    with pytest.raises(LayerMismatchError, match="no coordinate reference system"):
        AlignedRaster(path, "slab_depth_km", reference_grid)


def test_no_overlap(tmp_path, reference_grid):
    far = write_raster(
        tmp_path / "far.tif",
        np.ones((5, 5), "float32"),
        crs="EPSG:4326",
        transform=from_origin(120.0, -40.0, 0.1, 0.1),
    )
    with pytest.raises(LayerMismatchError, match="does not overlap"):
        AlignedRaster(far, "slab_depth_km", reference_grid)


def test_grid_description_and_bounds():
    grid = RasterGrid(
        crs=rasterio.crs.CRS.from_string(LAEA),
        transform=from_origin(0, 100, 10, 10),
        width=3,
        height=2,
    )
    assert grid.bounds == (0, 80, 30, 100)
    assert "3 x 2 cells" in grid.describe()


@pytest.mark.parametrize("tiled", [True, False])
@pytest.mark.parametrize("shape", [(256, 256), (255, 97), (7, 3), (300, 300)])
def test_nearest_sample_equals_gdals_reduced_read(tmp_path, tiled, shape):
    # Reference: GDAL's own nearest-neighbour reduced read (RasterIO with out_shape),
    # under a cache too small to hold a row of blocks; nearest_sample reads strips of
    # full rows instead and must pick the same cells, with the same mask.
    from rasterio.env import Env

    from geomelt.io.rasters import nearest_sample

    rng = np.random.default_rng(1)
    data = rng.normal(30.0, 5.0, (1000, 777)).astype("float32")
    data[rng.random(data.shape) < 0.1] = -9999.0
    path = tmp_path / "r.tif"
    profile = dict(driver="GTiff", width=777, height=1000, count=1, dtype="float32")
    profile.update(crs=LAEA, transform=from_origin(0, 0, 1000, 1000), nodata=-9999.0)
    profile.update(compress="deflate")
    if tiled:
        profile.update(tiled=True, blockxsize=128, blockysize=128)
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(data, 1)
    shape = (min(shape[0], 1000), min(shape[1], 777))
    with rasterio.open(path) as ds, Env(GDAL_CACHEMAX=64 * 1024):
        want = ds.read(1, out_shape=shape, resampling=Resampling.nearest, masked=True)
        got = nearest_sample(ds, shape)
    assert got.shape == want.shape == shape
    np.testing.assert_array_equal(np.ma.getmaskarray(got), np.ma.getmaskarray(want))
    np.testing.assert_array_equal(got.filled(0.0), want.filled(0.0))
