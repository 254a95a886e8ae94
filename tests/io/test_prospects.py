"""Ranked prospect polygons from score rasters: areas, ranks, classes, drivers, GeoPackage.

The rasters are invented and tiny. Scores are the weighted mean of the factor rasters
(weights 0.5, 0.3, 0.2), as the weighted-sum screening combination makes them.
"""

from __future__ import annotations

import sqlite3

import fiona
import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from pyproj import Geod, Transformer
from rasterio.transform import from_origin

from geomelt.io.prospects import (
    POLYGON_MAX_CELLS,
    PROSPECT_COLUMNS,
    ProspectScreen,
    prospect_polygons,
    standard_screens,
    write_prospects_layer,
)
from tests.conftest import write_raster

EQUAL_AREA = "EPSG:6933"  # WGS 84 / NSIDC EASE-Grid 2.0 Global (cylindrical equal area)
CELL_M = 1000.0
ROWS, COLS = 40, 60
TRANSFORM = from_origin(1_000_000.0, 4_000_000.0, CELL_M, CELL_M)
WEIGHTS = (0.5, 0.3, 0.2)
FACTORS = ("factor_a", "factor_b", "factor_c")
LABELS = ("melt proximity", "temperature at 3 km", "binary isotherm")

# Blob A: 10 x 10 cells, factors (0.2, 1.0, 0.9): score 0.58, contributions 0.10, 0.30, 0.18.
A = (slice(5, 15), slice(5, 15))
# Blob B: 10 x 15 cells with a 2 x 2 NaN hole, factors (1.0, 0.1, 0.1): score 0.55,
# contributions 0.50, 0.03, 0.02 (shares 91 %, 5 %, 4 %).
B = (slice(20, 30), slice(30, 45))
B_HOLE = (slice(24, 26), slice(36, 38))
# Blob C: 2 x 2 cells (4 km2), every factor 1: score 1, below a 10 km2 minimum area.
C = (slice(35, 37), slice(50, 52))
# Second screen, blob D: 5 x 10 cells, score 0.56.
D = (slice(30, 35), slice(5, 15))


def heat_screen(threshold=0.5, factors=None) -> ProspectScreen:
    layers = factors or tuple(zip(LABELS, FACTORS, WEIGHTS, strict=True))
    return ProspectScreen(
        "geothermal_heat_source", "Geothermal heat source", "score", layers, threshold
    )


def second_screen(threshold=0.5) -> ProspectScreen:
    return ProspectScreen(
        "porphyry_cu_au_mo",
        "Porphyry Cu-Au-Mo",
        "second_score",
        (("setting affinity", "second_setting_factor", 1.0),),
        threshold,
    )


def write_folder(folder, *, with_magma=True):
    """Score, factor and class rasters of the two screens on the equal-area grid."""
    f = {name: np.zeros((ROWS, COLS)) for name in FACTORS}
    for blob, values in ((A, (0.2, 1.0, 0.9)), (B, (1.0, 0.1, 0.1)), (C, (1.0, 1.0, 1.0))):
        for name, v in zip(FACTORS, values, strict=True):
            f[name][blob] = v
    score = sum(w * f[name] for name, w in zip(FACTORS, WEIGHTS, strict=True))
    score[B_HOLE] = np.nan
    score[0, :] = np.nan  # a NaN row along the top edge
    for name in FACTORS:
        f[name][B_HOLE] = np.nan
        write_raster(folder / f"{name}.tif", f[name], crs=EQUAL_AREA, transform=TRANSFORM)
    write_raster(folder / "score.tif", score, crs=EQUAL_AREA, transform=TRANSFORM)

    second = np.zeros((ROWS, COLS))
    second[D] = 0.56
    write_raster(folder / "second_score.tif", second, crs=EQUAL_AREA, transform=TRANSFORM)
    write_raster(folder / "second_setting_factor.tif", second, crs=EQUAL_AREA, transform=TRANSFORM)

    setting = np.full((ROWS, COLS), 1, np.uint8)
    setting[A] = 6  # continental arc
    setting[5:7, 5:15] = 5  # 20 of A's 100 cells oceanic arc: a minority
    setting[B] = 4  # continental rift
    setting[D] = 6
    mechanism = np.zeros((ROWS, COLS), np.uint8)
    mechanism[A] = 2  # flux
    mechanism[B] = 1  # decompression
    magma = np.zeros((ROWS, COLS), np.uint8)
    magma[A] = 2  # intermediate
    magma[B] = 255
    magma[26:30, 30:45] = 4  # 60 of B's 146 data cells bimodal, the rest nodata
    for name, arr in (
        ("setting", setting),
        ("melting_mechanism", mechanism),
        ("magma_type", magma),
    ):
        if name == "magma_type" and not with_magma:
            continue
        write_raster(folder / f"{name}.tif", arr, crs=EQUAL_AREA, transform=TRANSFORM, nodata=255)
    return folder


