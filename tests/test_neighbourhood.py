"""Whole-grid layers: distance to the nearest predicted melt, and true cell areas.

Reference values come from pyproj.Geod (Karney 2013, geodesics on the WGS84
ellipsoid) and from scipy's exact Euclidean distance transform.
"""

from __future__ import annotations

import numpy as np
import pytest
from affine import Affine
from pyproj import Geod
from rasterio.crs import CRS
from rasterio.windows import Window

from geomelt.io.rasters import RasterGrid
from geomelt.pipeline.neighbourhood import MeltProximityCollector, melt_mask

GEOD = Geod(ellps="WGS84")
LAEA = CRS.from_proj4("+proj=laea +lat_0=-45 +lon_0=-140 +datum=WGS84 +units=m")


def _field(grid, melt, block):
    collector = MeltProximityCollector(grid)
    for w in grid.windows(block):
        rows = slice(w.row_off, w.row_off + w.height)
        cols = slice(w.col_off, w.col_off + w.width)
        collector.add(w, melt[rows, cols])
    return collector.finish()


def _distance_map(grid, melt, block):
    field = _field(grid, melt, block)
    out = np.empty(melt.shape, np.float32)
    for w in grid.windows(block):
        rows = slice(w.row_off, w.row_off + w.height)
        cols = slice(w.col_off, w.col_off + w.width)
        out[rows, cols] = field.distance_km(w, melt[rows, cols])
    return out, field


def _blobs(shape, seed=3):
    rng = np.random.default_rng(seed)
    melt = np.zeros(shape, bool)
    for _ in range(4):
        r, c = rng.integers(0, shape[0]), rng.integers(0, shape[1])
        melt[max(0, r - 2) : r + 3, max(0, c - 3) : c + 2] = True
    return melt


def _brute_force_geodesic_km(grid, melt):
    lon, lat = grid.lonlat()
    mlon, mlat = lon[melt], lat[melt]
    out = np.empty(melt.shape)
    for idx in np.ndindex(melt.shape):
        if melt[idx]:
            out[idx] = 0.0
            continue
        n = mlon.size
        _, _, d = GEOD.inv(np.full(n, lon[idx]), np.full(n, lat[idx]), mlon, mlat)
        out[idx] = d.min() / 1000.0
    return out


def test_melt_mask_reads_mechanism_codes():
    codes = np.array([[0, 1, 2, 3], [4, 7, 255, 8]], dtype=np.uint8)
    assert melt_mask(codes).tolist() == [[False, True, True, True], [True, True, False, False]]


@pytest.mark.parametrize(
    "crs, transform",
    [
        (LAEA, Affine(25_000.0, 0, -500_000.0, 0, -25_000.0, 400_000.0)),
        (CRS.from_epsg(4326), Affine(0.4, 0, 170.0, 0, -0.4, 62.0)),  # crosses 180 deg
    ],
    ids=["projected", "geographic-antimeridian"],
)
def test_distance_matches_geodesics_within_the_sphere_error(crs, transform):
    # check values: pyproj.Geod (Karney 2013) between cell centres, brute force
    grid = RasterGrid(crs, transform, 36, 28)
    melt = _blobs(grid.shape)
    got, field = _distance_map(grid, melt, block=16)
    want = _brute_force_geodesic_km(grid, melt)
    assert field.stride == 1
    assert np.all(got[melt] == 0.0)
    far = want > 1.0
    # sphere of the mean radius vs the ellipsoid: within the flattening (0.34 %) + margin
    np.testing.assert_allclose(got[far], want[far], rtol=0.006)


def test_distance_does_not_depend_on_the_windows():
    grid = RasterGrid(LAEA, Affine(10_000.0, 0, 0.0, 0, -10_000.0, 0.0), 50, 41)
    melt = _blobs(grid.shape, seed=11)
    a, _ = _distance_map(grid, melt, block=7)
    b, _ = _distance_map(grid, melt, block=64)
    np.testing.assert_array_equal(a, b)


def test_equals_the_euclidean_transform_on_a_small_equal_area_grid():
    # check value: scipy.ndimage.distance_transform_edt (exact Euclidean distance)
    from scipy import ndimage

    grid = RasterGrid(LAEA, Affine(5_000.0, 0, -100_000.0, 0, -5_000.0, 100_000.0), 40, 40)
    melt = _blobs(grid.shape, seed=5)
    got, _ = _distance_map(grid, melt, block=16)
    edt = ndimage.distance_transform_edt(~melt, sampling=5.0)
    np.testing.assert_allclose(got, edt, rtol=0.01, atol=0.01)


