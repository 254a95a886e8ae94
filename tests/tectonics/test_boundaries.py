"""Plate-boundary fields: geodesic distances, nearest rates and plate sides.

Reference for every distance check: pyproj.Geod (Karney 2013, J. Geodesy
87:43, the algorithms of GeographicLib). The reference distance of a cell to
a line is the minimum of ``Geod.inv`` from the cell to the line densified
every 100 m (along geodesics for lines in longitude/latitude; along the
straight map line, then transformed, for lines in a projected CRS). Its own
error, (50 m)^2 / (2 d), is below 0.13 % at 1 km.
"""

from __future__ import annotations

import math
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import geopandas as gpd
import numpy as np
import pytest
import shapely
from pyproj import Geod, Transformer
from rasterio.windows import Window
from shapely.geometry import LineString, MultiLineString, Polygon

from geomelt.errors import InputLayerError, LayerMismatchError, ParameterError
from geomelt.io.rasters import read_grid
from geomelt.io.vectors import BOUNDARY_TYPES, read_plate_boundaries
from geomelt.tectonics import boundaries as boundaries_module
from geomelt.tectonics.boundaries import (
    BOUNDARY_FIELDS,
    NO_BOUNDARY_CODE,
    NO_FEATURE,
    BoundarySet,
    aux_sphere_components,
    boundary_fields,
    lambert_distance_km,
)

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

GEOD = Geod(ellps="WGS84")
SAMPLE = Path(__file__).resolve().parents[2] / "sample_layers"
SAMPLE_LAEA = "+proj=laea +lat_0=-45 +lon_0=-140 +x_0=0 +y_0=0 +datum=WGS84 +units=m"

# Accuracy asked of the distances (reference: pyproj.Geod, Karney 2013):
# 0.5 % beyond 1 km of the line, 0.5 km closer.
RTOL = 0.005
ATOL_NEAR_KM = 0.5
NEAR_KM = 1.0


# ---------------------------------------------------------------------------
# Reference distances (pyproj.Geod, Karney 2013)
# ---------------------------------------------------------------------------


def dense_geodesic(lonlat: np.ndarray, step_m: float = 100.0) -> np.ndarray:
    """Points every <= step_m along the geodesics joining consecutive vertices."""
    out = [np.asarray(lonlat[:1], dtype=float)]
    for (lon1, lat1), (lon2, lat2) in zip(lonlat[:-1], lonlat[1:], strict=True):
        _, _, dist = GEOD.inv(lon1, lat1, lon2, lat2)
        n = max(1, math.ceil(dist / step_m))
        mid = GEOD.inv_intermediate(
            lon1,
            lat1,
            lon2,
            lat2,
            npts=n + 1,
            initial_idx=0,
            terminus_idx=0,
            return_back_azimuth=True,
        )
        out.append(np.column_stack([mid.lons, mid.lats])[1:])
    return np.concatenate(out)


def dense_projected(geom, crs, step_m: float = 100.0) -> np.ndarray:
    """Points every <= step_m along a line drawn in a projected CRS, as lon/lat."""
    xy = shapely.get_coordinates(shapely.segmentize(geom, step_m))
    lon, lat = Transformer.from_crs(crs, "EPSG:4326", always_xy=True).transform(xy[:, 0], xy[:, 1])
    return np.column_stack([lon, lat])


def geod_distance_km(lon, lat, dense: np.ndarray, step_m: float = 100.0) -> np.ndarray:
    """Minimum Geod.inv distance (km) from each cell to the densified line points.

    A first pass on every 50th point is exact to within 25 steps of arc, so
    the second pass only looks at the points around the candidates it keeps.
    """
    stride = 50
    coarse = dense[::stride]
    slack = stride * step_m * 0.51 + 1.0
    out = np.empty(len(lon))
    for i, (x, y) in enumerate(zip(lon, lat, strict=True)):
        d = GEOD.inv(np.full(len(coarse), x), np.full(len(coarse), y), coarse[:, 0], coarse[:, 1])[
            2
        ]
        near = np.flatnonzero(d <= d.min() + 2 * slack)
        idx = np.unique(
            np.clip(
                (near[:, None] * stride + np.arange(-stride, stride + 1)).ravel(), 0, len(dense) - 1
            )
        )
        fine = GEOD.inv(np.full(len(idx), x), np.full(len(idx), y), dense[idx, 0], dense[idx, 1])[2]
        out[i] = fine.min() / 1000.0
    return out