@pytest.fixture
def folder(tmp_path):
    return write_folder(tmp_path)


def test_two_blobs_ranked_with_areas_classes_and_drivers(folder):
    frame = prospect_polygons(folder, [heat_screen()], min_area_km2=10.0)

    assert list(frame.columns) == [*PROSPECT_COLUMNS, "geometry"]
    assert len(frame) == 2  # blob C (4 km2) is below the minimum area
    assert frame.crs == EQUAL_AREA
    a, b = frame.iloc[0], frame.iloc[1]
    assert list(frame["rank"]) == [1, 2]
    assert list(frame["screen_rank"]) == [1, 2]
    assert (frame["screen"] == "geothermal_heat_source").all()
    assert (frame["threshold"] == 0.5).all()

    # Equal-area grid: area is the cell count times the cell area (1 km2), exactly up to
    # floating-point rounding.
    assert a["area_km2"] == pytest.approx(100.0, rel=1e-9)
    assert b["area_km2"] == pytest.approx(150.0 - 4.0, rel=1e-9)  # NaN hole left out
    assert len(b.geometry.interiors) == 1
    # float64 rasters: only the rounding of the weighted sums is left.
    assert a["mean_score"] == pytest.approx(0.58, abs=1e-12)
    assert a["max_score"] == pytest.approx(0.58, abs=1e-12)
    assert b["mean_score"] == pytest.approx(0.55, abs=1e-12)

    assert a.geometry.bounds == pytest.approx((1_005_000.0, 3_985_000.0, 1_015_000.0, 3_995_000.0))
    assert shapely.is_valid(frame.geometry.to_numpy()).all()
    assert (shapely.get_type_id(frame.geometry.to_numpy()) == 3).all()

    assert (a["dominant_setting"], a["dominant_setting_code"]) == ("continental arc", 6)
    assert (a["dominant_mechanism"], a["dominant_mechanism_code"]) == ("flux (water addition)", 2)
    assert (a["dominant_magma_type"], a["dominant_magma_type_code"]) == ("intermediate", 2)
    assert (b["dominant_setting"], b["dominant_setting_code"]) == ("continental rift", 4)
    assert (b["dominant_mechanism"], b["dominant_mechanism_code"]) == ("decompression", 1)
    # 255 is ignored: the 60 bimodal cells outvote the 86 nodata cells.
    assert (b["dominant_magma_type"], b["dominant_magma_type_code"]) == ("bimodal", 4)

    # A: contributions 0.30 (b), 0.18 (c), 0.10 (a); shares 52 %, 31 %, 17 %, all >= 15 %.
    assert a["drivers"] == "temperature at 3 km 1.00; binary isotherm 0.90; melt proximity 0.20"
    assert (a["driver_1"], a["driver_2"], a["driver_3"]) == (
        "temperature at 3 km",
        "binary isotherm",
        "melt proximity",
    )
    # B: only melt proximity reaches 15 % of the contributions.
    assert b["drivers"] == "melt proximity 1.00"
    assert (b["driver_1"], b["driver_2"], b["driver_3"]) == ("melt proximity", "", "")

    # The representative point lies inside its polygon.
    back = Transformer.from_crs("EPSG:4326", EQUAL_AREA, always_xy=True)
    for row in frame.itertuples():
        x, y = back.transform(row.centroid_lon, row.centroid_lat)
        assert row.geometry.contains(shapely.Point(x, y))


def test_min_area_zero_keeps_small_blob_which_ranks_first(folder):
    frame = prospect_polygons(folder, [heat_screen()], min_area_km2=0.0)
    assert len(frame) == 3
    assert frame.iloc[0]["area_km2"] == pytest.approx(4.0, rel=1e-9)
    assert frame.iloc[0]["mean_score"] == pytest.approx(1.0, abs=1e-12)