def test_large_grid_interpolates_within_one_lattice_spacing():
    from scipy import ndimage

    cell_km = 2.0
    grid = RasterGrid(LAEA, Affine(2_000.0, 0, -600_000.0, 0, -2_000.0, 600_000.0), 600, 520)
    melt = np.zeros(grid.shape, bool)
    melt[100:140, 50:90] = True
    melt[400:405, 300:560] = True
    collector = MeltProximityCollector(grid, max_nodes_per_side=100)
    for w in grid.windows(128):
        collector.add(w, melt[w.toslices()])
    field = collector.finish()
    assert field.stride == 6
    got = np.empty(grid.shape, np.float32)
    for w in grid.windows(128):
        got[w.toslices()] = field.distance_km(w, melt[w.toslices()])
    edt = ndimage.distance_transform_edt(~melt, sampling=cell_km)
    err = np.abs(got - edt)
    assert err.max() <= field.stride * cell_km
    assert np.all(got[melt] == 0.0)


def test_no_melt_anywhere_gives_infinite_distance():
    grid = RasterGrid(LAEA, Affine(10_000.0, 0, 0.0, 0, -10_000.0, 0.0), 8, 6)
    melt = np.zeros(grid.shape, bool)
    field = _field(grid, melt, 4)
    assert field.n_edge_cells == 0
    assert np.isinf(field.distance_km(Window(0, 0, 8, 6), melt)).all()


# ------------------------------------------------------------------------------ cell areas
def _densified_area_km2(lon0, lat0, lon1, lat1, n=400):
    lon = np.r_[np.linspace(lon0, lon1, n), np.full(n, lon1), np.linspace(lon1, lon0, n)]
    lon = np.r_[lon, np.full(n, lon0)]
    lat = np.r_[np.full(n, lat1), np.linspace(lat1, lat0, n), np.full(n, lat0)]
    lat = np.r_[lat, np.linspace(lat0, lat1, n)]
    area, _ = GEOD.polygon_area_perimeter(lon, lat)
    return abs(area) / 1e6


def test_geographic_cell_areas_sum_to_the_geodesic_area():
    # check value: pyproj.Geod polygon area of the grid outline (parallels densified)
    grid = RasterGrid(CRS.from_epsg(4326), Affine(0.5, 0, 10.0, 0, -0.5, 60.0), 40, 60)
    areas = grid.cell_area_km2()
    assert areas.sum() == pytest.approx(_densified_area_km2(10, 30, 30, 60), rel=1e-6)
    # one window equals the same cells of the whole grid
    w = Window(5, 7, 10, 9)
    np.testing.assert_allclose(grid.cell_area_km2(w), areas[w.toslices()])


def test_conformal_projection_cell_areas_use_the_areal_scale():
    # check value: pyproj.Geod area of the outline of a Lambert conformal conic grid
    from pyproj import Transformer

    crs = CRS.from_proj4("+proj=lcc +lat_1=30 +lat_2=60 +lat_0=45 +lon_0=10 +datum=WGS84")
    grid = RasterGrid(crs, Affine(10_000.0, 0, -1e6, 0, -10_000.0, 1e6), 200, 200)
    areas = grid.cell_area_km2()
    tr = Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    edge = np.linspace(-1e6, 1e6, 400)
    xs = np.r_[edge, np.full(400, 1e6), edge[::-1], np.full(400, -1e6)]
    ys = np.r_[np.full(400, 1e6), edge[::-1], np.full(400, -1e6), edge]
    lon, lat = tr.transform(xs, ys)
    area, _ = GEOD.polygon_area_perimeter(lon, lat)
    assert areas.sum() == pytest.approx(abs(area) / 1e6, rel=5e-4)
    assert areas.max() > 1.02 * areas.min()  # the scale varies across the grid


def test_equal_area_projection_cells_are_their_map_area():
    grid = RasterGrid(LAEA, Affine(10_000.0, 0, 0.0, 0, -10_000.0, 0.0), 5, 4)
    np.testing.assert_array_equal(grid.cell_area_km2(), np.full((4, 5), 100.0))


def test_lonlat_at_equals_the_window_centres():
    grid = RasterGrid(LAEA, Affine(10_000.0, 0, -50_000.0, 0, -10_000.0, 70_000.0), 9, 7)
    lon, lat = grid.lonlat()
    rows, cols = np.array([0, 3, 6]), np.array([8, 2, 0])
    got_lon, got_lat = grid.lonlat_at(rows, cols)
    np.testing.assert_allclose(got_lon, lon[rows, cols], rtol=0, atol=1e-12)
    np.testing.assert_allclose(got_lat, lat[rows, cols], rtol=0, atol=1e-12)


def test_lattice_queried_in_bands_gives_the_same_field(monkeypatch):
    # finish() measures the lattice a band of rows at a time to bound its memory; the
    # bands must not change a distance (same tree, same nodes, same arithmetic).
    import geomelt.pipeline.neighbourhood as nb

    grid = RasterGrid(LAEA, Affine(10_000.0, 0, 0.0, 0, -10_000.0, 0.0), 50, 41)
    melt = _blobs(grid.shape, seed=5)
    whole = _field(grid, melt, block=16)
    monkeypatch.setattr(nb, "LATTICE_QUERY_NODES", 7)  # bands of one row (41 nodes)
    banded = _field(grid, melt, block=16)
    np.testing.assert_array_equal(whole.node_distance_km, banded.node_distance_km)
    assert whole.node_distance_km.dtype == banded.node_distance_km.dtype == np.float32