def near_line_cells(dense: np.ndarray, n: int, rng, max_km: float = 3.0):
    """Cells a little off random points of a line (0.02 to max_km away)."""
    pick = dense[rng.integers(0, len(dense), n)]
    lon, lat, _ = GEOD.fwd(
        pick[:, 0], pick[:, 1], rng.uniform(0, 360, n), rng.uniform(20.0, max_km * 1000.0, n)
    )
    return np.asarray(lon), np.asarray(lat)


def assert_distances_match(got_km, ref_km, reach_km, label):
    """0.5 % beyond 1 km, 0.5 km closer; NaN exactly where the line is out of reach."""
    got = np.asarray(got_km, dtype=float)
    inside = ref_km < reach_km * 0.999
    outside = ref_km > reach_km * 1.001
    assert np.isfinite(got[inside]).all(), f"{label}: NaN within reach"
    assert np.isnan(got[outside]).all(), f"{label}: value beyond reach"
    far = inside & (ref_km > NEAR_KM)
    near = inside & (ref_km <= NEAR_KM)
    rel = np.abs(got[far] - ref_km[far]) / ref_km[far]
    assert rel.size == 0 or rel.max() <= RTOL, (
        f"{label}: relative error {rel.max():.2e} > {RTOL} (reference: pyproj.Geod, Karney 2013)"
    )
    err = np.abs(got[near] - ref_km[near])
    assert err.size == 0 or err.max() <= ATOL_NEAR_KM, (
        f"{label}: error {err.max():.3f} km near the line (reference: pyproj.Geod, Karney 2013)"
    )


def frame(lines, types, crs="EPSG:4326", rates=None, sides=None):
    n = len(lines)
    return gpd.GeoDataFrame(
        {
            "boundary_type": types,
            "rate_mm_yr": rates if rates is not None else [np.nan] * n,
            "upper_plate_side": sides if sides is not None else [None] * n,
        },
        geometry=list(lines),
        crs=crs,
    )


# ---------------------------------------------------------------------------
# Distances against pyproj.Geod
# ---------------------------------------------------------------------------


def _case_sample_laea(rng):
    """The sample region's lines on its LAEA grid, cells across the grid and near lines."""
    gdf = read_plate_boundaries(SAMPLE / "plate_boundaries.gpkg")
    x = rng.uniform(-2.0e6, 2.0e6, 160)
    y = rng.uniform(-1.5e6, 1.5e6, 160)
    lon, lat = Transformer.from_crs(gdf.crs, "EPSG:4326", always_xy=True).transform(x, y)
    dense = {
        t: np.concatenate(
            [dense_projected(g, gdf.crs) for g in gdf.geometry[gdf.boundary_type == t]]
        )
        for t in BOUNDARY_TYPES
    }
    extra = [near_line_cells(dense[t], 12, rng) for t in ("subduction", "ridge", "collision")]
    lon = np.concatenate([lon, *[e[0] for e in extra]])
    lat = np.concatenate([lat, *[e[1] for e in extra]])
    return gdf, lon, lat, dense


def _case_geographic(rng):
    """Lines in EPSG:4326 (geodesics) on a geographic grid at mid southern latitudes."""
    trench = np.array([[-75.0, -42.0], [-73.5, -30.0], [-71.0, -20.0], [-71.5, -8.0]])
    ridge = np.array([[-95.0, -45.0], [-92.0, -25.0]])
    gdf = frame(
        [LineString(trench), LineString(ridge)], ["subduction", "ridge"], sides=["right", None]
    )
    lon, lat = np.meshgrid(np.arange(-96.0, -60.0, 1.7), np.arange(-46.0, -5.0, 1.9))
    dense = {"subduction": dense_geodesic(trench), "ridge": dense_geodesic(ridge)}
    n_lon, n_lat = near_line_cells(dense["subduction"], 20, rng)
    return gdf, np.r_[lon.ravel(), n_lon], np.r_[lat.ravel(), n_lat], dense


