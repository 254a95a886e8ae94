"""Read and check the vector inputs: plate boundaries and hotspots.

Problems that make a layer unusable raise an error naming the layer, what is
wrong and the fix. Problems a run can live with (an empty layer, features
without geometry, hotspots without attributes) are reported as
:class:`~geomelt.errors.GeomeltWarning` and the run goes on.
"""

from __future__ import annotations

import difflib
import logging
import warnings
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio

from geomelt import constants as C
from geomelt.errors import GeomeltWarning, InputLayerError, LayerMismatchError, MissingLayerError
from geomelt.io.rasters import similar_file_hint

__all__ = [
    "BOUNDARY_TYPES",
    "HOTSPOT_ATTRIBUTES",
    "UPPER_PLATE_SIDES",
    "read_hotspots",
    "read_plate_boundaries",
]

log = logging.getLogger(__name__)

BOUNDARY_TYPES = ("ridge", "rift", "subduction", "collision", "transform")
"""Allowed values of the ``boundary_type`` attribute (design.md section 2)."""

UPPER_PLATE_SIDES = ("left", "right")
"""Allowed values of ``upper_plate_side``, relative to the line's digitised direction."""

HOTSPOT_ATTRIBUTES = {
    "excess_temperature_k": C.HOTSPOT_EXCESS_TEMPERATURE_K,
    "radius_km": C.HOTSPOT_RADIUS_KM,
}
"""Optional hotspot attributes and the parameter that is used where one is missing (whose
valid range the attribute must respect)."""

MAX_RATE_MM_YR = 300.0
"""Rates above this are reported: the fastest plates move about 150-200 mm/yr, so larger
values are usually another unit (cm/yr are smaller, m/Myr equal to mm/yr)."""


def _warn(text: str) -> None:
    warnings.warn(text, GeomeltWarning, stacklevel=3)


def _read_vector(path: Path, layer_name: str, sublayer: str | None) -> gpd.GeoDataFrame:
    path = Path(path)
    if not path.exists():
        msg = (
            f"input layer '{layer_name}': file {str(path)!r} does not exist"
            f"{similar_file_hint(path)}. Check the path in the configuration (relative paths "
            f"are relative to the TOML file) or pass --input {layer_name}=PATH."
        )
        raise MissingLayerError(msg)
    try:
        layers = pyogrio.list_layers(path)
    except Exception as exc:  # noqa: BLE001 - any GDAL failure means unreadable
        if _opens_as_raster(path):
            msg = (
                f"input layer '{layer_name}': {str(path)!r} is a raster, not a vector data set. "
                f"Give the {layer_name} as a GeoPackage (or another vector format GDAL reads); "
                "grids belong to the raster inputs."
            )
        else:
            msg = (
                f"input layer '{layer_name}': {str(path)!r} cannot be read as a vector data set "
                f"({str(exc).strip()}). Give a GeoPackage or another vector format GDAL reads; "
                "a truncated or damaged file must be exported again."
            )
        raise InputLayerError(msg) from None
    names = [str(n) for n in layers[:, 0]] if len(layers) else []
    if sublayer is None:
        if layer_name in names:
            sublayer = layer_name
        elif names:
            sublayer = names[0]
            if len(names) > 1:
                _warn(
                    f"input layer '{layer_name}': {path.name} has no layer named {layer_name!r}; "
                    f"using its first layer {sublayer!r} (it has: {', '.join(names)})"
                )
    if sublayer is None or sublayer not in names:
        msg = (
            f"input layer '{layer_name}': {path.name} has no layer {sublayer!r} "
            f"(it has: {', '.join(names) or 'none'}). Give a file with one layer named "
            f"{layer_name!r}."
        )
        raise InputLayerError(msg)
    try:
        gdf = gpd.read_file(path, layer=sublayer, engine="pyogrio")
    except Exception as exc:  # noqa: BLE001
        msg = (
            f"input layer '{layer_name}': reading layer {sublayer!r} of {path.name} failed "
            f"({str(exc).strip()}). Check that it opens in your GIS, or export it again."
        )
        raise InputLayerError(msg) from None
    if not isinstance(gdf, gpd.GeoDataFrame) or gdf.geometry.name not in gdf.columns:
        msg = (
            f"input layer '{layer_name}': layer {sublayer!r} of {path.name} is a table without "
            "geometry. Give a layer of "
            + ("lines." if layer_name == "plate_boundaries" else "points.")
        )
        raise InputLayerError(msg)
    missing = gdf.geometry.isna() | gdf.geometry.is_empty
    if missing.any():
        _warn(
            f"input layer '{layer_name}': {int(missing.sum())} of {len(gdf)} feature(s) have no "
            "geometry (NULL or empty) and were left out"
        )
        gdf = gdf[~missing].copy()
    if len(gdf) and gdf.crs is None:
        msg = (
            f"input layer '{layer_name}': {path.name} has no coordinate reference system. "
            "Assign one in your GIS (or with ogr2ogr -a_srs EPSG:XXXX) and run again."
        )
        raise LayerMismatchError(msg)
    return gdf


