"""Vectorising class rasters: sieving, coverage-preserving simplification, areas, zonal stats."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from affine import Affine
from pyproj import Geod
from shapely.geometry.polygon import orient

from geomelt.classes import MAGMA_TYPE, SETTING
from geomelt.io.polygons import (
    block_mode,
    class_polygons,
    equal_area_crs_for,
    is_equal_area,
    zonal_summary,
)

LAEA = "+proj=laea +lat_0=10 +lon_0=-30 +x_0=0 +y_0=0 +ellps=WGS84 +units=m +no_defs"
NODATA = SETTING.nodata


def synthetic_classes() -> np.ndarray:
    """60 x 80 cells: three settings with wavy boundaries, a 1-cell speckle, nodata corner."""
    rows, cols = np.mgrid[0:60, 0:80]
    a = np.where(cols < 35 + 6 * np.sin(rows / 5.0), 1, 2).astype(np.uint8)
    a[(rows - 30) ** 2 + (cols - 18) ** 2 < 100] = 6  # round continental arc
    a[45, 60] = 9  # 1-cell speckle inside class 2
    a[:6, 70:] = NODATA
    return a


def pairwise_overlap_area(geoms) -> float:
    geoms = np.asarray(geoms)
    tree = shapely.STRtree(geoms)
    i, j = tree.query(geoms, predicate="intersects")
    keep = i < j
    return float(shapely.area(shapely.intersection(geoms[i[keep]], geoms[j[keep]])).sum())


def test_equal_area_detection():
    assert is_equal_area(LAEA)
    assert is_equal_area("EPSG:3035")  # ETRS89 LAEA Europe
    assert is_equal_area("EPSG:6933")  # cylindrical equal area
    assert not is_equal_area("EPSG:4326")
    assert not is_equal_area("EPSG:32633")
    laea = equal_area_crs_for("EPSG:4326", 12.5, -3.0)
    assert is_equal_area(laea)


def test_speckle_removed_and_coverage_clean():
    a = synthetic_classes()
    cell = 2000.0
    tr = Affine(cell, 0, -80_000, 0, -cell, 60_000)
    polys = class_polygons(a, tr, LAEA, SETTING, NODATA, sieve_cells=4, simplify_tolerance=cell)

    assert list(polys.columns) == ["class_code", "class_key", "class_label", "area_km2", "geometry"]
    assert polys["class_code"].dtype == np.int32
    assert 9 not in set(polys["class_code"])  # the 1-cell speckle is gone
    assert set(polys["class_code"]) == {1, 2, 6}
    assert (shapely.get_type_id(polys.geometry.values) == 3).all()  # single-part polygons
    assert shapely.is_valid(polys.geometry.values).all()
    labels = dict(zip(polys["class_code"], polys["class_label"], strict=True))
    assert labels[6] == "continental arc"
    assert set(polys.loc[polys["class_code"] == 2, "class_key"]) == {"mid_ocean_ridge"}

    # No overlaps and no gaps: a valid coverage whose union has the raster's data area.
    geoms = polys.geometry.values
    assert shapely.coverage_is_valid(geoms)
    assert pairwise_overlap_area(geoms) == pytest.approx(0.0, abs=1e-6 * cell**2)
    data_area = np.count_nonzero(a != NODATA) * cell**2
    assert shapely.union_all(geoms).area == pytest.approx(data_area, rel=0.01)
    # Simplification did something (fewer vertices than the pixel staircase).
    raw = class_polygons(a, tr, LAEA, SETTING, NODATA, sieve_cells=4, simplify_tolerance=0)
    assert (
        shapely.get_num_coordinates(geoms).sum()
        < shapely.get_num_coordinates(raw.geometry.values).sum()
    )
    assert shapely.union_all(raw.geometry.values).area == pytest.approx(data_area, rel=1e-12)


def test_area_exact_on_equal_area_grid():
    a = synthetic_classes()
    cell = 2000.0
    tr = Affine(cell, 0, 0, 0, -cell, 0)
    polys = class_polygons(a, tr, LAEA, SETTING, NODATA, sieve_cells=4, simplify_tolerance=0)
    sieved_counts = {1: 0, 2: 0, 6: 0}
    # Without simplification each polygon is exactly its cells: compare totals per class
    # with the cell counts after the same sieve (speckle merged into class 2).
    from rasterio.features import sieve

    s = sieve(a, size=4, mask=a != NODATA, connectivity=4)
    for code in sieved_counts:
        sieved_counts[code] = np.count_nonzero(s == code)
    by_class = polys.groupby("class_code")["area_km2"].sum().to_dict()
    for code, n in sieved_counts.items():
        assert by_class[code] == pytest.approx(n * cell * cell / 1e6, rel=1e-12)


def test_area_geographic_grid_against_geodesic():
    a = synthetic_classes()
    tr = Affine(0.05, 0, 20.0, 0, -0.05, 48.0)  # 4 x 3 degrees around 46.5 N
    polys = class_polygons(
        a, tr, "EPSG:4326", SETTING, NODATA, sieve_cells=4, simplify_tolerance=0.05
    )
    geod = Geod(ellps="WGS84")  # Karney (2013) geodesic polygon areas
    for geom, area in zip(polys.geometry, polys["area_km2"], strict=True):
        # Densify so the reference's geodesic edges follow the parallels of the grid;
        # orient rings (exterior counter-clockwise, holes clockwise) so that pyproj
        # subtracts the holes.
        dense = orient(shapely.segmentize(geom, 0.005), sign=1.0)
        ref = geod.geometry_area_perimeter(dense)[0] / 1e6
        assert area == pytest.approx(ref, rel=0.005)


def test_projected_not_equal_area_uses_laea():
    a = np.full((50, 50), 1, np.uint8)
    tr = Affine(1000, 0, 400_000, 0, -1000, 7_000_000)  # UTM 33N around 63 N
    polys = class_polygons(
        a, tr, "EPSG:32633", SETTING, NODATA, sieve_cells=0, simplify_tolerance=0
    )
    assert len(polys) == 1
    from pyproj import Transformer

    to_geo = Transformer.from_crs("EPSG:32633", "EPSG:4326", always_xy=True)
    ring = shapely.segmentize(polys.geometry.iloc[0], 500.0)
    lonlat = shapely.transform(ring, lambda x, y: to_geo.transform(x, y), interleaved=False)
    ref = abs(Geod(ellps="WGS84").geometry_area_perimeter(lonlat)[0]) / 1e6
    assert polys["area_km2"].iloc[0] == pytest.approx(ref, rel=1e-3)
    # UTM scale at 400 km easting is below 1: true area differs from the nominal 2500 km2.
    assert abs(polys["area_km2"].iloc[0] - 2500.0) > 0.5


def test_block_mode():
    a = np.array(
        [
            [1, 1, 2, 2, 3],
            [1, 2, 2, 2, 3],
            [255, 255, 1, 255, 255],
            [255, 1, 255, 255, 3],
        ],
        dtype=np.uint8,
    )
    out = block_mode(a, 2, 255)
    assert out.shape == (2, 3)
    # Lower-left block has 1 data cell of 4: nodata; lower-right partial block 1 of 2: data.
    assert out.tolist() == [[1, 2, 3], [255, 255, 3]]


def test_decimated_polygons_cover_the_grid():
    a = np.repeat(np.repeat(synthetic_classes(), 3, axis=0), 3, axis=1)[:-1, :-2]
    cell = 1000.0
    tr = Affine(cell, 0, 0, 0, -cell, 0)
    polys = class_polygons(
        a, tr, LAEA, SETTING, NODATA, sieve_cells=36, simplify_tolerance=0, decimate=3
    )
    geoms = polys.geometry.values
    assert shapely.coverage_is_valid(geoms)
    xmin, ymin, xmax, ymax = shapely.total_bounds(geoms)
    assert (xmin, ymax) == (0.0, 0.0)
    assert xmax <= a.shape[1] * cell and ymin >= -a.shape[0] * cell
    data_area = np.count_nonzero(a != NODATA) * cell**2
    assert polys["area_km2"].sum() * 1e6 == pytest.approx(data_area, rel=0.01)
    assert 9 not in set(polys["class_code"])


def test_zonal_summary():
    a = synthetic_classes()
    cell = 2000.0
    tr = Affine(cell, 0, 0, 0, -cell, 0)
    polys = class_polygons(a, tr, LAEA, SETTING, NODATA, sieve_cells=4, simplify_tolerance=0)
    thickness = np.where(a == 6, 3.0, 1.0).astype("float32")
    thickness[0, 0] = np.nan
    magma = np.where(a == 6, 1, 3).astype(np.uint8)  # mafic under the arc, felsic elsewhere
    magma[a == NODATA] = MAGMA_TYPE.nodata
    out = zonal_summary(
        polys, {"melt_thickness_km": thickness, "magma_type": magma}, tr, nodata=None
    )
    assert "mean_melt_thickness_km" in out and "dominant_magma_type" in out
    arc = out[out["class_code"] == 6].iloc[0]
    assert arc["mean_melt_thickness_km"] == pytest.approx(3.0)
    assert arc["dominant_magma_type"] == 1
    assert arc["dominant_magma_type_fraction"] == pytest.approx(1.0)
    other = out[out["class_code"] == 1].iloc[0]
    assert other["mean_melt_thickness_km"] == pytest.approx(1.0)
    assert other["dominant_magma_type"] == 3
    assert len(out) == len(polys) and out.crs == polys.crs


def test_empty_raster():
    a = np.full((5, 5), NODATA, np.uint8)
    polys = class_polygons(a, Affine(1, 0, 0, 0, -1, 0), LAEA, SETTING, NODATA, 0, 0)
    assert len(polys) == 0
    assert "area_km2" in polys.columns


@pytest.mark.parametrize("crs", [LAEA, "EPSG:4326"])
def test_zonal_summary_in_row_bands_equals_one_pass(monkeypatch, crs):
    # zonal_summary adds per-polygon sums band by band to bound memory: the dominant
    # classes must not change and the means only in the last bits (summation order);
    # on a geographic grid the cos(latitude) weights follow the bands' rows.
    import geomelt.io.polygons as gp

    a = synthetic_classes()
    tr = Affine(0.05, 0, -30.0, 0, -0.05, 12.0) if crs == "EPSG:4326" else None
    tr = tr or Affine(2000.0, 0, 0, 0, -2000.0, 0)
    polys = class_polygons(a, tr, crs, SETTING, NODATA, sieve_cells=4, simplify_tolerance=0)
    rng = np.random.default_rng(7)
    thickness = rng.gamma(2.0, 1.5, a.shape).astype("float32")
    thickness[rng.random(a.shape) < 0.05] = np.nan
    magma = rng.integers(0, 4, a.shape).astype(np.uint8)
    magma[a == NODATA] = MAGMA_TYPE.nodata
    rasters = {"melt_thickness_km": thickness, "magma_type": magma}
    whole = zonal_summary(polys, rasters, tr)
    monkeypatch.setattr(gp, "ZONAL_BAND_CELLS", 3 * a.shape[1])  # bands of 3 rows
    banded = zonal_summary(polys, rasters, tr)
    np.testing.assert_array_equal(whole["dominant_magma_type"], banded["dominant_magma_type"])
    for column in ("mean_melt_thickness_km", "dominant_magma_type_fraction"):
        np.testing.assert_allclose(whole[column], banded[column], rtol=1e-12)
    # Cross-check one polygon's weighted mean against a direct computation.
    from rasterio.features import rasterize

    ids = rasterize([(polys.geometry.iloc[0], 1)], out_shape=a.shape, transform=tr, fill=0)
    ok = (ids == 1) & np.isfinite(thickness)
    w = np.ones(a.shape)
    if crs == "EPSG:4326":
        lat = tr.f + tr.e * (np.arange(a.shape[0]) + 0.5)
        w = np.broadcast_to(np.cos(np.radians(lat))[:, None], a.shape)
    direct = np.sum(thickness[ok] * w[ok]) / np.sum(w[ok])
    assert banded["mean_melt_thickness_km"].iloc[0] == pytest.approx(direct, rel=1e-9)


def test_row_area_weights_follow_geodesic_cell_areas():
    # Reference: pyproj.Geod (Karney 2013) areas of 0.05-degree cells on WGS84. The
    # cos(latitude) weights are the sphere's ratio; the ellipsoid's area element adds the
    # factor (1 - e^2 sin^2 lat)^-2, at most 2 e^2 = 1.34 % from the equator to the pole
    # (e^2 = 0.00669 for WGS84, Snyder 1987 p. 13).
    from geomelt.io.polygons import row_area_weights

    tr = Affine(0.05, 0, -30.0, 0, -0.05, 70.0)
    weights = row_area_weights("EPSG:4326", tr, 1400)  # rows from 70 N to 0
    geod = Geod(ellps="WGS84")

    def cell_area(row):
        top = tr.f + tr.e * row
        lons, lats = [-30.0, -29.95, -29.95, -30.0], [top, top, top - 0.05, top - 0.05]
        return abs(geod.polygon_area_perimeter(lons, lats)[0])

    for row in (0, 300, 900, 1399):
        ratio = cell_area(row) / cell_area(1399)
        assert weights[row] / weights[1399] == pytest.approx(ratio, rel=1.4e-2)
    assert row_area_weights(LAEA, tr, 10) is None