def _case_high_latitude(rng):
    """A long line between 72 and 79 N, cells from 66 to 86 N."""
    line = np.array([[-30.0, 72.0], [10.0, 78.5], [60.0, 79.0], [110.0, 74.0]])
    gdf = frame([LineString(line)], ["ridge"])
    lon = rng.uniform(-60.0, 140.0, 220)
    lat = rng.uniform(66.0, 86.0, 220)
    dense = {"ridge": dense_geodesic(line)}
    n_lon, n_lat = near_line_cells(dense["ridge"], 20, rng)
    return gdf, np.r_[lon, n_lon], np.r_[lat, n_lat], dense


def _case_antimeridian(rng):
    """A trench crossing 180 degrees, cells on both sides of it."""
    line = np.array([[170.0, -35.0], [178.0, -25.0], [-176.0, -18.0], [-168.0, -12.0]])
    gdf = frame([LineString(line)], ["subduction"], sides=["left"])
    lon = rng.uniform(160.0, 200.0, 220)
    lon = np.where(lon > 180.0, lon - 360.0, lon)
    lat = rng.uniform(-40.0, -5.0, 220)
    dense = {"subduction": dense_geodesic(line)}
    n_lon, n_lat = near_line_cells(dense["subduction"], 20, rng)
    return gdf, np.r_[lon, n_lon], np.r_[lat, n_lat], dense


@pytest.mark.parametrize(
    "make_case",
    [_case_sample_laea, _case_geographic, _case_high_latitude, _case_antimeridian],
    ids=["projected-laea", "geographic", "high-latitude", "antimeridian"],
)
def test_distances_match_geod(make_case):
    # reference: pyproj.Geod (Karney 2013)
    rng = np.random.default_rng(20130101)
    gdf, lon, lat, dense = make_case(rng)
    reach = 1500.0
    out = boundary_fields(BoundarySet.from_frame(gdf), lon, lat, max_distance_km=reach)
    nearest_any = np.full(len(lon), np.inf)
    for btype in BOUNDARY_TYPES:
        got = out[f"distance_to_{btype}_km"]
        assert got.dtype == np.float32
        if btype not in dense:
            assert np.isnan(got).all()
            continue
        ref = geod_distance_km(lon, lat, dense[btype])
        assert_distances_match(got, ref, reach, btype)
        nearest_any = np.minimum(nearest_any, ref)
    assert_distances_match(out["distance_to_boundary_km"], nearest_any, reach, "any type")


def test_lambert_distance_matches_geod():
    # reference: pyproj.Geod.inv (Karney 2013); the documented bound is 2e-6 relative
    # from 1 m to 5000 km (Lambert 1942 on the auxiliary sphere)
    rng = np.random.default_rng(1942)
    n = 3000
    lon1, lat1 = rng.uniform(-180, 180, n), rng.uniform(-89, 89, n)
    dist_m = np.exp(rng.uniform(np.log(1.0), np.log(5.0e6), n))
    lon2, lat2, _ = GEOD.fwd(lon1, lat1, rng.uniform(0, 360, n), dist_m)
    p = aux_sphere_components(lon1, lat1)
    q = aux_sphere_components(lon2, lat2)
    half_chord2 = ((p - q) ** 2).sum(axis=0) / 4.0  # sin^2(sigma / 2) from the chord
    got = lambert_distance_km(half_chord2, p[2], q[2])
    assert got.dtype == np.float64 and got.shape == (n,)
    rel = np.abs(got * 1000.0 - dist_m) / dist_m
    assert rel.max() < 2e-6, f"{rel.max():.2e}"
    # inputs broadcast: one point against many
    one = lambert_distance_km(half_chord2[:5], p[2][0], q[2][:5])
    assert one.shape == (5,) and one[0] == got[0]