def test_ranks_across_screens_have_no_gaps(folder):
    frame = prospect_polygons(folder, [heat_screen(), second_screen()], min_area_km2=10.0)
    # A (0.58) > D (0.56, second screen) > B (0.55).
    assert list(frame["rank"]) == [1, 2, 3]
    assert list(frame["screen"]) == ["geothermal_heat_source", "porphyry_cu_au_mo"] + [
        "geothermal_heat_source"
    ]
    assert list(frame["screen_rank"]) == [1, 1, 2]
    assert list(frame["area_km2"].round(6)) == [100.0, 50.0, 146.0]
    d = frame.iloc[1]
    assert d["screen_title"] == "Porphyry Cu-Au-Mo"
    assert d["drivers"] == "setting affinity 0.56"
    assert (d["driver_1"], d["driver_2"]) == ("setting affinity", "")
    for _, group in frame.groupby("screen"):
        assert sorted(group["screen_rank"]) == list(range(1, len(group) + 1))


def test_ties_are_broken_deterministically(tmp_path):
    """Equal scores and areas: ordered by screen key, then row-major position."""
    score = np.zeros((ROWS, COLS))
    score[5:10, 40:45] = 0.8  # upper right
    score[20:25, 5:10] = 0.8  # lower left
    for name in ("s1", "s2"):
        write_raster(tmp_path / f"{name}.tif", score, crs=EQUAL_AREA, transform=TRANSFORM)
    screens = [ProspectScreen(k, k, k, (), 0.5) for k in ("s2", "s1")]
    frame = prospect_polygons(tmp_path, screens, 1.0)
    assert list(frame["screen"]) == ["s1", "s1", "s2", "s2"]
    ys = [g.centroid.y for g in frame.geometry]
    assert ys[0] > ys[1] and ys[2] > ys[3]  # the upper region comes first
    assert (frame["drivers"] == "").all()  # a screen without factors has no drivers
    again = prospect_polygons(tmp_path, screens, 1.0)
    pd.testing.assert_frame_equal(frame.drop(columns="geometry"), again.drop(columns="geometry"))
    assert shapely.equals(frame.geometry.to_numpy(), again.geometry.to_numpy()).all()


def test_repeated_runs_identical(folder):
    screens = [heat_screen(), second_screen()]
    one = prospect_polygons(folder, screens, 10.0)
    two = prospect_polygons(folder, screens, 10.0)
    pd.testing.assert_frame_equal(one.drop(columns="geometry"), two.drop(columns="geometry"))
    assert shapely.equals_exact(one.geometry.to_numpy(), two.geometry.to_numpy(), 0.0).all()


def test_nothing_above_threshold_gives_empty_frame_with_schema(folder):
    full = prospect_polygons(folder, [heat_screen()], 10.0)
    empty = prospect_polygons(folder, [heat_screen(threshold=0.99)], 10.0)
    assert len(empty) == 0
    assert list(empty.columns) == list(full.columns)
    pd.testing.assert_series_equal(empty.dtypes, full.dtypes)
    assert empty.crs == EQUAL_AREA
    assert empty["rank"].dtype == np.int32
    assert empty["area_km2"].dtype == np.float64


def test_nan_only_score_gives_no_prospects(tmp_path):
    score = np.full((ROWS, COLS), np.nan)
    write_raster(tmp_path / "s.tif", score, crs=EQUAL_AREA, transform=TRANSFORM)
    frame = prospect_polygons(tmp_path, [ProspectScreen("s", "S", "s", (), 0.0)], 0.0)
    assert len(frame) == 0  # NaN is never a prospect, even with a threshold of 0


