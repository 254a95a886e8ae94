"""Tests of the invented demo region: processing_scripts/make_sample_layers.py and sample_layers/.

The committed layers must be exactly what the script makes with its default seed, and the
region must contain the settings it claims, with physically consistent values.
"""

from __future__ import annotations

import importlib.util
import subprocess
import sys
from pathlib import Path

import geopandas as gpd
import numpy as np
import pyogrio
import pytest
import rasterio
import shapely
from pyproj import CRS, Transformer

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

ROOT = Path(__file__).resolve().parents[1]
SCRIPT = ROOT / "processing_scripts" / "make_sample_layers.py"
COMMITTED = ROOT / "sample_layers"

RASTERS = ("crustal_thickness_km.tif", "heat_flow_mw_m2.tif", "slab_depth_km.tif")
VECTORS = {"plate_boundaries.gpkg": "plate_boundaries", "hotspots.gpkg": "hotspots"}
TEXTS = ("region.toml", "features.toml", "README.md")
ALL_FILES = (*RASTERS, *VECTORS, *TEXTS)
BOUNDARY_TYPES = {"ridge", "rift", "subduction", "collision", "transform"}
REGENERATE = "regenerate with: python processing_scripts/make_sample_layers.py --out sample_layers"

# Intended ranges of each setting in the demo region: (crust km, heat flow mW m-2).
# Oceanic crust ~7 km and GDH1 heat flow 510 t^-1/2 falling to ~50-60 over old floor
# (Stein & Stein 1992); craton ~40 mW m-2 (Rudnick, McDonough & O'Connell 1998); orogenic
# crust 60-80 km (Owens & Zandt 1997, from memory). The arc, back-arc, forearc, rift and
# hotspot ranges are the design ranges of this demo region (see sample_layers/README.md).
KIND_RANGES = {
    "mid_ocean_ridge": ((6.0, 8.0), (250.0, 600.0)),
    "transform": ((5.0, 8.0), (60.0, 600.0)),
    "ocean_basin": ((6.0, 7.5), (48.0, 65.0)),
    "oceanic_hotspot": ((12.0, 20.0), (60.0, 200.0)),
    "forearc": ((5.0, 40.0), (30.0, 45.0)),
    "oceanic_arc": ((20.0, 30.0), (80.0, 100.0)),
    "back_arc": ((7.0, 10.0), (100.0, 130.0)),
    "continental_arc": ((40.0, 50.0), (80.0, 100.0)),
    "continental_collision": ((60.0, 70.0), (60.0, 80.0)),
    "continental_rift": ((25.0, 30.0), (90.0, 120.0)),
    "continental_hotspot": ((30.0, 45.0), (90.0, 110.0)),
    "stable_interior": ((35.0, 42.0), (35.0, 65.0)),
}
# Slab depth below the volcanic front: 65-173 km (segment means 72-173 km, Syracuse & Abers
# 2006, G3 7:Q05017; 65-130 km, England, Engdahl & Thatcher 2004, GJI 156:377).
ARC_SLAB_RANGE_KM = (65.0, 173.0)
# Back-arc spreading sits where the slab is deeper than ~150 km (Taylor & Martinez 2003, from memory).
BACK_ARC_MIN_SLAB_KM = 150.0
# Plate rates of the design (mm/yr): full spreading, convergence, extension.
RATE_RANGES = {
    "ridge": (40.0, 60.0),
    "subduction": (50.0, 80.0),
    "collision": (20.0, 40.0),
    "rift": (3.0, 8.0),
}


def _load_features(folder=COMMITTED):
    path = folder / "features.toml"
    if not path.exists():
        return []
    with path.open("rb") as fh:
        return tomllib.load(fh)["features"]


def _read(path):
    with rasterio.open(path) as src:
        return src.read(1)