def test_nearest_boundary_is_chosen_on_the_ellipsoid():
    # reference: pyproj.Geod (Karney 2013). Cells straddle the bisector of a
    # meridian and the equator near 5-10 degrees N/E: at equal angles on the
    # auxiliary sphere, the north-south distance is shorter on the ellipsoid
    # by the flattening (0.34 %), so picking the nearest line by angle would
    # err by up to that much here.
    meridian = np.array([[0.0, -20.0], [0.0, 30.0]])
    equator = np.array([[-20.0, 0.0], [30.0, 0.0]])
    gdf = frame([LineString(meridian), LineString(equator)], ["ridge", "ridge"])
    t = np.linspace(-0.3, 0.3, 61)
    lon = np.concatenate([5.0 + t, 10.0 + t])
    lat = np.concatenate([5.0 - t, 10.0 - t])
    ref = np.minimum(
        geod_distance_km(lon, lat, dense_geodesic(meridian)),
        geod_distance_km(lon, lat, dense_geodesic(equator)),
    )
    got = boundary_fields(BoundarySet.from_frame(gdf), lon, lat)["distance_to_ridge_km"]
    rel = np.abs(got - ref) / ref
    assert rel.max() <= 0.0012, f"{rel.max():.2e} (rtol 0.1 % of the search, reference: Geod)"


def test_distance_scales_with_reach():
    # reference: pyproj.Geod (Karney 2013) -- a short reach cuts the field off
    line = np.array([[0.0, -5.0], [0.0, 5.0]])
    gdf = frame([LineString(line)], ["rift"], rates=[4.0])
    lon = np.array([0.5, 1.0, 3.0, 10.0])
    lat = np.zeros(4)
    ref = geod_distance_km(lon, lat, dense_geodesic(line))
    out = boundary_fields(BoundarySet.from_frame(gdf), lon, lat, max_distance_km=200.0)
    assert_distances_match(out["distance_to_rift_km"], ref, 200.0, "reach 200 km")
    np.testing.assert_array_equal(np.isnan(out["rift_rate_mm_yr"]), ref > 200.0)


# ---------------------------------------------------------------------------
# Side of the line
# ---------------------------------------------------------------------------

EAST_WEST = (np.array([0.5, -0.5, 0.02, -0.02]), np.array([0.0, 0.3, -0.8, 0.9]))


@pytest.mark.parametrize(
    ("coords", "upper", "east"),
    [
        ([(0.0, -1.0), (0.0, 1.0)], "right", 1.0),
        ([(0.0, 1.0), (0.0, -1.0)], "right", -1.0),
        ([(0.0, -1.0), (0.0, 1.0)], "left", -1.0),
        ([(0.0, 1.0), (0.0, -1.0)], "left", 1.0),
        ([(0.0, -1.0), (0.0, 1.0)], None, 0.0),
    ],
    ids=["north-right", "south-right", "north-left", "south-left", "unknown"],
)
@pytest.mark.parametrize("btype", ["subduction", "collision"])
def test_side_of_a_north_south_line(coords, upper, east, btype):
    # Walking north, east is on the right: 'right' puts the upper plate east.
    gdf = frame([LineString(coords)], [btype], sides=[upper])
    out = boundary_fields(BoundarySet.from_frame(gdf), *EAST_WEST)
    side = out[f"{btype}_side"]
    np.testing.assert_array_equal(side, [east, -east, east, -east], err_msg=f"{upper}, {coords}")
    other = "collision" if btype == "subduction" else "subduction"
    assert np.isnan(out[f"{other}_side"]).all()


def test_side_in_a_projected_crs_and_beyond_the_line_end():
    # A line digitised eastward in LAEA metres, upper plate on its left (north).
    line = LineString([(-200_000.0, 0.0), (0.0, 10_000.0), (200_000.0, 0.0)])
    gdf = frame([line], ["subduction"], crs=SAMPLE_LAEA, sides=["left"])
    x = np.array([0.0, 0.0, 150_000.0, 260_000.0, 260_000.0])
    y = np.array([90_000.0, -90_000.0, 40_000.0, 30_000.0, -30_000.0])
    lon, lat = Transformer.from_crs(SAMPLE_LAEA, "EPSG:4326", always_xy=True).transform(x, y)
    out = boundary_fields(BoundarySet.from_frame(gdf), lon, lat)
    np.testing.assert_array_equal(out["subduction_side"], [1.0, -1.0, 1.0, 1.0, -1.0])


