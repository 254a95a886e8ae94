"""Read and check the vector inputs: plate boundaries and hotspots."""

from __future__ import annotations

import logging
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio

from geomelt.errors import InputLayerError, LayerMismatchError, MissingLayerError

__all__ = [
    "BOUNDARY_TYPES",
    "UPPER_PLATE_SIDES",
    "read_hotspots",
    "read_plate_boundaries",
]

log = logging.getLogger(__name__)

BOUNDARY_TYPES = ("ridge", "rift", "subduction", "collision", "transform")
"""Allowed values of the ``boundary_type`` attribute (design.md section 2)."""

UPPER_PLATE_SIDES = ("left", "right")
"""Allowed values of ``upper_plate_side``, relative to the line's digitised direction."""


def _read_vector(path: Path, layer_name: str, sublayer: str | None) -> gpd.GeoDataFrame:
    path = Path(path)
    if not path.exists():
        msg = (
            f"input layer '{layer_name}': file {str(path)!r} does not exist. Check the path in "
            f"the configuration or pass --input {layer_name}=PATH."
        )
        raise MissingLayerError(msg)
    try:
        layers = pyogrio.list_layers(path)
    except Exception as exc:  # noqa: BLE001 - any GDAL failure means unreadable
        msg = (
            f"input layer '{layer_name}': {str(path)!r} cannot be read as a vector data set "
            f"({exc}). Give a GeoPackage or another vector format GDAL reads."
        )
        raise InputLayerError(msg) from None
    names = [str(n) for n in layers[:, 0]] if len(layers) else []
    if sublayer is None:
        sublayer = layer_name if layer_name in names else (names[0] if names else None)
    if sublayer is None or sublayer not in names:
        msg = (
            f"input layer '{layer_name}': {path.name} has no layer {sublayer!r} "
            f"(it has: {', '.join(names) or 'none'})."
        )
        raise InputLayerError(msg)
    try:
        gdf = gpd.read_file(path, layer=sublayer, engine="pyogrio")
    except Exception as exc:  # noqa: BLE001
        msg = f"input layer '{layer_name}': reading {path.name} failed ({exc})."
        raise InputLayerError(msg) from None
    if len(gdf) and gdf.crs is None:
        msg = (
            f"input layer '{layer_name}': {path.name} has no coordinate reference system. "
            "Assign one in your GIS (or with ogr2ogr -a_srs EPSG:XXXX) and run again."
        )
        raise LayerMismatchError(msg)
    return gdf


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
        An empty layer is allowed.

    Raises
    ------
    InputLayerError
        Missing ``boundary_type`` column, unknown types, bad sides, negative
        rates or non-line geometries; the message lists the allowed values.
    """
    gdf = _read_vector(Path(path), "plate_boundaries", layer)
    if "boundary_type" not in gdf.columns:
        msg = (
            f"input layer 'plate_boundaries': {Path(path).name} has no 'boundary_type' column "
            f"(columns: {', '.join(c for c in gdf.columns if c != 'geometry') or 'none'}). "
            f"Add it with one of: {', '.join(BOUNDARY_TYPES)}."
        )
        raise InputLayerError(msg)
    gdf = gdf.copy()
    types = gdf["boundary_type"].astype("string").str.strip().str.lower()
    bad = sorted({str(t) for t in types[~types.isin(BOUNDARY_TYPES)].fillna("<empty>")})
    if bad:
        msg = (
            f"input layer 'plate_boundaries': unknown boundary_type value(s) {', '.join(bad)}. "
            f"Allowed: {', '.join(BOUNDARY_TYPES)}."
        )
        raise InputLayerError(msg)
    gdf["boundary_type"] = types.astype(object)
    if "rate_mm_yr" in gdf.columns:
        rate = pd.to_numeric(gdf["rate_mm_yr"], errors="coerce").astype(float)
        if (rate < 0).any():
            msg = (
                "input layer 'plate_boundaries': rate_mm_yr must be a non-negative full "
                "spreading or convergence rate in mm/yr."
            )
            raise InputLayerError(msg)
        gdf["rate_mm_yr"] = rate
    else:
        gdf["rate_mm_yr"] = np.nan
    if "upper_plate_side" in gdf.columns:
        side = gdf["upper_plate_side"].astype("string").str.strip().str.lower()
        bad_side = side.notna() & ~side.isin(UPPER_PLATE_SIDES)
        if bad_side.any():
            msg = (
                "input layer 'plate_boundaries': upper_plate_side must be 'left' or 'right' "
                "(side of the overriding plate relative to the line's digitised direction)."
            )
            raise InputLayerError(msg)
        gdf["upper_plate_side"] = side.astype(object).where(side.notna(), None)
    else:
        gdf["upper_plate_side"] = None
    geom_types = set(gdf.geom_type.dropna().unique())
    if geom_types - {"LineString", "MultiLineString"}:
        msg = (
            f"input layer 'plate_boundaries': geometries must be lines, found "
            f"{', '.join(sorted(geom_types))}. Convert polygons to their boundary lines first."
        )
        raise InputLayerError(msg)
    if len(gdf) == 0:
        log.warning("plate_boundaries: the layer is empty; settings are derived without it")
    return gdf


def read_hotspots(path, layer: str | None = None) -> gpd.GeoDataFrame:
    """Read hotspot points (optional ``excess_temperature_k``, ``radius_km``)."""
    gdf = _read_vector(Path(path), "hotspots", layer)
    geom_types = set(gdf.geom_type.dropna().unique())
    if geom_types - {"Point", "MultiPoint"}:
        msg = (
            f"input layer 'hotspots': geometries must be points, found "
            f"{', '.join(sorted(geom_types))}."
        )
        raise InputLayerError(msg)
    gdf = gdf.copy()
    for col in ("excess_temperature_k", "radius_km"):
        if col in gdf.columns:
            gdf[col] = pd.to_numeric(gdf[col], errors="coerce").astype(float)
        else:
            gdf[col] = np.nan
    return gdf