def test_missing_rasters(folder, tmp_path_factory, caplog):
    missing_factor = ProspectScreen("other", "Other", "score", (("gone", "not_there", 1.0),), 0.5)
    missing_score = ProspectScreen("none", "None", "no_score", (), 0.5)
    frame = prospect_polygons(folder, [missing_score, missing_factor, heat_screen()], 10.0)
    assert set(frame["screen"]) == {"geothermal_heat_source"}
    assert "no_score.tif is missing" in caplog.text
    assert "not_there.tif is missing" in caplog.text
    assert len(prospect_polygons(folder, [missing_score], 10.0)) == 0

    # A factor raster on another grid cannot be summarised: the screen is skipped.
    shifted = from_origin(1_000_000.0 + 5 * CELL_M, 4_000_000.0, CELL_M, CELL_M)
    write_raster(folder / "off_grid.tif", np.ones((ROWS, COLS)), crs=EQUAL_AREA, transform=shifted)
    off_grid = ProspectScreen("off", "Off", "score", (("x", "off_grid", 1.0),), 0.5)
    assert len(prospect_polygons(folder, [off_grid], 10.0)) == 0
    assert "off_grid.tif is not on the grid" in caplog.text

    no_magma = write_folder(tmp_path_factory.mktemp("no_magma"), with_magma=False)
    frame = prospect_polygons(no_magma, [heat_screen()], 10.0)
    assert len(frame) == 2
    assert (frame["dominant_magma_type"] == "nodata").all()
    assert (frame["dominant_magma_type_code"] == 255).all()
    assert frame.iloc[0]["dominant_setting"] == "continental arc"


def test_geographic_grid_areas_match_geodesic(tmp_path):
    cell = 0.1
    transform = from_origin(10.0, 62.0, cell, cell)  # high latitude: cells shrink northwards
    score = np.zeros((30, 40))
    score[5:15, 5:25] = 0.9
    score[20:28, 30:38] = 0.7
    write_raster(tmp_path / "s.tif", score, crs="EPSG:4326", transform=transform)
    frame = prospect_polygons(tmp_path, [ProspectScreen("s", "S", "s", (), 0.5)], 1.0)
    assert len(frame) == 2
    assert frame.crs == "EPSG:4326"
    geod = Geod(ellps="WGS84")
    for row in frame.itertuples():
        # Densify so the Geod polygon follows the parallels the cell edges lie on.
        dense = shapely.segmentize(row.geometry, 0.01)
        area, _ = geod.geometry_area_perimeter(dense)
        # Tolerance 0.5 %: both are ellipsoidal areas of the same outline; what is left is
        # the densification of the parallels.
        assert row.area_km2 == pytest.approx(abs(area) / 1e6, rel=0.005)
        assert row.geometry.contains(shapely.Point(row.centroid_lon, row.centroid_lat))
    # About 0.1 deg x 0.1 deg cells near 61 N: ~5.4 km x 11.1 km, 200 of them.
    assert frame.iloc[0]["area_km2"] == pytest.approx(200 * 5.4 * 11.1, rel=0.03)


def test_decimated_reading_stays_inside_the_grid(tmp_path):
    rows, cols = 203, 301  # not multiples of the reduction factor
    score = np.zeros((rows, cols))
    score[50:150, 100:200] = 0.9  # 100 x 100 km
    score[185:, 270:] = 0.9  # touches the bottom-right corner
    write_raster(tmp_path / "s.tif", score, crs=EQUAL_AREA, transform=TRANSFORM)
    screen = ProspectScreen("s", "S", "s", (), 0.5)

    full = prospect_polygons(tmp_path, [screen], 50.0, max_cells=1000)
    assert list(full["area_km2"].round(6)) == [10_000.0, 18.0 * 31.0]

    reduced = prospect_polygons(tmp_path, [screen], 50.0, max_cells=64)  # factor 5
    assert len(reduced) == 2
    xmin, ymax = TRANSFORM.c, TRANSFORM.f
    xmax, ymin = TRANSFORM.c + cols * CELL_M, TRANSFORM.f - rows * CELL_M
    extent = shapely.box(xmin, ymin, xmax, ymax)
    assert extent.buffer(1e-6).contains(shapely.union_all(reduced.geometry.to_numpy()))
    big = reduced.sort_values("area_km2").iloc[-1]
    # Reduced cells are about 5 km; the outline can move by up to one reduced cell on each
    # side: 100 +- 10 km a side.
    assert 90.0**2 <= big["area_km2"] <= 110.0**2
    corner = reduced.sort_values("area_km2").iloc[0]
    assert corner.geometry.bounds[2] == pytest.approx(xmax, abs=1e-6)
    assert corner.geometry.bounds[1] == pytest.approx(ymin, abs=1e-6)


