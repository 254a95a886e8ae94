"""Robustness: killed runs, reproducibility, provenance, untouched inputs, safe configuration,
and the GeoTIFF writer's round trip.

All data is invented. The killed-run test starts geomelt in a child process on a
1024 x 1024 grid (about two seconds of work) and kills it with SIGKILL while it
writes; the other tests run in this process on tiny grids.
"""

from __future__ import annotations

import hashlib
import json
import os
import signal
import subprocess
import sys
import tempfile
import textwrap
import time
from pathlib import Path

import geopandas as gpd
import numpy as np
import pyogrio
import pytest
import rasterio
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from rasterio.enums import Resampling
from rasterio.transform import from_origin
from rasterio.windows import Window
from shapely.geometry import LineString, Point

import geomelt
from geomelt.cli import main
from geomelt.io.geotiff import GeoTiffWriter
from geomelt.io.rasters import SCAN_MAX_CELLS, RasterGrid, scan_raster_values
from geomelt.pipeline.runner import MANIFEST, RESULTS_GPKG, STAGING_DIR
from tests.conftest import LAEA, write_raster

SQL = "x'); DROP TABLE run_metadata;--"
"""A boundary name made of SQL metacharacters; it must arrive in results.gpkg as text."""


def sha256(path: Path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def write_region(folder: Path, size: tuple[int, int], cell_m: float, names=None) -> Path:
    """A smooth invented region (crust 7-45 km, heat flow 250-40 mW m-2 west to east)."""
    names = names or {}
    folder.mkdir(parents=True)
    rows, cols = size
    x = np.linspace(0.0, 1.0, cols)[None, :].repeat(rows, axis=0)
    y = np.linspace(0.0, 1.0, rows)[:, None].repeat(cols, axis=1)
    tr = from_origin(-cols * cell_m / 2, rows * cell_m / 2, cell_m, cell_m)
    crust = (7.0 + 38.0 * x + 2.0 * y).astype("float32")
    heat = (250.0 - 210.0 * x + 5.0 * y).astype("float32")
    crust[0, 0] = np.nan
    heat_name = names.get("heat", "heat.tif")
    write_raster(folder / "crust.tif", crust, transform=tr)
    write_raster(folder / heat_name, heat, transform=tr)
    half_w = cols * cell_m / 2
    lines = gpd.GeoDataFrame(
        {
            "boundary_type": ["ridge", "subduction"],
            "rate_mm_yr": [50.0, 70.0],
            "upper_plate_side": [None, "right"],
            "name": ["Invented Ridge", SQL],
        },
        geometry=[
            LineString([(-0.6 * half_w, -half_w), (-0.6 * half_w, half_w)]),
            LineString([(0.1 * half_w, -half_w), (0.1 * half_w, half_w)]),
        ],
        crs=LAEA,
    )
    lines.to_file(
        folder / "bounds.gpkg", layer=names.get("layer", "plate_boundaries"), engine="pyogrio"
    )
    spots = gpd.GeoDataFrame(
        {"excess_temperature_k": [150.0], "radius_km": [200.0]},
        geometry=[Point(0.3 * half_w, 0)],
        crs=LAEA,
    )
    spots.to_file(folder / "spots.gpkg", layer="hotspots", engine="pyogrio")
    config = folder / "region.toml"
    config.write_text(
        textwrap.dedent(
            f"""
            [inputs]
            crustal_thickness_km = "crust.tif"
            heat_flow_mw_m2 = "{heat_name}"
            plate_boundaries = "bounds.gpkg"
            hotspots = "spots.gpkg"

            [run]
            block_size = {64 if cols > 128 else 32}
            """
        )
    )
    return config


# --- (a) a run killed while it writes ---------------------------------------------------


def _child_env() -> dict[str, str]:
    """Environment for a child geomelt: the same geomelt as this process."""
    env = dict(os.environ)
    root = str(Path(geomelt.__file__).resolve().parents[1])
    env["PYTHONPATH"] = os.pathsep.join(filter(None, [root, env.get("PYTHONPATH")]))
    return env


def _final_files(out: Path) -> list[Path]:
    return [
        p for p in out.rglob("*") if p.is_file() and STAGING_DIR not in p.relative_to(out).parts
    ]


def _staged(out: Path, ready_only: bool) -> bool:
    staging = out / STAGING_DIR
    if ready_only:
        # Late in the run: finished rasters wait in the staging folder (or, in a runner that
        # moves each raster as soon as it is finished, they appear under their final names).
        return any((staging / "ready").glob("*.tif")) or any(out.glob("*.tif"))
    return staging.is_dir() and any(p.is_file() for p in staging.rglob("*"))


@pytest.fixture(scope="module")
def big_region(tmp_path_factory):
    return write_region(tmp_path_factory.mktemp("big") / "inputs", (1024, 1024), 1000.0)


@pytest.mark.parametrize("moment", ["writing-windows", "finishing"])
def test_killed_run_leaves_no_partial_file_and_reruns(big_region, tmp_path, moment):
    out = tmp_path / "out"
    cmd = [sys.executable, "-c", "from geomelt.cli import main; main()"]
    cmd += ["run", str(big_region), "-o", str(out), "-a", "thermal_state", "-q", "--no-progress"]
    proc = subprocess.Popen(
        cmd, env=_child_env(), stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, cwd=tmp_path
    )
    deadline = time.monotonic() + 120
    try:
        while not _staged(out, moment == "finishing"):
            if proc.poll() is not None:
                pytest.fail(f"the run ended before it could be killed: {proc.stderr.read()}")
            assert time.monotonic() < deadline, "the run never started writing"
            time.sleep(0.005)
        proc.send_signal(signal.SIGKILL)
    finally:
        proc.wait(timeout=60)
        proc.stderr.close()
    assert proc.returncode == -signal.SIGKILL, "the child must have been killed, not finished"

    # Whatever sits under a final name must be a complete file: it opens, every cell reads,
    # and it holds the pixels a complete run writes.
    left = {}
    for path in _final_files(out):
        if path.suffix == ".tif":
            with rasterio.open(path) as ds:
                assert ds.shape == (1024, 1024)
                left[path.name] = ds.read(1)
        elif path.suffix == ".gpkg":
            assert "run_metadata" in pyogrio.list_layers(path)[:, 0]

    result = CliRunner().invoke(
        main, ["run", str(big_region), "-o", str(out), "-a", "thermal_state", "--overwrite"]
    )
    assert result.exit_code == 0, result.output
    assert not (out / STAGING_DIR).exists()
    written = json.loads((out / MANIFEST).read_text())["files"]
    assert "moho_temperature_c.tif" in written and RESULTS_GPKG in written
    for name, pixels in left.items():
        with rasterio.open(out / name) as ds:
            np.testing.assert_array_equal(ds.read(1), pixels, err_msg=name)


def test_value_prescan_reads_a_reduced_sample(big_region):
    scan = scan_raster_values(big_region.parent / "crust.tif", "crustal_thickness_km")
    assert scan.shape == (1024, 1024) and scan.sample_shape == (SCAN_MAX_CELLS, SCAN_MAX_CELLS)
    # crust = 7 + 38 x + 2 y on [0, 1]^2 (write_region): the sample spans nearly all of it.
    assert 7.0 <= scan.minimum < 7.5 and 46.5 < scan.maximum <= 47.0
    assert scan.warnings == ()


def test_value_prescan_finds_a_sparse_layer_between_its_samples(tmp_path):
    # A 2 x 2 slab patch that the reduced (1 in 4, nearest neighbour) read misses; the
    # pre-scan must look at every block before it calls the layer empty.
    slab = np.full((1024, 1024), np.nan, dtype="float32")
    slab[503:505, 503:505] = 120.0
    path = write_raster(tmp_path / "slab.tif", slab, transform=from_origin(0, 0, 1000, 1000))
    with rasterio.open(path) as ds:
        reduced = ds.read(
            1, out_shape=(SCAN_MAX_CELLS, SCAN_MAX_CELLS), resampling=Resampling.nearest
        )
    assert np.isnan(reduced).all(), "premise: the reduced read misses the patch"
    scan = scan_raster_values(path, "slab_depth_km")
    assert scan.minimum == scan.maximum == 120.0
    assert scan.valid_share == pytest.approx(4 / 1024**2)
    assert scan.warnings == ()


# --- (b, c, d) reproducibility, provenance, untouched inputs, SQL metacharacters ----------


@pytest.fixture(scope="module")
def twin_runs(tmp_path_factory):
    """The same inputs run twice with every algorithm; inputs hashed before and after.

    The heat-flow file and the boundary layer carry SQL metacharacters in their names.
    """
    root = tmp_path_factory.mktemp("twins")
    names = {"heat": "heat'; DROP TABLE x;--.tif", "layer": "plate_boundaries\"'; --"}
    config = write_region(root / "inputs", (48, 64), 10_000.0, names)
    inputs = sorted(p for p in config.parent.iterdir() if p.is_file())

    def state():
        return {p.name: (sha256(p), p.stat().st_mtime_ns) for p in inputs}

    before = state()
    listing_before = sorted(p.name for p in config.parent.iterdir())
    outs = []
    for name in ("a", "b"):
        out = root / name
        result = CliRunner().invoke(main, ["run", str(config), "-o", str(out)])
        assert result.exit_code == 0, result.output
        outs.append(out)
    return {
        "config": config,
        "outs": outs,
        "before": before,
        "after": state(),
        "listing": (listing_before, sorted(p.name for p in config.parent.iterdir())),
    }


def _metadata(out: Path) -> dict[tuple[str, str], str]:
    frame = pyogrio.read_dataframe(out / RESULTS_GPKG, layer="run_metadata")
    return {
        (s, k): v for s, k, v in zip(frame["section"], frame["key"], frame["value"], strict=True)
    }


def test_same_inputs_give_identical_pixels_and_tags(twin_runs):
    a, b = twin_runs["outs"]
    names = sorted(p.name for p in a.glob("*.tif"))
    assert len(names) > 20
    assert names == sorted(p.name for p in b.glob("*.tif"))
    for name in names:
        with rasterio.open(a / name) as da, rasterio.open(b / name) as db:
            x, y = da.read(1), db.read(1)
            np.testing.assert_array_equal(x, y, err_msg=name)  # NaN positions included
            assert (da.crs, da.transform, da.dtypes, da.nodata is None) == (
                db.crs,
                db.transform,
                db.dtypes,
                db.nodata is None,
            )
            # Provenance tags carry nothing run-specific (no time, no output path): equal.
            assert da.tags() == db.tags(), name
            assert da.tags(1) == db.tags(1), name
            assert (da.descriptions, da.units) == (db.descriptions, db.units)
    # The files may differ in bytes: the threaded engine writes tiles in the order windows
    # finish, so only the layout inside the TIFF may change, never a pixel or a tag.
    for sidecar in sorted(a.glob("*.aux.xml")) + sorted(a.glob("*.qml")):
        assert sidecar.read_bytes() == (b / sidecar.name).read_bytes(), sidecar.name


def test_run_metadata_differs_only_in_finish_time(twin_runs):
    a, b = (_metadata(out) for out in twin_runs["outs"])
    assert set(a) == set(b)
    differing = {key for key in a if a[key] != b[key]}
    assert differing <= {("run", "finished_utc")}


def test_run_metadata_holds_the_sha256_of_every_input(twin_runs):
    config = twin_runs["config"]
    meta = _metadata(twin_runs["outs"][0])
    checked = 0
    for (section, name), value in meta.items():
        if section != "input":
            continue
        record = json.loads(value)
        path = Path(record["path"])
        assert path.parent == config.parent
        assert record["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest(), name
        checked += 1
    assert checked == 4


def test_inputs_are_never_modified(twin_runs):
    assert twin_runs["after"] == twin_runs["before"], "an input's bytes or mtime changed"
    listing_before, listing_after = twin_runs["listing"]
    assert listing_after == listing_before, "files appeared next to the inputs (e.g. .aux.xml)"


def test_sql_metacharacters_round_trip_into_results_gpkg(twin_runs):
    out = twin_runs["outs"][0]
    layers = set(pyogrio.list_layers(out / RESULTS_GPKG)[:, 0])
    assert {"run_metadata", "plate_boundaries"} <= layers
    echoed = pyogrio.read_dataframe(out / RESULTS_GPKG, layer="plate_boundaries")
    assert SQL in set(echoed["name"])
    meta = _metadata(out)
    heat = json.loads(meta[("input", "heat_flow_mw_m2")])
    assert heat["file"] == "heat'; DROP TABLE x;--.tif"
    assert len(meta) > 20, "run_metadata lost rows"


def test_code_in_a_parameter_value_is_never_executed(tmp_path):
    config = write_region(tmp_path / "inputs", (48, 64), 10_000.0)
    plain = config.read_text()
    flag = tmp_path / "executed"
    payload = f"__import__('os').system('touch {flag}')"
    in_toml = plain + f'\n[parameters]\nmantle_potential_temperature_c = "{payload}"\n'
    for text, extra in ((in_toml, []), (plain, ["-p", f"crust_conductivity_w_m_k={payload}"])):
        config.write_text(text)
        result = CliRunner().invoke(main, ["run", str(config), "-o", str(tmp_path / "o"), *extra])
        assert result.exit_code == 2, result.output
        assert "must be a number" in result.stderr
        assert "Traceback" not in result.output
    assert not flag.exists(), "a parameter value was executed"
    assert not (tmp_path / "o").exists()


# --- (e) GeoTIFF writer round trip ----------------------------------------------------


TAG_KEYS = st.from_regex(r"[a-z][a-z0-9_]{0,15}", fullmatch=True).filter(
    lambda k: k not in {"nodata", "area_or_point"}
)
TEXT = st.text(st.characters(blacklist_categories=("Cs", "Cc")), max_size=40).map(str.lstrip)
"""Text for descriptions, units and tag values. GDAL keeps band descriptions, units and
metadata in an XML block and drops leading white space there (" a" reads back as "a",
" " as nothing) and an empty metadata item is not stored at all; geomelt writes neither, so
the round trip is asked only of other text."""


@st.composite
def rasters(draw):
    rows = draw(st.integers(1, 40))
    cols = draw(st.integers(1, 40))
    values = draw(
        st.lists(
            st.floats(width=32, allow_nan=True, allow_infinity=False),
            min_size=rows * cols,
            max_size=rows * cols,
        )
    )
    return np.array(values, dtype="float32").reshape(rows, cols)


@settings(
    max_examples=25,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much],
)
@given(
    array=rasters(),
    description=TEXT,
    unit=TEXT,
    tags=st.dictionaries(TAG_KEYS, TEXT.map(lambda s: s or "x"), max_size=4),
)
def test_geotiff_writer_round_trip(array, description, unit, tags):
    grid = RasterGrid(
        crs=rasterio.crs.CRS.from_string(LAEA),
        transform=from_origin(-1000.0, 2000.0, 50.0, 50.0),
        width=array.shape[1],
        height=array.shape[0],
    )
    with tempfile.TemporaryDirectory() as folder:
        final = Path(folder) / "quantity.tif"
        writer = GeoTiffWriter(
            final,
            Path(folder) / STAGING_DIR,
            grid,
            description=description,
            unit=unit,
            band_tags=tags,
            dataset_tags={"producer": "test", **tags},
            block_size=16,
        )
        writer.write(array, Window(0, 0, grid.width, grid.height))
        assert writer.finish() == final
        assert not any((Path(folder) / STAGING_DIR).iterdir())
        with rasterio.open(final) as ds:
            back = ds.read(1)
            assert ds.dtypes[0] == "float32" and np.isnan(ds.nodata)
            assert (ds.crs, ds.transform, ds.shape) == (grid.crs, grid.transform, array.shape)
            np.testing.assert_array_equal(back, array)  # bit-exact, NaN at the same places
            assert ds.descriptions[0] == (description or None)
            assert ds.units[0] == (unit or None)
            for key, value in tags.items():
                assert ds.tags(1)[key] == value
                assert ds.tags()[key] == value


# --------------------------------------------------------------- outside calibration
def test_cells_outside_a_calibrated_range_are_counted_not_clipped(tmp_path):
    # The lithosphere base is searched to lab_max_depth_km; with 150 km, the cold craton
    # of the sample region (about 200 km under 40 mW/m2, Hasterok & Chapman 2011) lies
    # beyond it. Those cells must be nodata, counted in the summary, the run metadata and
    # the report, and never set to the search limit.
    from tests.conftest import SAMPLE_LAYERS

    out = tmp_path / "out"
    args = ["run", str(SAMPLE_LAYERS / "region.toml"), "-o", str(out), "-a", "thermal_state"]
    res = CliRunner().invoke(main, [*args, "-p", "lab_max_depth_km=150"])
    assert res.exit_code == 0, res.output
    with rasterio.open(out / "lab_depth_km.tif") as ds:
        lab = ds.read(1)
    with rasterio.open(SAMPLE_LAYERS / "crustal_thickness_km.tif") as ds:
        valid = ds.read(1, masked=True).mask == False  # noqa: E712
    outside = int(np.count_nonzero(np.isnan(lab) & valid))
    assert outside > 100
    assert np.nanmax(lab) < 150.0  # nothing clipped to the limit
    line = next(t for t in res.stdout.splitlines() if t.startswith("lab_depth_km.tif"))
    assert line.split()[-1] == str(outside)
    meta = pyogrio.read_dataframe(out / RESULTS_GPKG, layer="run_metadata")
    rec = meta[(meta["section"] == "outside_calibration") & (meta["key"] == "lab_depth_km.tif")]
    entry = json.loads(rec["value"].iloc[0])
    assert entry["cells"] == outside and "lab_max_depth_km" in entry["where"]
    assert "outside calibration" in (out / "report.html").read_text(encoding="utf-8")
