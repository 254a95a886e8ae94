"""The column probe command: typed values, a location in the sample region, plots."""

from __future__ import annotations

import json

import pytest
import rasterio
from click.testing import CliRunner

from geomelt.cli import main
from tests.conftest import SAMPLE_LAYERS
from tests.test_sample_region import FEATURES, kinds


def run(*args):
    return CliRunner().invoke(main, ["column", *map(str, args)])


def test_typed_values_arc_column_explains_all_mechanisms():
    res = run("--heat-flow-mw-m2", 90, "--crustal-thickness-km", 45, "--slab-depth-km", 110)
    assert res.exit_code == 0, res.output
    assert "FLUX" in res.output and "DECOMPRESSION" in res.output
    assert "CAUTION" in res.output


def test_ridge_cell_agrees_with_the_map_and_writes_a_plot(tmp_path):
    ridge = kinds("mid_ocean_ridge")[0]
    png = tmp_path / "ridge.png"
    res = run(
        SAMPLE_LAYERS / "region.toml", "--at", ridge["x"], ridge["y"], "--plot", png, "--json"
    )
    assert res.exit_code == 0, res.output
    doc = json.loads(res.output)
    assert doc["results"]["melt_thickness_km"] > 5.0
    assert any("DECOMPRESSION" in line for line in doc["decisions"])
    assert png.stat().st_size > 20_000
    out = tmp_path / "maps"
    assert (
        CliRunner()
        .invoke(main, ["run", str(SAMPLE_LAYERS / "region.toml"), "-o", str(out)])
        .exit_code
        == 0
    )
    with rasterio.open(out / "melt_thickness_km.tif") as ds:
        r, c = ds.index(ridge["x"], ridge["y"])
        assert doc["results"]["melt_thickness_km"] == pytest.approx(
            float(ds.read(1)[r, c]), abs=1e-5
        )


def test_craton_cell_by_lonlat(tmp_path):
    craton = FEATURES["m"]
    from pyproj import Transformer

    with rasterio.open(SAMPLE_LAYERS / "crustal_thickness_km.tif") as ds:
        tr = Transformer.from_crs(ds.crs.to_wkt(), "EPSG:4326", always_xy=True)
    lon, lat = tr.transform(craton["x"], craton["y"])
    res = run(SAMPLE_LAYERS / "region.toml", "--lonlat", lon, lat, "--plot", tmp_path / "c.png")
    assert res.exit_code == 0, res.output
    assert "no decompression melting" in res.output
    assert (tmp_path / "c.png").exists()


def test_location_outside_the_grid_is_an_input_error():
    res = run(SAMPLE_LAYERS / "region.toml", "--lonlat", 10.0, 50.0)
    assert res.exit_code == 3
    assert "outside the reference grid" in res.output


def test_missing_values_without_config():
    res = run("--heat-flow-mw-m2", 60)
    assert res.exit_code == 2
    assert "--crustal-thickness-km" in res.output