def _opens_as_raster(path: Path) -> bool:
    import rasterio

    try:
        with rasterio.open(path):
            return True
    except Exception:  # noqa: BLE001 - not a raster either
        return False


def _columns(gdf: gpd.GeoDataFrame) -> list[str]:
    return [str(c) for c in gdf.columns if c != gdf.geometry.name]


def _match_column(gdf: gpd.GeoDataFrame, name: str, layer: str) -> gpd.GeoDataFrame:
    """Accept ``name`` in any letter case; refuse a near miss (a truncated Shapefile name)."""
    cols = _columns(gdf)
    if name in cols:
        return gdf
    same = [c for c in cols if c.lower() == name]
    if same:
        return gdf.rename(columns={same[0]: name})
    near = [c for c in cols if len(c) >= 5 and name.startswith(c.lower())]
    near += difflib.get_close_matches(name, [c.lower() for c in cols], n=1, cutoff=0.8)
    if near:
        msg = (
            f"input layer '{layer}': column {near[0]!r} looks like {name!r} cut short or "
            f"misspelt. Rename it to {name} in your GIS (Shapefiles cut field names to 10 "
            "characters; a GeoPackage keeps them)."
        )
        raise InputLayerError(msg)
    return gdf


def _numbers(gdf: gpd.GeoDataFrame, column: str, layer: str, unit: str) -> pd.Series:
    """A column as float (NaN where empty); text that is not a number is refused."""
    raw = gdf[column]
    values = pd.to_numeric(raw, errors="coerce").astype(float)
    text = raw.notna() & values.isna()
    if text.any():
        examples = ", ".join(repr(str(v)) for v in pd.unique(raw[text])[:3])
        msg = (
            f"input layer '{layer}': {column} must be a number in {unit}, but "
            f"{int(text.sum())} feature(s) hold text ({examples}). Fix the values (leave them "
            "empty where unknown) and make the column a numeric field."
        )
        raise InputLayerError(msg)
    return values


def _geometry_kinds(gdf: gpd.GeoDataFrame) -> dict[str, int]:
    return {str(k): int(v) for k, v in gdf.geom_type.value_counts().items()}


def read_plate_boundaries(path, layer: str | None = None) -> gpd.GeoDataFrame:
    """Read plate-boundary lines and check their schema.

    Parameters
    ----------
    path : path-like
        Vector file (GeoPackage or any format GDAL reads).
    layer : str, optional
        Layer inside the file (default: ``plate_boundaries`` if present, else the first).

    Returns
    -------
    geopandas.GeoDataFrame
        Columns ``boundary_type`` (lower-case), ``rate_mm_yr`` (float, NaN where
        missing), ``upper_plate_side`` (``left``/``right``/None) and geometry.
        An empty layer is allowed (with a warning); features without geometry
        are left out (with a warning).

    Raises
    ------
    InputLayerError
        Missing ``boundary_type`` column, unknown types, bad sides, text or
        negative rates, or geometries that are not lines; the message lists
        the allowed values.
    LayerMismatchError
        Features but no coordinate reference system.
    """
    name = "plate_boundaries"
    gdf = _read_vector(Path(path), name, layer)
    for column in ("boundary_type", "rate_mm_yr", "upper_plate_side"):
        gdf = _match_column(gdf, column, name)
    if "boundary_type" not in gdf.columns:
        msg = (
            f"input layer '{name}': {Path(path).name} has no 'boundary_type' column "
            f"(columns: {', '.join(_columns(gdf)) or 'none'}). Add a text column "
            f"boundary_type holding one of: {', '.join(BOUNDARY_TYPES)}."
        )
        raise InputLayerError(msg)
    gdf = gdf.copy()
    kinds = _geometry_kinds(gdf)
    if set(kinds) - {"LineString", "MultiLineString"}:
        found = ", ".join(f"{n} {k}" for k, n in sorted(kinds.items()))
        hint = (
            " Points belong to the hotspots input."
            if {"Point", "MultiPoint"} & set(kinds)
            else " Convert polygons to their outlines (QGIS: Polygons to lines; "
            "ogr2ogr -nlt MULTILINESTRING)."
        )
        msg = f"input layer '{name}': geometries must be lines, found {found}.{hint}"
        raise InputLayerError(msg)
    types = gdf["boundary_type"].astype("string").str.strip().str.lower()
    unknown = types[~types.isin(BOUNDARY_TYPES)].fillna("<empty>")
    if len(unknown):
        bad = ", ".join(f"{t!r} ({n})" for t, n in unknown.value_counts().sort_index().items())
        msg = (
            f"input layer '{name}': boundary_type must be one of {', '.join(BOUNDARY_TYPES)}; "
            f"found {bad} in {len(unknown)} feature(s). Fix those values in the attribute table."
        )
        raise InputLayerError(msg)
    gdf["boundary_type"] = types.astype(object)
    if "rate_mm_yr" in gdf.columns:
        rate = _numbers(gdf, "rate_mm_yr", name, "mm/yr")
        if (rate < 0).any():
            msg = (
                f"input layer '{name}': rate_mm_yr must be a non-negative full spreading or "
                f"convergence rate in mm/yr; {int((rate < 0).sum())} feature(s) are negative "
                f"(down to {rate.min():g}). Give the rate's size; the boundary type says "
                "whether plates diverge or converge."
            )
            raise InputLayerError(msg)
        if (rate > MAX_RATE_MM_YR).any():
            _warn(
                f"input layer '{name}': {int((rate > MAX_RATE_MM_YR).sum())} feature(s) have "
                f"rate_mm_yr above {MAX_RATE_MM_YR:g} (up to {rate.max():g}); plates move at "
                "most about 200 mm/yr, check the unit"
            )
        gdf["rate_mm_yr"] = rate
    else:
        gdf["rate_mm_yr"] = np.nan
    if "upper_plate_side" in gdf.columns:
        side = gdf["upper_plate_side"].astype("string").str.strip().str.lower()
        side = side.mask(side == "")
        bad_side = side.notna() & ~side.isin(UPPER_PLATE_SIDES)
        if bad_side.any():
            found = ", ".join(repr(str(v)) for v in pd.unique(side[bad_side])[:3])
            msg = (
                f"input layer '{name}': upper_plate_side must be 'left' or 'right' (side of "
                "the overriding plate relative to the line's digitised direction) or empty; "
                f"found {found} in {int(bad_side.sum())} feature(s)."
            )
            raise InputLayerError(msg)
        gdf["upper_plate_side"] = side.astype(object).where(side.notna(), None)
    else:
        gdf["upper_plate_side"] = None
    if len(gdf) == 0:
        _warn(
            f"input layer '{name}': the layer has no lines; boundary distances are nodata and "
            "settings are derived from the rasters alone"
        )
    return gdf


