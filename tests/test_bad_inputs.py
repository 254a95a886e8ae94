"""Catalogue of bad inputs, each run through the command line.

Every case builds a tiny invented region (64 x 48 cells), spoils one thing,
runs ``geomelt run`` and checks:

- the documented exit code (2 configuration or parameters, 3 input layers,
  4 output location; 0 for the cases geomelt accepts with a warning);
- a one-paragraph message that names the layer, parameter or key, says what is
  wrong and how to fix it (the fragments listed with each case), and no
  Python traceback;
- that no file exists under a final output name: the output folder is absent
  or empty (or holds only what was there before), and the hidden staging
  folder is gone.

Cases that geomelt accepts run only the ``thermal_state`` algorithm (or the
one the case is about) to keep the catalogue fast.
"""

from __future__ import annotations

import errno
import os
import textwrap
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import geopandas as gpd
import numpy as np
import pytest
import rasterio
from affine import Affine
from click.testing import CliRunner
from pyproj import Geod, Transformer
from rasterio.transform import from_origin
from shapely.geometry import LineString, Point, Polygon

from geomelt.cli import main
from geomelt.cli.check_cmd import check_cmd
from geomelt.pipeline.runner import STAGING_DIR
from tests.conftest import LAEA, write_raster

ROWS, COLS = 48, 64
TRANSFORM = from_origin(-320_000, 240_000, 10_000, 10_000)
THERMAL_ONLY = ("-a", "thermal_state")
POLAR_ARGS = ("-a", "decompression_melting", "-a", "boundary_proximity")


class Region:
    """A tiny valid region in ``root/inputs`` with an output folder ``root/out``.

    Crust thickens from 7 to 45 km and heat flow falls from 250 to 40 mW m-2
    from west to east; one ridge and one subduction line; one hotspot.
    """

    def __init__(self, root: Path):
        self.dir = root / "inputs"
        self.dir.mkdir()
        self.out = root / "out"
        x = np.linspace(0.0, 1.0, COLS)[None, :].repeat(ROWS, axis=0)
        self.crust = (7.0 + 38.0 * x).astype("float32")
        self.heat = (250.0 - 210.0 * x).astype("float32")
        self.raster("crust.tif", self.crust)
        self.raster("heat.tif", self.heat)
        self.boundaries(
            {"boundary_type": ["ridge", "subduction"], "upper_plate_side": [None, "right"]},
            [
                LineString([(-300_000, -200_000), (-300_000, 200_000)]),
                LineString([(0, -200_000), (0, 200_000)]),
            ],
        )
        self.hotspots({"excess_temperature_k": [150.0], "radius_km": [200.0]}, [Point(1e5, 0)])
        self.inputs = {
            "crustal_thickness_km": "crust.tif",
            "heat_flow_mw_m2": "heat.tif",
            "plate_boundaries": "bounds.gpkg",
            "hotspots": "spots.gpkg",
        }
        self.extra_toml = ""
        self.write_config()

    @property
    def config(self) -> Path:
        return self.dir / "region.toml"

    def raster(self, name: str, array, **kwargs) -> Path:
        kwargs.setdefault("transform", TRANSFORM)
        return write_raster(self.dir / name, array, **kwargs)

    def boundaries(self, columns, geometry, crs=LAEA, name="bounds.gpkg", **kwargs) -> Path:
        gdf = gpd.GeoDataFrame(columns, geometry=geometry, crs=crs)
        kwargs.setdefault("layer", "plate_boundaries")
        with warnings.catch_warnings():  # writing bad layers on purpose
            warnings.simplefilter("ignore")
            gdf.to_file(self.dir / name, engine="pyogrio", **kwargs)
        return self.dir / name

    def hotspots(self, columns, geometry, crs=LAEA, name="spots.gpkg") -> Path:
        gdf = gpd.GeoDataFrame(columns, geometry=geometry, crs=crs)
        gdf.to_file(self.dir / name, layer="hotspots", engine="pyogrio")
        return self.dir / name

    def write_config(self, text: str | None = None) -> Path:
        if text is None:
            lines = [f'{k} = "{v}"' for k, v in self.inputs.items()]
            text = "[inputs]\n" + "\n".join(lines) + "\n\n[run]\nblock_size = 32\n"
            text += textwrap.dedent(self.extra_toml)
        self.config.write_text(text)
        return self.config

    def use(self, **inputs: str) -> None:
        """Point input layers at other files (name relative to the inputs folder)."""
        self.inputs.update(inputs)
        self.write_config()