def test_side_at_a_sharp_corner():
    # Vertex pseudo-normal: cells in the wedge outside a right-angle corner.
    line = LineString([(0.0, -2.0), (0.0, 0.0), (2.0, 0.0)])  # north, then east
    gdf = frame([line], ["collision"], sides=["right"])
    lon = np.array([-0.5, 0.5, -0.3])
    lat = np.array([0.5, -0.5, 0.2])
    out = boundary_fields(BoundarySet.from_frame(gdf), lon, lat)
    # North-west of the corner is left of both legs; inside the corner is right.
    np.testing.assert_array_equal(out["collision_side"], [-1.0, 1.0, -1.0])


# ---------------------------------------------------------------------------
# Nearest type and rate; empty sets; geometry checks
# ---------------------------------------------------------------------------


def test_nearest_rate_and_type():
    lines = [
        LineString([(0.0, -3.0), (0.0, 3.0)]),
        LineString([(2.0, -3.0), (2.0, 3.0)]),
        LineString([(5.0, -3.0), (5.0, 3.0)]),
    ]
    gdf = frame(lines, ["ridge", "ridge", "transform"], rates=[20.0, 80.0, 35.0])
    lon = np.array([0.4, 1.6, 3.0, 4.5])
    lat = np.zeros(4)
    out = boundary_fields(BoundarySet.from_frame(gdf), lon, lat)
    np.testing.assert_array_equal(out["ridge_rate_mm_yr"], [20.0, 80.0, 80.0, 80.0])
    np.testing.assert_array_equal(out["transform_rate_mm_yr"], [35.0] * 4)
    assert np.isnan(out["rift_rate_mm_yr"]).all()
    codes = [BOUNDARY_TYPES.index(t) for t in ("ridge", "ridge", "ridge", "transform")]
    np.testing.assert_array_equal(out["nearest_boundary_type"], codes)
    np.testing.assert_array_equal(
        out["distance_to_boundary_km"],
        np.fmin(out["distance_to_ridge_km"], out["distance_to_transform_km"]),
    )


def test_outputs_follow_the_field_table():
    gdf = frame([LineString([(0.0, 0.0), (1.0, 1.0)])], ["rift"])
    out = boundary_fields(BoundarySet.from_frame(gdf), np.zeros((3, 4)), np.ones((3, 4)))
    assert list(out) == list(BOUNDARY_FIELDS)
    for name, spec in BOUNDARY_FIELDS.items():
        assert out[name].shape == (3, 4), name
        assert out[name].dtype == np.dtype(spec.dtype), name


def _assert_all_nodata(out):
    for name, spec in BOUNDARY_FIELDS.items():
        if spec.dtype == "uint8":
            assert (out[name] == NO_BOUNDARY_CODE).all(), name
        elif spec.dtype == "int32":
            assert (out[name] == NO_FEATURE).all(), name
        else:
            assert np.isnan(out[name]).all(), name


def test_empty_boundary_set():
    empty = frame([], [])
    bs = BoundarySet.from_frame(empty)
    assert len(bs) == 0 and bs.n_segments == 0
    lon, lat = np.meshgrid(np.linspace(-10, 10, 5), np.linspace(-5, 5, 4))
    _assert_all_nodata(boundary_fields(bs, lon, lat))


def test_empty_geometries_are_dropped_and_counted():
    gdf = frame([None, LineString(), LineString([(0, 0), (0, 1)])], ["ridge", "rift", "transform"])
    bs = BoundarySet.from_frame(gdf)
    assert bs.n_dropped_empty == 2
    assert len(bs) == 1
    out = boundary_fields(bs, np.array([0.1]), np.array([0.5]))
    assert np.isnan(out["distance_to_ridge_km"]).all()
    assert np.isfinite(out["distance_to_transform_km"]).all()
    only_empty = frame([None, LineString()], ["ridge", "rift"])
    _assert_all_nodata(
        boundary_fields(BoundarySet.from_frame(only_empty), np.zeros(2), np.zeros(2))
    )