def _sample(path, x, y):
    """Nearest-cell values at points given in the reference (LAEA) CRS, metres."""
    x, y = np.atleast_1d(x), np.atleast_1d(y)
    with rasterio.open(path) as src:
        if src.crs.is_geographic:
            with rasterio.open(COMMITTED / RASTERS[0]) as ref:
                to_geo = Transformer.from_crs(ref.crs.to_wkt(), "EPSG:4326", always_xy=True)
            x, y = to_geo.transform(x, y)
        return np.array([v[0] for v in src.sample(zip(x, y, strict=True))], dtype=float)


@pytest.fixture(scope="module")
def generator():
    """The script as a module (it is standalone, so importing it has no side effects)."""
    spec = importlib.util.spec_from_file_location("make_sample_layers", SCRIPT)
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    spec.loader.exec_module(module)
    yield module
    sys.modules.pop(spec.name, None)


@pytest.fixture(scope="module")
def fresh(tmp_path_factory):
    """A fresh default run of the command line (default seed, scale 1)."""
    out = tmp_path_factory.mktemp("fresh") / "layers"
    run = subprocess.run(
        [sys.executable, str(SCRIPT), "--out", str(out)],
        capture_output=True,
        text=True,
        check=False,
        cwd=tmp_path_factory.getbasetemp(),
    )
    assert run.returncode == 0, run.stderr
    assert "wrote sample layers" in run.stdout
    return out


@pytest.fixture(scope="module")
def half_scale_runs(generator, tmp_path_factory):
    """Two runs with the same seed and one with another seed, at --scale 0.5 for speed."""
    base = tmp_path_factory.mktemp("half")
    return (
        generator.write_all(base / "a", seed=7, scale=0.5),
        generator.write_all(base / "b", seed=7, scale=0.5),
        generator.write_all(base / "c", seed=8, scale=0.5),
    )


# ----------------------------------------------------------------------------------------
# The generator
# ----------------------------------------------------------------------------------------
def test_fresh_run_writes_every_file(fresh):
    missing = [name for name in ALL_FILES if not (fresh / name).is_file()]
    assert not missing, f"the generator did not write {missing}"


def test_same_seed_gives_identical_layers(half_scale_runs):
    first, second, _ = half_scale_runs
    for name in ALL_FILES:  # same libraries, same seed: the very same bytes
        same = (first / name).read_bytes() == (second / name).read_bytes()
        assert same, f"{name} differs between two runs with the same seed"
    for name in RASTERS:
        a, b = _read(first / name), _read(second / name)
        assert np.array_equal(a, b, equal_nan=True), f"{name} differs between identical runs"
    for name, layer in VECTORS.items():
        fa = gpd.read_file(first / name, layer=layer)
        fb = gpd.read_file(second / name, layer=layer)
        assert fa.drop(columns="geometry").equals(fb.drop(columns="geometry")), name
        assert shapely.equals_exact(fa.geometry.values, fb.geometry.values, 0.0).all(), name
    for name in TEXTS:
        assert (first / name).read_text() == (second / name).read_text(), name


def test_seed_changes_only_the_low_amplitude_noise(half_scale_runs):
    first, _, other = half_scale_runs
    crust_a, crust_c = _read(first / RASTERS[0]), _read(other / RASTERS[0])
    heat_a, heat_c = _read(first / RASTERS[1]), _read(other / RASTERS[1])
    assert not np.array_equal(crust_a, crust_c), "the seed does not reach the crust noise"
    # noise is ~0.3 km (crust) and ~3 % (heat flow); two seeds stay within a few sigma
    assert np.nanmax(np.abs(crust_a - crust_c)) < 2.5
    assert np.nanmax(np.abs(heat_a / heat_c - 1.0)) < 0.25
    # the slab has no noise
    assert np.array_equal(_read(first / RASTERS[2]), _read(other / RASTERS[2]), equal_nan=True)