@dataclass
class Case:
    """One bad input: how to make it, and what geomelt must answer."""

    id: str
    make: Callable[[Region], tuple[str, ...] | None]
    """Spoils the region; returns extra command-line arguments (or None)."""
    exit_code: int
    says: tuple[str, ...]
    """Fragments the message (or, for accepted cases, the warnings) must contain."""
    args: tuple[str, ...] = THERMAL_ONLY
    check: Callable[[Region], None] | None = None
    """Extra checks on the outputs of an accepted case."""
    keeps: tuple[str, ...] = field(default_factory=tuple)
    """Names allowed in the output folder afterwards (files that were there before)."""


# --- input rasters ----------------------------------------------------------------------


def missing_file(r):
    r.use(heat_flow_mw_m2="no_such_heat.tif")


def misspelt_file(r):
    r.use(heat_flow_mw_m2="Heat.tif")


def truncated_geotiff(r):
    data = (r.dir / "heat.tif").read_bytes()
    (r.dir / "heat.tif").write_bytes(data[: len(data) // 2])


def truncated_header(r):
    data = (r.dir / "heat.tif").read_bytes()
    (r.dir / "heat.tif").write_bytes(data[:100])


def text_as_raster(r):
    (r.dir / "heat.txt").write_text("heat flow, 65 mW/m2 everywhere\n")
    r.use(heat_flow_mw_m2="heat.txt")


def geopackage_as_raster(r):
    r.use(heat_flow_mw_m2="bounds.gpkg")


def folder_as_raster(r):
    (r.dir / "grids").mkdir()
    r.use(heat_flow_mw_m2="grids")


def raster_without_crs(r):
    r.raster("heat.tif", r.heat, crs=None)


def rasters_do_not_overlap(r):
    r.raster("heat.tif", r.heat, crs="EPSG:4326", transform=from_origin(120.0, -40.0, 0.1, 0.1))


def partial_overlap(r):
    # Same grid shifted east by half its width: the western half of the region is uncovered.
    r.raster("heat.tif", r.heat, transform=from_origin(0, 240_000, 10_000, 10_000))


def check_partial_overlap(r):
    with rasterio.open(r.out / "moho_temperature_c.tif") as ds:
        moho = ds.read(1)
    assert np.isnan(moho[:, : COLS // 2 - 1]).all(), "uncovered cells must be nodata"
    assert np.isfinite(moho[:, COLS // 2 + 1 :]).all()


def rotated_reference_grid(r):
    tr = TRANSFORM * Affine.rotation(10.0)
    r.raster("crust.tif", r.crust, transform=tr)
    r.raster("heat.tif", r.heat, transform=tr)


def multi_band_raster(r):
    with rasterio.open(
        r.dir / "heat.tif", "w", driver="GTiff", width=COLS, height=ROWS, count=2,
        dtype="float32", crs=LAEA, transform=TRANSFORM, nodata=np.nan,
    ) as dst:  # fmt: skip
        dst.write(np.stack([r.heat, r.heat * 0.0]))


def all_nodata(r):
    r.raster("heat.tif", np.full((ROWS, COLS), np.nan, "float32"))


def all_nodata_declared(r):
    r.raster("crust.tif", np.full((ROWS, COLS), -9999.0, "float32"), nodata=-9999.0)


def nan_and_nodata_mixed(r):
    heat = r.heat.copy()
    heat[5:10, 5:10] = np.nan
    heat[20:25, 40:45] = -9999.0
    r.raster("heat.tif", heat, nodata=-9999.0)


def check_nan_and_nodata(r):
    with rasterio.open(r.out / "moho_temperature_c.tif") as ds:
        moho = ds.read(1)
    assert np.isnan(moho[5:10, 5:10]).all() and np.isnan(moho[20:25, 40:45]).all()
    assert np.isfinite(moho).sum() == ROWS * COLS - 50


def integer_rasters(r):
    r.raster("crust.tif", np.round(r.crust).astype("int16"), nodata=-32768)
    r.raster("heat.tif", np.round(r.heat).astype("uint16"), nodata=0)


def check_integer(r):
    with rasterio.open(r.out / "moho_temperature_c.tif") as ds:
        assert ds.dtypes[0] == "float32"
        assert np.isfinite(ds.read(1)).all()


def one_cell(r):
    r.raster("crust.tif", np.array([[35.0]], "float32"))
    r.raster("heat.tif", np.array([[70.0]], "float32"))


def check_one_cell(r):
    with rasterio.open(r.out / "setting.tif") as ds:
        assert ds.shape == (1, 1)
    with rasterio.open(r.out / "moho_temperature_c.tif") as ds:
        assert np.isfinite(ds.read(1)).all()


def antimeridian_grid(r):
    # Geographic grid from 170 E to 190 E (170 W): longitudes past 180 in the transform.
    tr = from_origin(170.0, -5.0, 0.5, 0.5)
    x = np.linspace(0.0, 1.0, 40)[None, :].repeat(60, axis=0)
    r.raster("crust.tif", (7 + 38 * x).astype("float32"), crs="EPSG:4326", transform=tr)
    r.raster("heat.tif", (250 - 210 * x).astype("float32"), crs="EPSG:4326", transform=tr)
    r.boundaries(
        {"boundary_type": ["ridge", "subduction"], "upper_plate_side": [None, "left"]},
        [LineString([(175, -30), (185, -10)]), LineString([(-178, -35), (-176, -5)])],
        crs="EPSG:4326",
    )


def check_antimeridian(r):
    with rasterio.open(r.out / "distance_to_subduction_km.tif") as ds:
        assert ds.transform == from_origin(170.0, -5.0, 0.5, 0.5)
        subduction = ds.read(1)
    with rasterio.open(r.out / "distance_to_ridge_km.tif") as ds:
        ridge = ds.read(1)
    # The subduction line, given at 178-176 W, lies inside the grid (182-184 in its longitudes).
    assert np.nanmin(subduction) < 50.0
    # Cell (row 30, col 2) at 171.25 E, 20.25 S: its distance to the ridge (a geodesic from
    # 175 E 30 S to 175 W 10 S) computed here by brute force on the WGS84 ellipsoid; the
    # long way round would be ~39000 km (nodata beyond the 1500 km reach). Tolerance 1 %:
    # the brute force samples the line every ~1.2 km.
    geod = Geod(ellps="WGS84")
    pts = np.array(geod.npts(175, -30, -175, -10, 2000))
    dist = geod.inv(np.full(len(pts), 171.25), np.full(len(pts), -20.25), pts[:, 0], pts[:, 1])[2]
    assert ridge[30, 2] == pytest.approx(dist.min() / 1000.0, rel=0.01)


def polar_grid(r):
    tr = from_origin(-1.5e6, 1.5e6, 50_000, 50_000)
    x = np.linspace(0.0, 1.0, 60)[None, :].repeat(60, axis=0)
    r.raster("crust.tif", (7 + 38 * x).astype("float32"), crs="EPSG:3031", transform=tr)
    r.raster("heat.tif", (250 - 210 * x).astype("float32"), crs="EPSG:3031", transform=tr)
    r.boundaries({"boundary_type": ["ridge"]}, [LineString([(-1e6, 0), (1e6, 0)])], crs="EPSG:3031")
    r.hotspots({"radius_km": [300.0]}, [Point(0, 0)], crs="EPSG:3031")  # at the South Pole


def check_polar(r):
    with rasterio.open(r.out / "distance_to_ridge_km.tif") as ds:
        dist = ds.read(1)
    # The ridge runs through the pole along the 90 W - 90 E meridians: cells on it are
    # within a cell of it, cells 1000 km away (20 cells) are about 1000 km away.
    assert np.nanmin(dist[29:31, :]) < 40.0
    assert 900.0 < dist[10, 30] < 1100.0


def crust_in_metres(r):
    r.raster("crust.tif", r.crust * 1000.0)


def heat_flow_in_w_m2(r):
    r.raster("heat.tif", r.heat / 1000.0)


def negative_thickness(r):
    crust = r.crust.copy()
    crust[10:20, 10:20] = -5.0
    r.raster("crust.tif", crust)


def negative_heat_flow(r):
    heat = r.heat.copy()
    heat[:, -8:] = -20.0
    r.raster("heat.tif", heat)


def undeclared_fill_value(r):
    heat = r.heat.copy()
    heat[:6, :] = -9999.0
    r.raster("heat.tif", heat, nodata=None)


def slab_as_heights(r):
    slab = np.full((ROWS, COLS), np.nan, "float32")
    slab[:, 32:] = -np.linspace(20.0, 250.0, 32)[None, :]
    r.raster("slab.tif", slab)
    r.use(slab_depth_km="slab.tif")
    return ("-a", "flux_melting")


def slab_all_nodata(r):
    r.raster("slab.tif", np.full((ROWS, COLS), np.nan, "float32"))
    r.use(slab_depth_km="slab.tif")
    return ("-a", "flux_melting")


# --- vector inputs ----------------------------------------------------------------------


def boundary_unknown_type(r):
    r.boundaries({"boundary_type": ["spreading", "subduction"]}, [_line(0), _line(1)])


def boundary_missing_column(r):
    r.boundaries({"kind": ["ridge"]}, [_line(0)])


def boundary_shapefile_names(r):
    # A Shapefile cuts boundary_type to 'boundary_t' (10 characters).
    r.boundaries(
        {"boundary_type": ["ridge"]}, [_line(0)], name="bounds.shp", driver="ESRI Shapefile"
    )
    r.use(plate_boundaries="bounds.shp")


def boundary_points(r):
    r.boundaries({"boundary_type": ["ridge"]}, [Point(0, 0)])


def boundary_polygons(r):
    square = Polygon([(0, 0), (1e5, 0), (1e5, 1e5), (0, 1e5)])
    r.boundaries({"boundary_type": ["ridge"]}, [square])


def boundary_null_and_empty_geometries(r):
    r.boundaries(
        {"boundary_type": ["ridge", "ridge", "subduction"]},
        [_line(0), None, LineString()],
    )


def boundary_self_intersecting_line(r):
    # A line may cross itself (it is then not "simple" but still valid): accepted.
    bowtie = LineString([(-1e5, -1e5), (1e5, 1e5), (1e5, -1e5), (-1e5, 1e5)])
    r.boundaries({"boundary_type": ["transform"]}, [bowtie])


def boundary_zero_length_line(r):
    r.boundaries({"boundary_type": ["ridge"]}, [LineString([(5e4, 5e4), (5e4, 5e4)])])


def boundary_no_crs(r):
    r.boundaries({"boundary_type": ["ridge"]}, [_line(0)], crs=None)


def boundary_empty_layer(r):
    r.boundaries({"boundary_type": []}, [], crs=LAEA)
    return ("-a", "boundary_proximity")


def check_empty_boundaries(r):
    with rasterio.open(r.out / "distance_to_ridge_km.tif") as ds:
        assert np.isnan(ds.read(1)).all()


def boundary_rate_text(r):
    r.boundaries({"boundary_type": ["ridge"], "rate_mm_yr": ["fast"]}, [_line(0)])


def boundary_negative_rate(r):
    r.boundaries({"boundary_type": ["ridge"], "rate_mm_yr": [-30.0]}, [_line(0)])


def boundary_bad_side(r):
    r.boundaries({"boundary_type": ["subduction"], "upper_plate_side": ["east"]}, [_line(0)])


def boundary_file_is_raster(r):
    r.use(plate_boundaries="heat.tif")


def boundary_missing_file(r):
    r.use(plate_boundaries="no_bounds.gpkg")


def hotspots_missing_attributes(r):
    r.hotspots({"name": ["invented plume"]}, [Point(1e5, 0)])
    return ("-a", "decompression_melting")


def check_hotspot_defaults(r):
    with rasterio.open(r.out / "potential_temperature_c.tif") as ds:
        tp = ds.read(1)
    # Defaults (geomelt.constants): ambient 1350 degC, excess 200 K, Gaussian radius 300 km.
    # The nearest cell centre lies ~7 km from the hotspot (within 0.2 K of the peak); the
    # north-west corner cell lies d km away (geodesic), where the excess is 200 exp(-(d/300)^2).
    assert np.nanmax(tp) == pytest.approx(1350.0 + 200.0, abs=0.5)
    to_lonlat = Transformer.from_crs(LAEA, "EPSG:4326", always_xy=True)
    (lon1, lon2), (lat1, lat2) = to_lonlat.transform([-315_000, 100_000], [235_000, 0])
    d_km = Geod(ellps="WGS84").inv(lon1, lat1, lon2, lat2)[2] / 1000.0
    assert tp[0, 0] == pytest.approx(1350.0 + 200.0 * np.exp(-((d_km / 300.0) ** 2)), abs=0.5)


def hotspots_text_attribute(r):
    r.hotspots({"excess_temperature_k": ["hot"], "radius_km": [200.0]}, [Point(1e5, 0)])


def hotspots_negative_radius(r):
    r.hotspots({"excess_temperature_k": [150.0], "radius_km": [-200.0]}, [Point(1e5, 0)])


def hotspots_absolute_temperature(r):
    r.hotspots({"excess_temperature_k": [1600.0], "radius_km": [200.0]}, [Point(1e5, 0)])


def hotspots_lines(r):
    r.hotspots({"excess_temperature_k": [150.0]}, [_line(0)])


def _line(i: int) -> LineString:
    x = -200_000 + 100_000 * i
    return LineString([(x, -150_000), (x, 150_000)])


# --- configuration and parameters -------------------------------------------------------


def toml(text):
    def make(r):
        r.extra_toml = text
        r.write_config()

    return make


def config_replaced(text):
    def make(r):
        r.write_config(textwrap.dedent(text))

    return make


def run_table(text):
    """The region's inputs with another [run] table."""

    def make(r):
        inputs = "".join(f'{k} = "{v}"\n' for k, v in r.inputs.items())
        r.write_config(f"[inputs]\n{inputs}\n[run]\n{text}")

    return make


def missing_required_input(r):
    del r.inputs["heat_flow_mw_m2"]
    r.write_config()


def missing_config(r):
    r.config.unlink()


def code_as_parameter(r):
    flag = r.dir.parent / "executed"
    return (
        *THERMAL_ONLY,
        "-p",
        f"mantle_potential_temperature_c=__import__('os').system('touch {flag}')",
    )


# --- output location --------------------------------------------------------------------


def output_not_empty(r):
    r.out.mkdir()
    (r.out / "notes.txt").write_text("my notes")


def output_is_a_file(r):
    r.out.write_text("not a folder")


def output_would_replace_input(r):
    # The heat-flow input is named like an output, and the output folder is the input folder.
    os.replace(r.dir / "heat.tif", r.dir / "moho_temperature_c.tif")
    r.use(heat_flow_mw_m2="moho_temperature_c.tif")
    r.out = r.dir
    return (*THERMAL_ONLY, "--overwrite")


def output_parent_is_a_file(r):
    # Works as root too (root ignores permission bits): a regular file cannot hold a folder.
    (r.dir.parent / "results").write_text("a file")
    r.out = r.dir.parent / "results" / "run1"


def output_parent_read_only(r):
    if os.geteuid() == 0:
        pytest.skip("root ignores permission bits; output_parent_is_a_file covers this as root")
    parent = r.dir.parent / "locked"
    parent.mkdir()
    parent.chmod(0o555)
    r.out = parent / "run1"


def _raise_no_space(*args, **kwargs):
    raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), "output.tif")


def disk_full_in_window(monkeypatch):
    monkeypatch.setattr("geomelt.io.geotiff.GeoTiffWriter.write", _raise_no_space)


def disk_full_in_results_gpkg(monkeypatch):
    monkeypatch.setattr("geomelt.pipeline.runner.write_run_metadata", _raise_no_space)


CASES = [
    # input rasters
    Case("missing-file", missing_file, 3, ("heat_flow_mw_m2", "does not exist", "--input")),
    Case("misspelt-file", misspelt_file, 3, ("heat_flow_mw_m2", "does not exist", "did you mean 'heat.tif'?")),
    Case("truncated-geotiff", truncated_geotiff, 3, ("heat_flow_mw_m2", "truncated or damaged")),
    Case("truncated-header", truncated_header, 3, ("heat_flow_mw_m2", "cannot be read as a raster")),
    Case("text-file-as-raster", text_as_raster, 3, ("heat_flow_mw_m2", "cannot be read as a raster", "GeoTIFF")),
    Case("geopackage-as-raster", geopackage_as_raster, 3, ("heat_flow_mw_m2", "vector data set", "not a raster")),
    Case("folder-as-raster", folder_as_raster, 3, ("heat_flow_mw_m2", "is a folder")),
    Case("raster-without-crs", raster_without_crs, 3, ("heat_flow_mw_m2", "no coordinate reference system", "gdal_edit.py -a_srs")),
    Case("rasters-do-not-overlap", rasters_do_not_overlap, 3, ("heat_flow_mw_m2", "does not overlap", "CRS")),
    Case("partial-overlap", partial_overlap, 0, ("heat_flow_mw_m2' covers only 50 %",), check=check_partial_overlap),
    Case("rotated-reference-grid", rotated_reference_grid, 3, ("crustal_thickness_km", "rotated", "gdalwarp")),
    Case("multi-band-raster", multi_band_raster, 0, ("heat_flow_mw_m2", "has 2 bands; using band 1")),
    Case("all-nodata", all_nodata, 3, ("heat_flow_mw_m2", "every cell is nodata", "gdal_edit.py")),
    Case("all-nodata-declared", all_nodata_declared, 3, ("crustal_thickness_km", "every cell is nodata", "-9999")),
    Case("nan-and-nodata-mixed", nan_and_nodata_mixed, 0, (), check=check_nan_and_nodata),
    Case("integer-rasters", integer_rasters, 0, (), check=check_integer),
    Case("one-cell-grid", one_cell, 0, (), args=(), check=check_one_cell),
    Case("antimeridian-grid", antimeridian_grid, 0, (), args=("-a", "boundary_proximity"), check=check_antimeridian),
    Case("polar-grid", polar_grid, 0, ("no excess_temperature_k column",), args=POLAR_ARGS, check=check_polar),
    Case("crust-in-metres", crust_in_metres, 3, ("crustal_thickness_km", "look like metres", "Divide by 1000", "gdal_calc.py")),
    Case("heat-flow-in-w-m2", heat_flow_in_w_m2, 3, ("heat_flow_mw_m2", "look like W m-2", "Multiply by 1000")),
    Case("negative-thickness", negative_thickness, 3, ("crustal_thickness_km", "negative", "Set them to nodata")),
    Case("negative-heat-flow", negative_heat_flow, 3, ("heat_flow_mw_m2", "negative", "Set them to nodata")),
    Case("undeclared-fill-value", undeclared_fill_value, 3, ("heat_flow_mw_m2", "-9999", "undeclared nodata", "gdal_edit.py -a_nodata -9999")),
    Case("slab-as-heights", slab_as_heights, 3, ("slab_depth_km", "positive down", "Multiply by -1")),
    Case("slab-all-nodata", slab_all_nodata, 0, ("slab_depth_km", "every cell is nodata")),
    # vector inputs
    Case("boundary-unknown-type", boundary_unknown_type, 3, ("plate_boundaries", "'spreading'", "ridge, rift, subduction, collision, transform")),
    Case("boundary-missing-column", boundary_missing_column, 3, ("plate_boundaries", "no 'boundary_type' column", "kind")),
    Case("boundary-shapefile-names", boundary_shapefile_names, 3, ("plate_boundaries", "'boundary_t'", "10 characters")),
    Case("boundary-points", boundary_points, 3, ("plate_boundaries", "must be lines", "Point", "hotspots input")),
    Case("boundary-polygons", boundary_polygons, 3, ("plate_boundaries", "must be lines", "Polygon", "outlines")),
    Case("boundary-null-and-empty", boundary_null_and_empty_geometries, 0, ("plate_boundaries", "2 of 3 feature(s) have no geometry",)),
    Case("boundary-self-intersecting", boundary_self_intersecting_line, 0, ()),
    Case("boundary-zero-length", boundary_zero_length_line, 3, ("plate boundaries", "two distinct vertices")),
    Case("boundary-no-crs", boundary_no_crs, 3, ("plate_boundaries", "no coordinate reference system", "ogr2ogr -a_srs")),
    Case("boundary-empty-layer", boundary_empty_layer, 0, ("plate_boundaries", "has no lines"), check=check_empty_boundaries),
    Case("boundary-rate-text", boundary_rate_text, 3, ("plate_boundaries", "rate_mm_yr must be a number", "'fast'")),
    Case("boundary-negative-rate", boundary_negative_rate, 3, ("plate_boundaries", "rate_mm_yr", "non-negative")),
    Case("boundary-bad-side", boundary_bad_side, 3, ("plate_boundaries", "upper_plate_side", "'left' or 'right'", "'east'")),
    Case("boundary-file-is-raster", boundary_file_is_raster, 3, ("plate_boundaries", "is a raster, not a vector")),
    Case("boundary-missing-file", boundary_missing_file, 3, ("plate_boundaries", "does not exist")),
    Case("hotspots-missing-attributes", hotspots_missing_attributes, 0, ("hotspots", "hotspot_excess_temperature_k", "hotspot_radius_km"), check=check_hotspot_defaults),
    Case("hotspots-text-attribute", hotspots_text_attribute, 3, ("hotspots", "excess_temperature_k must be a number", "'hot'")),
    Case("hotspots-negative-radius", hotspots_negative_radius, 3, ("hotspots", "radius_km must lie in", "-200")),
    Case("hotspots-absolute-temperature", hotspots_absolute_temperature, 3, ("hotspots", "not an absolute temperature")),
    Case("hotspots-lines", hotspots_lines, 3, ("hotspots", "must be points", "LineString")),
    # configuration and parameters
    Case("config-unknown-table", toml("[output]\nfolder = 'x'\n"), 2, ("unknown table", "'output'", "[inputs], [parameters], [run]")),
    Case("config-unknown-run-key", toml("blocksize = 64\n"), 2, ("[run] option 'blocksize'", "did you mean 'block_size'")),
    Case("config-unknown-input", config_replaced("[inputs]\nheat_flow = 'heat.tif'\n"), 2, ("unknown input layer 'heat_flow'", "did you mean 'heat_flow_mw_m2'")),
    Case("config-input-not-text", config_replaced("[inputs]\nheat_flow_mw_m2 = 65\n"), 2, ("[inputs] heat_flow_mw_m2", "file path in quotes")),
    Case("config-table-is-value", config_replaced("inputs = 'crust.tif'\n"), 2, ("'inputs' must be a table",)),
    Case("config-toml-syntax", config_replaced("[inputs\ncrustal_thickness_km = crust.tif\n"), 2, ("not valid TOML", "quotes")),
    Case("config-missing", missing_config, 2, ("configuration file", "does not exist")),
    Case("run-block-size-text", run_table("block_size = '512'\n"), 2, ("[run] block_size", "whole number")),
    Case("run-block-size-odd", run_table("block_size = 100\n"), 2, ("[run] block_size", "multiple of 16")),
    Case("run-unknown-reference", run_table("reference_grid = 'slab'\n"), 2, ("reference_grid", "unknown input layer 'slab'")),
    Case("run-reference-is-vector", run_table("reference_grid = 'plate_boundaries'\n"), 2, ("reference_grid", "must name a raster input")),
    Case("parameter-wrong-type", toml("[parameters]\nmantle_potential_temperature_c = 'hot'\n"), 2, ("mantle_potential_temperature_c", "must be a number", "degC")),
    Case("parameter-out-of-range", toml("[parameters]\nmantle_potential_temperature_c = 5000\n"), 2, ("mantle_potential_temperature_c", "valid range", "default")),
    Case("parameter-unknown", toml("[parameters]\nmantle_potential_temp_c = 1400\n"), 2, ("unknown parameter", "mantle_potential_temp_c", "did you mean 'mantle_potential_temperature_c'", "geomelt describe")),
    Case("parameter-list-of-text", toml("[parameters]\nisotherms_c = ['hot']\n"), 2, ("isotherms_c", "must be a number")),
    Case("parameter-code-injection", code_as_parameter, 2, ("mantle_potential_temperature_c", "must be a number", "__import__")),
    Case("missing-required-input", missing_required_input, 3, ("heat_flow_mw_m2", "was not given", "--input heat_flow_mw_m2=PATH")),
    # output location
    Case("output-not-empty", output_not_empty, 4, ("already exists and is not empty", "--overwrite"), keeps=("notes.txt",)),
    Case("output-is-a-file", output_is_a_file, 4, ("exists and is not a folder",)),
    Case("output-would-replace-input", output_would_replace_input, 4, ("would overwrite the input layer 'heat_flow_mw_m2'", "choose another output folder")),
    Case("output-parent-is-a-file", output_parent_is_a_file, 4, ("cannot create output folder",)),
    Case("output-parent-read-only", output_parent_read_only, 4, ("cannot create output folder",)),
]  # fmt: skip
"""Each case: id, how to spoil the region, exit code, fragments of the message."""

IN_PROCESS_FAULTS = {
    "disk-full-in-window": disk_full_in_window,
    "disk-full-in-results-gpkg": disk_full_in_results_gpkg,
}
"""Faults injected into a run in this process (monkeypatch): exit 4, clean staging."""


@pytest.fixture
def region(tmp_path):
    return Region(tmp_path)


def invoke(region: Region, extra: tuple[str, ...]):
    args = ["run", str(region.config), "-o", str(region.out), *extra]
    return CliRunner().invoke(main, args)


def final_names(region: Region) -> list[str]:
    """Everything in the output folder, relative (the staging folder included)."""
    if not region.out.is_dir():
        return []
    return sorted(p.relative_to(region.out).as_posix() for p in region.out.rglob("*"))


def assert_error(result, code: int, says: tuple[str, ...]) -> str:
    assert isinstance(result.exception, SystemExit), result.exception
    assert result.exit_code == code, result.output
    assert "Traceback" not in result.output
    errors = [line for line in result.stderr.splitlines() if line.startswith("Error: ")]
    assert len(errors) == 1, result.stderr
    message = errors[0]
    assert 40 < len(message) < 700, f"not one readable paragraph: {message}"
    for fragment in says:
        assert fragment.lower() in message.lower(), f"{fragment!r} missing from: {message}"
    return message


def snapshot(folder: Path) -> dict[str, tuple[int, int]]:
    """Size and modification time (ns) of every file under ``folder``."""
    return {
        p.relative_to(folder).as_posix(): (p.stat().st_size, p.stat().st_mtime_ns)
        for p in folder.rglob("*")
        if p.is_file()
    }


@pytest.mark.parametrize("case", CASES, ids=[c.id for c in CASES])
def test_bad_input(case: Case, region: Region):
    extra = case.make(region)
    args = case.args if extra is None else extra
    inputs_before = snapshot(region.dir)
    result = invoke(region, args)
    assert snapshot(region.dir) == inputs_before, "the inputs were changed"
    if case.exit_code == 0:
        assert result.exit_code == 0, result.output
        assert result.exception is None
        assert "Traceback" not in result.output
        summary = result.stdout.split("warning(s):", 1)[-1] if case.says else ""
        for fragment in case.says:
            assert fragment.lower() in summary.lower(), f"{fragment!r} missing: {result.stdout}"
        assert not (region.out / STAGING_DIR).exists()
        if case.check is not None:
            case.check(region)
        return
    assert_error(result, case.exit_code, case.says)
    if region.out != region.dir:  # (refused inside the input folder: checked by the snapshot)
        assert final_names(region) == sorted(case.keeps), "files left under final names"
    if case.id == "parameter-code-injection":
        assert not (region.dir.parent / "executed").exists(), "a parameter value was executed"


@pytest.mark.parametrize("fault", list(IN_PROCESS_FAULTS))
def test_disk_full(fault, region: Region, monkeypatch):
    IN_PROCESS_FAULTS[fault](monkeypatch)
    result = invoke(region, THERMAL_ONLY)
    message = assert_error(result, 4, ("No space left on device", "Free space"))
    assert "staging" in message
    assert region.out.is_dir() and final_names(region) == [], "no output may stay behind"


def test_catalogue_is_large_enough():
    assert len(CASES) + len(IN_PROCESS_FAULTS) >= 30
    assert len({c.id for c in CASES}) == len(CASES)


# --- geomelt check: the same verdicts, nothing written ------------------------------------


def test_check_is_a_geomelt_command():
    assert "check" in main.commands


@pytest.mark.parametrize("case", CASES, ids=[c.id for c in CASES])
def test_check_agrees_with_run(case: Case, region: Region):
    extra = case.make(region)
    args = case.args if extra is None else extra
    inputs_before = snapshot(region.dir)
    out_before = final_names(region)
    result = CliRunner().invoke(check_cmd, [str(region.config), "-o", str(region.out), *args])
    assert snapshot(region.dir) == inputs_before
    if region.out != region.dir:
        assert final_names(region) == out_before, "check must write nothing"
    if case.exit_code:
        assert_error(result, case.exit_code, case.says)
        return
    assert result.exit_code == 0, result.output
    assert "nothing was written" in result.stdout
    for fragment in case.says:
        assert fragment.lower() in result.stdout.lower(), f"{fragment!r} missing: {result.stdout}"


def test_check_report_says_what_a_run_would_do(region: Region):
    region.raster(
        "heat.tif", region.heat, crs="EPSG:4326", transform=from_origin(-33.5, 12.5, 0.1, 0.1)
    )
    result = CliRunner().invoke(check_cmd, [str(region.config), "-o", str(region.out)])
    assert result.exit_code == 0, result.output
    text = result.stdout
    assert "reference grid: 'crustal_thickness_km' (crust.tif): 64 x 48 cells" in text
    assert "heat.tif: reprojected onto the reference grid (bilinear)" in text
    assert "crust.tif: on the reference grid" in text and "values 7 to 45 km" in text
    assert "plate_boundaries" in text and "ridge 1, subduction 1" in text
    assert "thermal_state" in text and "tectonic_setting" in text
    assert "moho_temperature_c.tif" in text and "results.gpkg" in text
    assert "would be created" in text and "CAUTION" in text
    assert not region.out.exists()