def test_write_layer_round_trip(folder, tmp_path):
    gpkg = tmp_path / "results.gpkg"
    pyogrio.write_dataframe(
        pd.DataFrame({"k": ["v"]}), gpkg, layer="other", driver="GPKG"
    )  # an existing layer is kept
    frame = prospect_polygons(folder, [heat_screen(), second_screen()], 10.0)
    assert write_prospects_layer(gpkg, frame) == 3
    assert set(pyogrio.list_layers(gpkg)[:, 0]) == {"other", "prospects"}

    back = pyogrio.read_dataframe(gpkg, layer="prospects")
    assert list(back.columns) == [*PROSPECT_COLUMNS, "geometry"]
    assert list(back["rank"]) == [1, 2, 3]
    assert back["drivers"].iloc[0] == frame["drivers"].iloc[0]
    assert back.crs == EQUAL_AREA
    with fiona.open(gpkg, layer="prospects") as src:
        assert len(src) == 3
        assert set(PROSPECT_COLUMNS) <= set(src.schema["properties"])
        assert src.schema["geometry"] == "Polygon"
        assert src.schema["properties"]["rank"].startswith("int")
    with sqlite3.connect(gpkg) as con:
        description = con.execute(
            "SELECT description FROM gpkg_contents WHERE table_name = 'prospects'"
        ).fetchone()[0]
        rtree = con.execute(
            "SELECT 1 FROM sqlite_master WHERE name LIKE 'rtree_prospects_%'"
        ).fetchone()
    assert "not a resource estimate" in description
    assert rtree is not None  # spatial index

    # Rewriting replaces the layer.
    assert write_prospects_layer(gpkg, frame.iloc[:1]) == 1
    assert len(pyogrio.read_dataframe(gpkg, layer="prospects")) == 1


def test_write_empty_layer_has_full_schema(folder, tmp_path):
    gpkg = tmp_path / "empty.gpkg"
    empty = prospect_polygons(folder, [heat_screen(threshold=0.99)], 10.0)
    assert write_prospects_layer(gpkg, empty) == 0
    info = pyogrio.read_info(gpkg, layer="prospects")
    assert info["features"] == 0
    assert list(info["fields"]) == list(PROSPECT_COLUMNS)
    assert info["geometry_type"] == "Polygon"
    with fiona.open(gpkg, layer="prospects") as src:
        assert len(src) == 0
    with pytest.raises(ValueError, match="lacks the columns"):
        write_prospects_layer(gpkg, empty.drop(columns="drivers"))


def test_screen_validation():
    with pytest.raises(ValueError, match="weight"):
        ProspectScreen("k", "K", "s", (("f", "f", -1.0),), 0.5)
    with pytest.raises(ValueError, match="threshold"):
        ProspectScreen("k", "K", "s", (), float("nan"))
    with pytest.raises(ValueError, match="unique"):
        prospect_polygons(".", [ProspectScreen("k", "K", "s", (), 0.5)] * 2, 1.0)
    with pytest.raises(ValueError, match="min_area_km2"):
        prospect_polygons(".", [], -1.0)


def test_standard_screens_name_the_run_outputs():
    from geomelt.parameters import (
        GeothermalScreeningParameters,
        MineralScreeningParameters,
        ThermalParameters,
    )
    from geomelt.physics.screening import (
        HEAT_SOURCE_OUTPUTS,
        MINERAL_SYSTEMS,
        mineral_output_names,
    )

    gp, mp = GeothermalScreeningParameters(), MineralScreeningParameters()
    screens = standard_screens(gp, mp)
    assert [s.key for s in screens] == ["geothermal_heat_source"] + [m.key for m in MINERAL_SYSTEMS]
    outputs = set(HEAT_SOURCE_OUTPUTS) | set(mineral_output_names())
    for screen in screens:
        assert screen.score_layer in outputs
        assert {stem for _, stem, _ in screen.factor_layers} <= outputs
    heat, porphyry = screens[0], screens[1]
    assert heat.threshold == gp.heat_source_prospect_threshold
    assert porphyry.threshold == mp.mineral_prospect_threshold
    depth = ThermalParameters().screening_temperature_depth_km
    assert heat.factor_layers[0] == (
        f"temperature at {depth:g} km",
        "heat_source_temperature_factor",
        gp.heat_source_weight_temperature,
    )
    assert [w for _, _, w in porphyry.factor_layers] == [
        getattr(mp, f.weight) for f in MINERAL_SYSTEMS[0].factors
    ]


def test_default_reduction_matches_the_settings_layer():
    from geomelt.pipeline.products import POLYGON_MAX_CELLS as SETTINGS_MAX_CELLS

    assert POLYGON_MAX_CELLS == SETTINGS_MAX_CELLS