def read_hotspots(path, layer: str | None = None) -> gpd.GeoDataFrame:
    """Read hotspot points and check their optional attributes.

    Returns
    -------
    geopandas.GeoDataFrame
        Points with ``excess_temperature_k`` (K) and ``radius_km`` (km) as
        float, NaN where a hotspot has no value: the run then uses the
        parameters ``hotspot_excess_temperature_k`` and ``hotspot_radius_km``
        (reported as a warning).

    Raises
    ------
    InputLayerError
        Geometries that are not points; attributes that are text or outside
        the valid range of the matching parameter (a negative value, an
        absolute temperature, a radius in metres).
    LayerMismatchError
        Features but no coordinate reference system.
    """
    name = "hotspots"
    gdf = _read_vector(Path(path), name, layer)
    kinds = _geometry_kinds(gdf)
    if set(kinds) - {"Point", "MultiPoint"}:
        found = ", ".join(f"{n} {k}" for k, n in sorted(kinds.items()))
        msg = (
            f"input layer '{name}': geometries must be points (hotspot centres), found {found}. "
            "Lines belong to the plate_boundaries input; for areas give their centroids."
        )
        raise InputLayerError(msg)
    gdf = gdf.copy()
    for column, const in HOTSPOT_ATTRIBUTES.items():
        gdf = _match_column(gdf, column, name)
        if column not in gdf.columns:
            gdf[column] = np.nan
            if len(gdf):
                _warn(
                    f"input layer '{name}': no {column} column; the parameter {const.name} "
                    f"({const.value:g} {const.unit} unless set) is used for every hotspot"
                )
            continue
        values = _numbers(gdf, column, name, const.unit)
        lo, hi = const.minimum, const.maximum
        bad = (values < lo) | (values > hi)
        if bad.any():
            hint = {
                "excess_temperature_k": " It is the excess over the ambient mantle "
                "(typically 50-300 K), not an absolute temperature.",
                "radius_km": " It is in km, not metres.",
            }[column]
            found = ", ".join(f"{v:g}" for v in pd.unique(values[bad])[:3])
            msg = (
                f"input layer '{name}': {column} must lie in [{lo:g}, {hi:g}] {const.unit}; "
                f"{int(bad.sum())} hotspot(s) hold {found}.{hint} Fix the values, or leave "
                f"them empty to use the parameter {const.name}."
            )
            raise InputLayerError(msg)
        if values.isna().any():
            _warn(
                f"input layer '{name}': {int(values.isna().sum())} hotspot(s) have no {column}; "
                f"the parameter {const.name} ({const.value:g} {const.unit} unless set) is used "
                "for them"
            )
        gdf[column] = values
    return gdf