def test_multilinestring_parts_keep_their_feature():
    # reference: pyproj.Geod (Karney 2013); two parts 20 degrees apart, one feature.
    west = np.array([[-10.0, -5.0], [-10.0, 5.0]])
    east = np.array([[10.0, -5.0], [10.0, 5.0]])
    gdf = frame([MultiLineString([west, east])], ["rift"], rates=[6.0])
    lon = np.array([-9.0, 9.5, 0.0])
    lat = np.zeros(3)
    out = boundary_fields(BoundarySet.from_frame(gdf), lon, lat)
    ref = np.minimum(
        geod_distance_km(lon, lat, dense_geodesic(west)),
        geod_distance_km(lon, lat, dense_geodesic(east)),
    )
    assert_distances_match(out["distance_to_rift_km"], ref, 1500.0, "multi-part line")
    np.testing.assert_array_equal(out["rift_rate_mm_yr"], [6.0, 6.0, 6.0])


def test_invalid_line_is_repaired_and_counted():
    # A MultiLineString with a collapsed part: make_valid keeps the good part.
    bad = MultiLineString([[(0.0, 0.0), (0.0, 2.0)], [(3.0, 3.0), (3.0, 3.0)]])
    assert not shapely.is_valid(bad)
    bs = BoundarySet.from_frame(frame([bad], ["ridge"], rates=[30.0]))
    assert bs.n_repaired == 1
    out = boundary_fields(bs, np.array([0.5]), np.array([1.0]))
    ref = geod_distance_km([0.5], [1.0], dense_geodesic(np.array([[0.0, 0.0], [0.0, 2.0]])))
    assert_distances_match(out["distance_to_ridge_km"], ref, 1500.0, "repaired line")


def test_unrepairable_line_names_the_feature_and_the_fix():
    gdf = frame([LineString([(0, 0), (1, 1)]), LineString([(5, 5), (5, 5)])], ["ridge", "rift"])
    with pytest.raises(
        InputLayerError, match=r"feature 1 .*fewer than two distinct vertices.*Delete"
    ):
        BoundarySet.from_frame(gdf)


def _nan_vertex_line():
    coords = np.array([[0.0, 0.0], [np.nan, 1.0], [1.0, 1.0]])
    with np.errstate(invalid="ignore"):
        return shapely.linestrings(coords, handle_nan="allow")


@pytest.mark.parametrize(
    ("make_frame", "error", "pattern"),
    [
        (
            lambda: frame([Polygon([(0, 0), (1, 0), (1, 1)])], ["ridge"]),
            InputLayerError,
            r"feature 0 is a Polygon.*outlines",
        ),
        (
            lambda: frame([LineString([(0, 0), (1, 1)])], ["trench"]),
            InputLayerError,
            r"trench.*Allowed",
        ),
        (
            lambda: frame([LineString([(0, 0), (1, 1)])], ["ridge"], crs=None),
            LayerMismatchError,
            r"no coordinate reference system",
        ),
        (
            lambda: frame([LineString([(0, 0), (1, 1)])], ["subduction"], sides=["up"]),
            InputLayerError,
            r"upper_plate_side must be 'left' or 'right'",
        ),
        (
            lambda: frame([_nan_vertex_line()], ["ridge"]),
            InputLayerError,
            r"feature 0 has NaN",
        ),
    ],
    ids=["polygon", "unknown-type", "no-crs", "bad-side", "nan-vertex"],
)
def test_bad_input_is_reported(make_frame, error, pattern):
    with pytest.raises(error, match=pattern):
        BoundarySet.from_frame(make_frame())