def test_scale_refines_the_grid_of_the_same_region(half_scale_runs):
    half = half_scale_runs[0]
    with rasterio.open(half / RASTERS[0]) as src:
        assert (src.width, src.height) == (200, 150)
        assert src.res == pytest.approx((20_000.0, 20_000.0))
        assert tuple(src.bounds) == pytest.approx((-2.0e6, -1.5e6, 2.0e6, 1.5e6))
    with rasterio.open(half / RASTERS[2]) as src:
        assert src.res == pytest.approx((0.3, 0.3))


def test_bad_scale_is_refused(generator, tmp_path):
    with pytest.raises(SystemExit):
        generator.main(["--out", str(tmp_path / "x"), "--scale", "0"])


# ----------------------------------------------------------------------------------------
# The committed layers
# ----------------------------------------------------------------------------------------
def test_committed_files_exist_and_are_small():
    missing = [name for name in ALL_FILES if not (COMMITTED / name).is_file()]
    assert not missing, f"sample_layers/ lacks {missing}; {REGENERATE}"
    total = sum(p.stat().st_size for p in COMMITTED.iterdir() if p.is_file())
    assert total < 3_000_000, f"sample_layers/ holds {total / 1e6:.2f} MB (limit 3 MB)"


def test_committed_layers_match_a_fresh_generation(fresh):
    for name in RASTERS:
        with rasterio.open(COMMITTED / name) as old, rasterio.open(fresh / name) as new:
            assert old.crs == new.crs, f"{name}: CRS drifted; {REGENERATE}"
            assert old.transform == new.transform and old.shape == new.shape, name
            assert old.tags() == new.tags() and old.tags(1) == new.tags(1), name
            a, b = old.read(1), new.read(1)
        assert np.array_equal(np.isnan(a), np.isnan(b)), f"{name}: nodata drifted; {REGENERATE}"
        # float32 storage; allow last-digit differences between numpy builds
        np.testing.assert_allclose(a, b, rtol=1e-5, atol=1e-4, err_msg=f"{name}; {REGENERATE}")
    for name, layer in VECTORS.items():
        old = gpd.read_file(COMMITTED / name, layer=layer)
        new = gpd.read_file(fresh / name, layer=layer)
        assert old.drop(columns="geometry").equals(new.drop(columns="geometry")), name
        assert shapely.equals_exact(old.geometry.values, new.geometry.values, 1e-3).all(), name
        assert old.crs == new.crs, name
    for name in TEXTS:
        old, new = (COMMITTED / name).read_text(), (fresh / name).read_text()
        assert old == new, f"sample_layers/{name} drifted from the script; {REGENERATE}"


def test_reference_grid_is_equal_area_and_shared():
    with (
        rasterio.open(COMMITTED / RASTERS[0]) as crust,
        rasterio.open(COMMITTED / RASTERS[1]) as heat,
    ):
        assert crust.crs == heat.crs
        assert crust.transform == heat.transform and crust.shape == heat.shape
        crs = CRS(crust.crs.to_wkt())
        assert crs.is_projected
        assert crs.coordinate_operation.method_name == "Lambert Azimuthal Equal Area"
        assert crust.res == (10_000.0, 10_000.0) and (crust.width, crust.height) == (400, 300)
    for name, layer in VECTORS.items():
        info = pyogrio.read_info(COMMITTED / name, layer=layer)
        assert CRS(info["crs"]).equals(crs), f"{name} is not on the reference CRS"
    with (COMMITTED / "features.toml").open("rb") as fh:
        assert CRS(tomllib.load(fh)["crs_proj"]).equals(crs)


def test_slab_is_geographic_on_its_own_grid():
    with rasterio.open(COMMITTED / RASTERS[2]) as slab:
        assert slab.crs.to_epsg() == 4326
        assert slab.res == pytest.approx((0.15, 0.15))
        depth = slab.read(1)
    assert np.isnan(depth).any() and np.isfinite(depth).any()
    assert 5.0 <= np.nanmin(depth) <= 10.0, "the slab should start at trench depth"
    assert np.nanmax(depth) <= 600.0


