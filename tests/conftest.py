"""Shared fixtures: tiny synthetic rasters and vector layers written to tmp_path.

The values are invented test data shaped like the real inputs (units in the
layer names); they are not taken from any data set.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

import geopandas as gpd
import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin
from shapely.geometry import LineString, Point

LAEA = "+proj=laea +lat_0=10 +lon_0=-30 +x_0=0 +y_0=0 +ellps=WGS84 +units=m +no_defs"
"""A Lambert azimuthal equal-area CRS for the synthetic grids."""

REPO = Path(__file__).resolve().parents[1]
SAMPLE_LAYERS = REPO / "sample_layers"


def write_raster(path, array, *, crs=LAEA, transform=None, nodata=np.nan, dtype=None):
    """Write a single-band GeoTIFF and return its path."""
    array = np.asarray(array)
    dtype = dtype or array.dtype.name
    if transform is None:
        transform = from_origin(-320_000, 240_000, 10_000, 10_000)
    with rasterio.open(
        path,
        "w",
        driver="GTiff",
        width=array.shape[1],
        height=array.shape[0],
        count=1,
        dtype=dtype,
        crs=crs,
        transform=transform,
        nodata=nodata,
    ) as dst:
        dst.write(array.astype(dtype), 1)
    return Path(path)


@pytest.fixture
def tiny_region(tmp_path):
    """A 48 x 64 region: crust thickening and heat flow falling from west to east."""
    return make_tiny_region(tmp_path)


@pytest.fixture(scope="module")
def tiny_region_module(tmp_path_factory):
    """The tiny region, shared by the tests of one module (read only)."""
    return make_tiny_region(tmp_path_factory.mktemp("tiny"))


def make_tiny_region(tmp_path):
    """Write the tiny region's layers and configuration under ``tmp_path``."""
    rows, cols = 48, 64
    x = np.linspace(0.0, 1.0, cols)[None, :].repeat(rows, axis=0)
    crust = (7.0 + 38.0 * x).astype("float32")  # 7 km (oceanic) to 45 km
    heat = (250.0 - 210.0 * x).astype("float32")  # 250 to 40 mW m-2
    crust[0, 0] = np.nan
    d = tmp_path / "inputs"
    d.mkdir()
    write_raster(d / "crust.tif", crust)
    write_raster(d / "heat.tif", heat)
    lines = gpd.GeoDataFrame(
        {
            "boundary_type": ["ridge", "subduction"],
            "rate_mm_yr": [50.0, 70.0],
            "upper_plate_side": [None, "right"],
        },
        geometry=[
            LineString([(-300_000, -200_000), (-300_000, 200_000)]),
            LineString([(0, -200_000), (0, 200_000)]),
        ],
        crs=LAEA,
    )
    lines.to_file(d / "bounds.gpkg", layer="plate_boundaries", engine="pyogrio")
    spots = gpd.GeoDataFrame(
        {"excess_temperature_k": [150.0], "radius_km": [200.0]},
        geometry=[Point(100_000, 0)],
        crs=LAEA,
    )
    spots.to_file(d / "spots.gpkg", layer="hotspots", engine="pyogrio")
    cfg = d / "region.toml"
    cfg.write_text(
        textwrap.dedent(
            """
            [inputs]
            crustal_thickness_km = "crust.tif"
            heat_flow_mw_m2 = "heat.tif"
            plate_boundaries = "bounds.gpkg"
            hotspots = "spots.gpkg"

            [parameters]
            temperature_depths_km = [5.0, 10.0]
            isotherms_c = [150.0]

            [run]
            block_size = 32
            """
        )
    )
    return cfg