@pytest.mark.parametrize(
    "kwargs", [{"max_segment_km": 0.0}, {"tile_km": -1.0}, {"rtol": 0.5}, {"atol_km": math.nan}]
)
def test_bad_parameters(kwargs):
    with pytest.raises(ParameterError):
        BoundarySet.from_frame(frame([], []), **kwargs)


def test_bad_arrays():
    bs = BoundarySet.from_frame(frame([LineString([(0, 0), (1, 1)])], ["ridge"]))
    with pytest.raises(ValueError, match="differ in shape"):
        boundary_fields(bs, np.zeros(3), np.zeros(4))
    for reach in (0.0, 6000.0, math.nan):
        with pytest.raises(ValueError, match=r"max_distance_km must be in \(0, 5000\]"):
            boundary_fields(bs, np.zeros(3), np.zeros(3), max_distance_km=reach)
    out = boundary_fields(bs, np.array([np.nan, 0.5]), np.array([0.5, np.nan]))
    _assert_all_nodata(out)


# ---------------------------------------------------------------------------
# Windows and threads
# ---------------------------------------------------------------------------


@pytest.fixture(scope="module")
def sample_boundaries():
    gdf = read_plate_boundaries(SAMPLE / "plate_boundaries.gpkg")
    return BoundarySet.from_frame(gdf)


@pytest.fixture(scope="module")
def sample_grid():
    return read_grid(SAMPLE / "crustal_thickness_km.tif", "crustal_thickness_km")


def _windows(grid, size_rows, size_cols):
    for row in range(0, grid.height, size_rows):
        for col in range(0, grid.width, size_cols):
            yield Window(
                col, row, min(size_cols, grid.width - col), min(size_rows, grid.height - row)
            )


def test_window_by_window_equals_whole_grid(sample_boundaries, sample_grid):
    whole = boundary_fields(sample_boundaries, *sample_grid.lonlat())
    for window in _windows(sample_grid, 61, 97):
        part = boundary_fields(sample_boundaries, *sample_grid.lonlat(window))
        rows = slice(window.row_off, window.row_off + window.height)
        cols = slice(window.col_off, window.col_off + window.width)
        for name in BOUNDARY_FIELDS:
            np.testing.assert_array_equal(part[name], whole[name][rows, cols], err_msg=name)


def test_threads_share_one_boundary_set(sample_boundaries, sample_grid):
    windows = list(_windows(sample_grid, 100, 128))
    inputs = [sample_grid.lonlat(w) for w in windows]
    serial = [boundary_fields(sample_boundaries, *lonlat) for lonlat in inputs]
    with ThreadPoolExecutor(max_workers=4) as pool:
        parallel = list(pool.map(lambda ll: boundary_fields(sample_boundaries, *ll), inputs))
    for a, b in zip(serial, parallel, strict=True):
        for name in BOUNDARY_FIELDS:
            np.testing.assert_array_equal(a[name], b[name], err_msg=name)
    index = next(ix for ix in sample_boundaries.indexes if ix is not None)
    assert not index.table.flags.writeable
    assert not sample_boundaries.rate_mm_yr.flags.writeable


def test_skipping_candidates_by_their_bound_changes_no_answer(
    sample_boundaries, sample_grid, monkeypatch
):
    # The per-cell search skips a tile's candidate when its linear lower bound exceeds the
    # best distance found. With every bound set to -inf nothing is skipped: the fields
    # must be the same bits (a bound that is not a lower bound would change some cell).
    lon, lat = sample_grid.lonlat()
    pruned = boundary_fields(sample_boundaries, lon, lat)
    frontier = boundaries_module._tile_frontier

    def without_bounds(*args, **kwargs):
        ptr, nodes, grad, level = frontier(*args, **kwargs)
        return ptr, nodes, grad, np.full_like(level, -np.inf)

    monkeypatch.setattr(boundaries_module, "_tile_frontier", without_bounds)
    exhaustive = boundary_fields(sample_boundaries, lon, lat)
    for name in BOUNDARY_FIELDS:
        np.testing.assert_array_equal(pruned[name], exhaustive[name], err_msg=name)