@pytest.mark.parametrize("name", RASTERS)
def test_raster_metadata(name):
    with rasterio.open(COMMITTED / name) as src:
        assert src.dtypes[0] == "float32"
        assert np.isnan(src.nodata)
        assert src.block_shapes[0] == (256, 256)
        assert src.compression.value == "DEFLATE"
        assert src.tags(ns="IMAGE_STRUCTURE").get("PREDICTOR") == "3"
        assert src.descriptions[0] == name.removesuffix(".tif")
        assert src.units[0] in {"km", "mW m-2"}
        tags = src.tags()
        assert "invented demo data" in tags["source"]
        assert tags["seed"].isdigit()


def test_plate_boundaries_layer():
    assert [name for name, _ in pyogrio.list_layers(COMMITTED / "plate_boundaries.gpkg")] == [
        "plate_boundaries"
    ]
    pb = gpd.read_file(COMMITTED / "plate_boundaries.gpkg", layer="plate_boundaries")
    assert list(pb.columns) == [
        "name",
        "boundary_type",
        "rate_mm_yr",
        "upper_plate_side",
        "geometry",
    ]
    assert set(pb.geom_type) == {"LineString"}
    assert set(pb.boundary_type) == BOUNDARY_TYPES
    assert pb.name.is_unique
    convergent = pb.boundary_type.isin(["subduction", "collision"])
    assert pb.loc[convergent, "upper_plate_side"].isin(["left", "right"]).all()
    assert pb.loc[~convergent, "upper_plate_side"].isna().all()
    for kind, (low, high) in RATE_RANGES.items():
        rates = pb.loc[pb.boundary_type == kind, "rate_mm_yr"]
        assert rates.between(low, high).all(), f"{kind} rates {rates.tolist()}"
    ridge_rates = set(pb.loc[pb.boundary_type == "ridge", "rate_mm_yr"])
    assert set(pb.loc[pb.boundary_type == "transform", "rate_mm_yr"]) <= ridge_rates


def test_hotspots_layer():
    hs = gpd.read_file(COMMITTED / "hotspots.gpkg", layer="hotspots")
    assert list(hs.columns) == ["name", "excess_temperature_k", "radius_km", "geometry"]
    assert set(hs.geom_type) == {"Point"}
    # plume excess temperatures +100 to +300 K (White & McKenzie 1989; Herzberg et al. 2007)
    assert hs.excess_temperature_k.between(100.0, 300.0).all()
    assert (hs.radius_km > 0).all()


def test_region_toml_names_every_layer():
    with (COMMITTED / "region.toml").open("rb") as fh:
        config = tomllib.load(fh)
    assert set(config["inputs"]) == {
        "crustal_thickness_km",
        "heat_flow_mw_m2",
        "slab_depth_km",
        "plate_boundaries",
        "hotspots",
    }
    for path in config["inputs"].values():
        assert not Path(path).is_absolute() and (COMMITTED / path).is_file(), path
    assert config["parameters"]["mantle_potential_temperature_c"] == 1350.0


# ----------------------------------------------------------------------------------------
# The geology
# ----------------------------------------------------------------------------------------
FEATURES = _load_features()


def test_every_setting_is_present():
    assert {f["kind"] for f in FEATURES} == set(KIND_RANGES)


@pytest.mark.parametrize("feature", FEATURES, ids=[f["name"] for f in FEATURES])
def test_feature_values_in_rasters(feature):
    (crust_lo, crust_hi), (heat_lo, heat_hi) = KIND_RANGES[feature["kind"]]
    crust, heat = feature["crustal_thickness_km"], feature["heat_flow_mw_m2"]
    assert crust_lo <= crust <= crust_hi, f"stated crust {crust} km outside the design range"
    assert heat_lo <= heat <= heat_hi, f"stated heat flow {heat} outside the design range"
    x, y = feature["x"], feature["y"]
    got_crust = _sample(COMMITTED / "crustal_thickness_km.tif", x, y)[0]
    got_heat = _sample(COMMITTED / "heat_flow_mw_m2.tif", x, y)[0]
    assert got_crust == pytest.approx(crust, rel=0.2), "crust in the raster"
    assert got_heat == pytest.approx(heat, rel=0.2), "heat flow in the raster"


def test_slab_below_subduction_features():
    for f in FEATURES:
        depth = _sample(COMMITTED / "slab_depth_km.tif", f["x"], f["y"])[0]
        if f["kind"] in {"oceanic_arc", "continental_arc"}:
            low, high = ARC_SLAB_RANGE_KM
            assert low <= depth <= high, f"{f['name']}: slab {depth:.0f} km below the arc"
        elif f["kind"] == "back_arc":
            assert depth >= BACK_ARC_MIN_SLAB_KM, f"{f['name']}: slab {depth:.0f} km"
        elif f["kind"] == "forearc":
            assert 10.0 < depth < ARC_SLAB_RANGE_KM[0], f"{f['name']}: slab {depth:.0f} km"
        else:
            assert np.isnan(depth), f"{f['name']} ({f['kind']}) should have no slab below it"
        if "slab_depth_km" in f:
            assert depth == pytest.approx(f["slab_depth_km"], abs=10.0), f["name"]


def _offset_points(line, distance_m):
    """Points `distance_m` to the left (+) or right (-) of a line's midpoint."""
    mid = line.interpolate(0.5, normalized=True)
    ahead = line.interpolate(0.5 * line.length + 1000.0)
    tx, ty = ahead.x - mid.x, ahead.y - mid.y
    norm = np.hypot(tx, ty)
    left = np.array([-ty, tx]) / norm
    return mid.x + distance_m * left[0], mid.y + distance_m * left[1]


def test_boundary_lines_sit_on_their_raster_features():
    pb = gpd.read_file(COMMITTED / "plate_boundaries.gpkg", layer="plate_boundaries")
    crust_tif, heat_tif = COMMITTED / RASTERS[0], COMMITTED / RASTERS[1]
    slab_tif = COMMITTED / RASTERS[2]
    ridges = pb[pb.boundary_type == "ridge"]
    for _, row in pb.iterrows():
        line, kind = row.geometry, row.boundary_type
        if kind == "ridge":  # the heat-flow maximum, hotter than 150 km to either side
            on_axis = _sample(heat_tif, *_offset_points(line, 0.0))[0]
            flanks = [_sample(heat_tif, *_offset_points(line, d))[0] for d in (1.5e5, -1.5e5)]
            assert on_axis > 300.0 and on_axis > max(flanks), row["name"]
        elif kind == "transform":  # joins two ridge segments
            for end in (line.coords[0], line.coords[-1]):
                assert ridges.distance(shapely.Point(end)).min() < 1.0, row["name"]
        elif kind == "subduction":  # slab and arc on the upper-plate side only
            sign = 1.0 if row.upper_plate_side == "left" else -1.0
            arc, forearc = _offset_points(line, sign * 2.05e5), _offset_points(line, sign * 9e4)
            lower = _offset_points(line, -sign * 2.05e5)
            depth = _sample(slab_tif, *arc)[0]
            assert ARC_SLAB_RANGE_KM[0] <= depth <= ARC_SLAB_RANGE_KM[1], row["name"]
            assert np.isnan(_sample(slab_tif, *lower)[0]), row["name"]
            assert _sample(heat_tif, *arc)[0] > 80.0 > 45.0 > _sample(heat_tif, *forearc)[0]
            assert _sample(crust_tif, *arc)[0] > _sample(crust_tif, *lower)[0] + 10.0
        elif kind == "collision":
            assert _sample(crust_tif, *_offset_points(line, 0.0))[0] > 55.0, row["name"]
        elif kind == "rift":
            mid = _offset_points(line, 0.0)
            assert _sample(heat_tif, *mid)[0] > 90.0, row["name"]
            assert _sample(crust_tif, *mid)[0] < 31.0, row["name"]