def test_tile_size_changes_results_only_within_tolerance(sample_boundaries, sample_grid):
    lon, lat = sample_grid.lonlat(Window(0, 0, 400, 300))
    lon, lat = lon[::7, ::7], lat[::7, ::7]
    gdf = read_plate_boundaries(SAMPLE / "plate_boundaries.gpkg")
    other = BoundarySet.from_frame(gdf, tile_km=11.0)
    a = boundary_fields(sample_boundaries, lon, lat)
    b = boundary_fields(other, lon, lat)
    for btype in BOUNDARY_TYPES:
        x = a[f"distance_to_{btype}_km"].astype(float)
        y = b[f"distance_to_{btype}_km"].astype(float)
        ok = np.isfinite(x) & np.isfinite(y)
        assert np.all(np.abs(x[ok] - y[ok]) <= 0.0025 * np.maximum(x[ok], 1.0)), btype


# ---------------------------------------------------------------------------
# The sample region (sample_layers/README.md, features.toml)
# ---------------------------------------------------------------------------


def _feature_cells(sample_grid):
    with open(SAMPLE / "features.toml", "rb") as fh:
        features = {f["id"]: f for f in tomllib.load(fh)["features"]}
    t = sample_grid.transform
    # Cell of the representative point on the sample grid, then its centre.
    out = {}
    lon, lat = sample_grid.lonlat()
    for fid, f in features.items():
        col = int((f["x"] - t.c) // t.a)
        row = int((f["y"] - t.f) // t.e)
        out[fid] = (f["name"], lon[row, col], lat[row, col])
    return out


def test_sample_region_arcs_forearcs_and_ridge(sample_boundaries, sample_grid):
    cells = _feature_cells(sample_grid)
    ids = sorted(cells)
    out = boundary_fields(
        sample_boundaries,
        np.array([cells[i][1] for i in ids]),
        np.array([cells[i][2] for i in ids]),
    )
    at = {fid: {k: float(v[n]) for k, v in out.items()} for n, fid in enumerate(ids)}
    # Arcs ~205-210 km from their trench on the overriding plate (sample_layers/README.md).
    for arc in ("f", "i"):
        assert at[arc]["subduction_side"] == 1.0, cells[arc][0]
        assert 100.0 <= at[arc]["distance_to_subduction_km"] <= 250.0, cells[arc][0]
    for forearc in ("e", "h"):
        assert at[forearc]["subduction_side"] == 1.0, cells[forearc][0]
        assert at[forearc]["distance_to_subduction_km"] < 150.0, cells[forearc][0]
    # Ocean floor west of the trenches is on the lower plate.
    assert at["c"]["subduction_side"] == -1.0
    assert at["a"]["distance_to_ridge_km"] < 10.0  # grid cell centre within 7.1 km
    assert at["a"]["nearest_boundary_type"] == BOUNDARY_TYPES.index("ridge")
    assert at["a"]["ridge_rate_mm_yr"] == 40.0
    assert at["f"]["subduction_rate_mm_yr"] == 70.0  # Kessik Trench
    assert at["i"]["subduction_rate_mm_yr"] == 60.0  # Tavrel Trench


def test_nearest_feature_names_the_row_of_the_nearest_line():
    # rows: 0 ridge at 0E, 1 subduction at 5E, 2 ridge at 10E; a cell at 2E is nearest the
    # first ridge, one at 8E the second; its subduction line is row 1 on both sides.
    lines = [
        LineString([(0, -5), (0, 5)]),
        LineString([(5, -5), (5, 5)]),
        LineString([(10, -5), (10, 5)]),
    ]
    bs = BoundarySet.from_frame(frame(lines, ["ridge", "subduction", "ridge"], rates=[40, 70, 20]))
    out = boundary_fields(bs, np.array([2.0, 8.0]), np.array([0.0, 0.0]))
    assert out["nearest_ridge_feature"].tolist() == [0, 2]
    assert out["ridge_rate_mm_yr"].tolist() == [40.0, 20.0]
    assert out["nearest_subduction_feature"].tolist() == [1, 1]
    assert out["nearest_rift_feature"].tolist() == [NO_FEATURE, NO_FEATURE]
