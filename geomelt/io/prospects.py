"""Ranked prospect polygons: connected areas where a screening score reaches a threshold.

A *screen* (:class:`ProspectScreen`) is one score raster of a finished run
(``heat_source_score``, ``<system key>_score``) with the factor rasters it
combines and their weights. :func:`prospect_polygons` turns every screen into
polygons and ranks them together:

1. the score, its factors and the class rasters (``setting.tif``,
   ``melting_mechanism.tif``, ``magma_type.tif``) are read reduced to at most
   ``max_cells`` cells a side (:func:`geomelt.io.rasters.read_reduced`: block
   average for scores and factors, block mode for classes), so memory does
   not grow with the grid;
2. cells with ``score >= threshold`` (NaN never qualifies) are grouped into
   4-connected regions (:func:`scipy.ndimage.label`);
3. each region is traced into one polygon along its cell edges
   (:func:`rasterio.features.shapes` in pixel coordinates, the grid affine
   applied afterwards), so the outline is exactly the cells that passed;
4. regions smaller than ``min_area_km2`` are dropped; areas are equal-area
   (:func:`geomelt.io.polygons.polygon_areas_km2`, as for the settings layer);
5. each polygon gets the mean and maximum score, the dominant setting,
   melting mechanism and magma type, and the factors that drove its score;
6. all polygons of all screens are ranked by mean score, then maximum score,
   then area.

Drivers
    In a weighted-mean overlay (Bonham-Carter 1994, chapter 9) the score of a
    cell is :math:`S = \\sum_i \\hat w_i \\mu_i` with weights normalised to sum
    to 1, so over a polygon the mean score splits exactly into the
    contributions :math:`c_i = \\hat w_i \\bar\\mu_i` of the factors (mean
    membership :math:`\\bar\\mu_i` over the polygon's cells). The drivers are
    the factors with the largest contributions whose share
    :math:`c_i / \\sum_j c_j` is at least :data:`DRIVER_MIN_SHARE`, at most
    :data:`MAX_DRIVERS` and at least one. With the fuzzy gamma combination the
    split is not exact but still orders the factors by how much they lift the
    score.

These are **screening polygons**: outlines of where the modelled present-day
thermal and magmatic state resembles what a screen looks for, at the
resolution of the reduced read. They are not resource or reserve estimates,
say nothing about grade, tonnage, permeability or deliverability, and need
site investigation before any use (see :data:`geomelt.CAUTION`).

References
----------
Bonham-Carter, G. F. (1994). Geographic Information Systems for Geoscientists:
Modelling with GIS. Pergamon, Oxford; chapter 9.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import rasterio
import shapely
from affine import Affine
from pyproj import CRS, Transformer
from rasterio.features import shapes
from scipy import ndimage

from geomelt.classes import CLASS_NODATA, MAGMA_TYPE, MELTING_MECHANISM, SETTING, ClassScheme
from geomelt.io.geopackage import GPKG_DATASET_OPTIONS
from geomelt.io.polygons import is_equal_area, polygon_areas_km2, row_area_weights
from geomelt.io.rasters import read_reduced

__all__ = [
    "DRIVER_MIN_SHARE",
    "MAX_DRIVERS",
    "POLYGON_MAX_CELLS",
    "PROSPECTS_LAYER",
    "PROSPECT_COLUMNS",
    "ProspectScreen",
    "prospect_polygons",
    "standard_screens",
    "write_prospects_layer",
]

log = logging.getLogger(__name__)

POLYGON_MAX_CELLS = 1500
"""Prospects are traced on rasters reduced to at most this many cells a side.

The same value as :data:`geomelt.pipeline.products.POLYGON_MAX_CELLS` (the settings
layer), kept here because ``geomelt.io`` does not import ``geomelt.pipeline``."""

PROSPECTS_LAYER = "prospects"
"""Name of the GeoPackage layer written by :func:`write_prospects_layer`."""

DRIVER_MIN_SHARE = 0.15
"""A factor is listed as a driver when its share of the polygon's contributions is at least
this (the first driver is always listed)."""

MAX_DRIVERS = 3
"""At most this many drivers are listed per polygon."""

PROSPECT_COLUMNS: dict[str, str] = {
    "rank": "int32",
    "screen": "str",
    "screen_title": "str",
    "screen_rank": "int32",
    "area_km2": "float64",
    "mean_score": "float64",
    "max_score": "float64",
    "threshold": "float64",
    "dominant_setting": "str",
    "dominant_setting_code": "int32",
    "dominant_mechanism": "str",
    "dominant_mechanism_code": "int32",
    "dominant_magma_type": "str",
    "dominant_magma_type_code": "int32",
    "drivers": "str",
    "driver_1": "str",
    "driver_2": "str",
    "driver_3": "str",
    "centroid_lon": "float64",
    "centroid_lat": "float64",
}
"""Attribute columns of the prospects frame and layer, in order, with their dtypes (the
geometry column follows them)."""

_CLASS_RASTERS: tuple[tuple[str, str, ClassScheme], ...] = (
    ("setting", "setting", SETTING),
    ("mechanism", "melting_mechanism", MELTING_MECHANISM),
    ("magma_type", "magma_type", MAGMA_TYPE),
)
"""(column stem, raster stem, scheme) of the class rasters summarised per polygon."""

_NODATA_LABEL = "nodata"
_SCORE_DECIMALS = 9
_AREA_DECIMALS = 6
_LAYER_DESCRIPTION = (
    "Ranked prospect polygons: connected areas where a screening score reaches its "
    "threshold (screening estimate, not a resource estimate)"
)
_AUTHALIC_RADIUS_KM = 6371.0072
"""Radius of the sphere with the WGS84 ellipsoid's area, km; only used for a conservative
pre-filter of tiny regions on geographic grids (the reported areas are exact)."""


# --------------------------------------------------------------------------- screens


@dataclass(frozen=True)
class ProspectScreen:
    """One screen: a score raster, the factor rasters it combines and a threshold.

    Attributes
    ----------
    key : str
        Machine name, e.g. ``"geothermal_heat_source"``, ``"porphyry_cu_au_mo"``.
    title : str
        Human-readable name, e.g. ``"Geothermal heat source"``.
    score_layer : str
        File stem of the score raster in the run folder (``<stem>.tif``), values 0-1.
    factor_layers : tuple of (str, str, float)
        ``(label, raster stem, weight)`` per factor, e.g.
        ``("temperature at 3 km", "heat_source_temperature_factor", 0.25)``. Weights
        are non-negative, on any scale (they are normalised); a factor of weight 0 is
        never a driver.
    threshold : float
        Cells with ``score >= threshold`` (dimensionless, 0-1) form prospects.
    """

    key: str
    title: str
    score_layer: str
    factor_layers: tuple[tuple[str, str, float], ...]
    threshold: float

    def __post_init__(self) -> None:
        if not self.key:
            msg = "a prospect screen needs a non-empty key"
            raise ValueError(msg)
        if not math.isfinite(float(self.threshold)):
            msg = f"screen {self.key!r}: threshold must be finite, got {self.threshold!r}"
            raise ValueError(msg)
        layers = tuple(tuple(f) for f in self.factor_layers)
        for f in layers:
            if len(f) != 3:
                msg = f"screen {self.key!r}: factor {f!r} is not (label, raster stem, weight)"
                raise ValueError(msg)
            weight = float(f[2])
            if not math.isfinite(weight) or weight < 0:
                msg = f"screen {self.key!r}: factor {f[0]!r} has weight {f[2]!r}; need >= 0"
                raise ValueError(msg)
        object.__setattr__(self, "factor_layers", layers)
        object.__setattr__(self, "threshold", float(self.threshold))


_HEAT_SOURCE_LABELS = {
    "direct_use": "shallow direct-use isotherm",
    "binary": "shallow binary isotherm",
    "flash": "shallow flash isotherm",
    "melt_proximity": "melt proximity",
    "crustal_melt": "crustal melt",
}

_MINERAL_FACTOR_LABELS = {
    "setting": "setting affinity",
    "magma": "magma affinity",
    "crust": "continental crust",
    "melting": "active melting",
}


def standard_screens(
    geothermal_params=None,
    mineral_params=None,
    thermal_params=None,
    systems=None,
) -> tuple[ProspectScreen, ...]:
    """The geothermal heat-source screen and one screen per mineral system.

    Factor rasters and weights follow :mod:`geomelt.physics.screening`: the
    heat-source factors ``heat_source_<x>_factor`` with weights
    ``heat_source_weight_<x>``, and for each mineral system the factors
    ``<key>_<factor>_factor`` with the weight each ``Factor`` names.

    Parameters
    ----------
    geothermal_params : GeothermalScreeningParameters, optional
        Weights and ``heat_source_prospect_threshold`` (dimensionless) of the
        heat-source screen (default parameters).
    mineral_params : MineralScreeningParameters, optional
        Weights and ``mineral_prospect_threshold`` (dimensionless) of the
        mineral-system screens (default parameters).
    thermal_params : ThermalParameters, optional
        Supplies ``screening_temperature_depth_km`` (km) for the label of the
        temperature factor (default parameters).
    systems : sequence of MineralSystem, optional
        Mineral systems (default :data:`geomelt.physics.screening.MINERAL_SYSTEMS`).

    Returns
    -------
    tuple of ProspectScreen
    """
    from geomelt.parameters import (
        GeothermalScreeningParameters,
        MineralScreeningParameters,
        ThermalParameters,
    )
    from geomelt.physics.screening import HEAT_SOURCE_OUTPUTS, MINERAL_SYSTEMS

    gp = geothermal_params or GeothermalScreeningParameters()
    mp = mineral_params or MineralScreeningParameters()
    depth = (thermal_params or ThermalParameters()).screening_temperature_depth_km
    heat_factors = []
    for stem in HEAT_SOURCE_OUTPUTS:
        if not stem.endswith("_factor"):
            continue
        part = stem[len("heat_source_") : -len("_factor")]
        label = _HEAT_SOURCE_LABELS.get(part, part.replace("_", " "))
        if part == "temperature":
            label = f"temperature at {depth:g} km"
        heat_factors.append((label, stem, float(getattr(gp, f"heat_source_weight_{part}"))))
    screens = [
        ProspectScreen(
            "geothermal_heat_source",
            "Geothermal heat source",
            "heat_source_score",
            tuple(heat_factors),
            gp.heat_source_prospect_threshold,
        )
    ]
    for system in MINERAL_SYSTEMS if systems is None else systems:
        factors = tuple(
            (
                _MINERAL_FACTOR_LABELS.get(f.name, f.name.replace("_", " ")),
                f"{system.key}_{f.name}_factor",
                float(getattr(mp, f.weight)),
            )
            for f in system.factors
        )
        screens.append(
            ProspectScreen(
                system.key,
                system.title,
                f"{system.key}_score",
                factors,
                mp.mineral_prospect_threshold,
            )
        )
    return tuple(screens)


# --------------------------------------------------------------------------- reading


@dataclass(frozen=True)
class _Reduced:
    """A band read reduced, with its grid."""

    array: np.ndarray
    transform: Affine
    crs: object
    full_transform: Affine
    full_shape: tuple[int, int]

    def same_grid(self, other: _Reduced) -> bool:
        return (
            self.array.shape == other.array.shape
            and self.transform.almost_equals(other.transform, precision=1e-9 * _cell(self))
            and _same_crs(self.crs, other.crs)
        )


def _cell(r: _Reduced) -> float:
    return max(abs(r.transform.a), abs(r.transform.e), 1e-300)


def _same_crs(a, b) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return a == b or CRS.from_user_input(a.to_wkt()) == CRS.from_user_input(b.to_wkt())


def _read(path: Path, max_cells: int, categorical: bool) -> _Reduced:
    """Read band 1 reduced; nodata becomes NaN (continuous) or 255 (classes)."""
    with rasterio.open(path) as ds:
        crs, nodata = ds.crs, ds.nodata
        full_transform, full_shape = ds.transform, (ds.height, ds.width)
    arr, transform, _ = read_reduced(path, max_cells, categorical)
    if categorical:
        if arr.dtype.kind not in "ui":
            msg = f"{path.name}: class raster holds {arr.dtype}, not integer class codes"
            raise ValueError(msg)
        # Compared in the raster's own integer type: no int64 copy of a reduced grid.
        bad = (arr < 0) | (arr >= CLASS_NODATA)
        if nodata is not None and math.isfinite(nodata):
            bad |= arr == int(nodata)
        arr = np.where(bad, CLASS_NODATA, arr).astype(np.uint8)
    else:
        # float32 outputs stay float32 (each value is exact in float64 wherever a sum
        # needs it); integer or float64 rasters become float64.
        arr = arr.astype(np.float32 if arr.dtype == np.float32 else np.float64)
        if nodata is not None and not math.isnan(nodata):
            arr[arr == nodata] = np.nan
        arr[~np.isfinite(arr)] = np.nan
    return _Reduced(arr, Affine(*tuple(transform)[:6]), crs, full_transform, full_shape)


def _read_classes(
    folder: Path, grid: _Reduced, max_cells: int, cache: dict
) -> dict[str, np.ndarray]:
    """Class rasters on ``grid``: read once per folder; missing or off-grid -> all nodata."""
    out = {}
    for column, stem, _ in _CLASS_RASTERS:
        if stem not in cache:
            path = folder / f"{stem}.tif"
            if path.is_file():
                cache[stem] = _read(path, max_cells, categorical=True)
            else:
                log.warning("prospects: %s is missing; its classes are reported as nodata", path)
                cache[stem] = None
        reduced = cache[stem]
        if reduced is not None and reduced.same_grid(grid):
            out[column] = reduced.array
        else:
            if reduced is not None:
                log.warning(
                    "prospects: %s.tif is not on the score grid; its classes are nodata", stem
                )
            out[column] = np.full(grid.array.shape, CLASS_NODATA, dtype=np.uint8)
    return out


# --------------------------------------------------------------------------- geometry


def _cell_areas_km2(grid: _Reduced) -> np.ndarray | None:
    """Approximate area of the cells of each row (km2), or None when not cheaply known.

    Exact on an equal-area grid; on a geographic grid the spherical cell area on the
    authalic sphere (within about 0.7 % of the ellipsoidal area). Only used to drop
    regions far below the minimum area before tracing them.
    """
    if grid.crs is None:
        return None
    pc = CRS.from_user_input(grid.crs.to_wkt())
    rows = grid.array.shape[0]
    a, e, f = grid.transform.a, grid.transform.e, grid.transform.f
    if is_equal_area(pc):
        unit = float(pc.axis_info[0].unit_conversion_factor)
        return np.full(rows, abs(a * e) * unit**2 / 1e6)
    if pc.is_geographic:
        top = np.radians(np.clip(f + e * np.arange(rows), -90.0, 90.0))
        bottom = np.radians(np.clip(f + e * (np.arange(rows) + 1), -90.0, 90.0))
        band = np.abs(np.sin(top) - np.sin(bottom))
        return _AUTHALIC_RADIUS_KM**2 * math.radians(abs(a)) * band
    return None


def _trace(labels: np.ndarray, mask: np.ndarray, transform: Affine, n: int) -> np.ndarray:
    """One polygon per label 1..n (index i holds label i + 1), in the grid CRS.

    Traced in pixel coordinates, where vertices are exact integers, then mapped
    with the affine (as :func:`geomelt.io.polygons.class_polygons` does). Each
    label is one 4-connected region, which 4-connected tracing returns as one
    polygon (holes included).
    """
    geoms = np.full(n, None, dtype=object)
    for geom, value in shapes(labels, mask=mask, connectivity=4):
        i = int(value) - 1
        poly = shapely.geometry.shape(geom)
        geoms[i] = poly if geoms[i] is None else shapely.union(geoms[i], poly)
    a, b, c, d, e, f = transform.a, transform.b, transform.c, transform.d, transform.e, transform.f
    return shapely.transform(
        geoms, lambda x, y: (a * x + b * y + c, d * x + e * y + f), interleaved=False
    )


def _clip_to_extent(geoms: np.ndarray, grid: _Reduced) -> np.ndarray:
    """Clip polygons that stick out of the full-resolution grid's extent (rounding)."""
    h, w = grid.full_shape
    t = grid.full_transform  # north-up: corners from the coefficients
    x0, y0 = t.c, t.f
    x1, y1 = t.c + t.a * w + t.b * h, t.f + t.d * w + t.e * h
    xmin, xmax, ymin, ymax = min(x0, x1), max(x0, x1), min(y0, y1), max(y0, y1)
    bounds = shapely.bounds(geoms)
    out = (
        (bounds[:, 0] < xmin)
        | (bounds[:, 1] < ymin)
        | (bounds[:, 2] > xmax)
        | (bounds[:, 3] > ymax)
    )
    if out.any():
        box = shapely.box(xmin, ymin, xmax, ymax)
        geoms = geoms.copy()
        geoms[out] = shapely.intersection(geoms[out], box)
    return geoms


def _lonlat(points: np.ndarray, crs) -> tuple[np.ndarray, np.ndarray]:
    """WGS84 longitude and latitude (degrees) of points given in ``crs``."""
    if len(points) == 0:
        return np.zeros(0), np.zeros(0)
    x, y = shapely.get_x(points), shapely.get_y(points)
    if crs is None:
        return np.full(len(points), np.nan), np.full(len(points), np.nan)
    tr = Transformer.from_crs(CRS.from_user_input(crs.to_wkt()), "EPSG:4326", always_xy=True)
    lon, lat = tr.transform(x, y)
    return np.asarray(lon, dtype=np.float64), np.asarray(lat, dtype=np.float64)


# --------------------------------------------------------------------------- statistics


def _cell_weights(grid: _Reduced) -> np.ndarray | None:
    """Relative cell areas (cosine of latitude) on a geographic grid, else None."""
    cos_lat = row_area_weights(grid.crs, grid.transform, grid.array.shape[0])
    return None if cos_lat is None else np.broadcast_to(cos_lat[:, None], grid.array.shape)


def _zonal_mean(values, ids, ok, n, weights) -> np.ndarray:
    """Mean of ``values`` per id 1..n over cells ``ok`` (weighted), NaN where none."""
    idx = ids[ok]
    v = values[ok]
    w = None if weights is None else weights[ok]
    total_w = np.bincount(idx, weights=w, minlength=n + 1)[1:]
    total_v = np.bincount(idx, weights=v if w is None else v * w, minlength=n + 1)[1:]
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(total_w > 0, total_v / total_w, np.nan)


def _zonal_mode(codes, ids, n, weights) -> np.ndarray:
    """Most frequent class per id 1..n (area-weighted; ties to the lower code), 255 if none."""
    ok = (ids > 0) & (codes != CLASS_NODATA)
    key = ids[ok].astype(np.int64) * 256 + codes[ok].astype(np.int64)
    out = np.full(n, CLASS_NODATA, dtype=np.int32)
    if key.size == 0:
        return out
    uniq, inv = np.unique(key, return_inverse=True)
    totals = np.bincount(inv.ravel(), weights=None if weights is None else weights[ok])
    region, code = uniq // 256, uniq % 256
    order = np.lexsort((code, -totals, region))
    first = np.ones(order.size, dtype=bool)
    first[1:] = region[order][1:] != region[order][:-1]
    best = order[first]
    out[region[best] - 1] = code[best]
    return out


def _drivers(
    labels: list[str], weights: np.ndarray, means: np.ndarray
) -> tuple[list[str], list[list[str]]]:
    """Driver text and driver labels per polygon from factor mean memberships.

    ``means`` is (polygons, factors); factors of weight 0 are never drivers.
    """
    n = means.shape[0]
    use = np.flatnonzero(weights > 0)
    if use.size == 0:
        return [""] * n, [[] for _ in range(n)]
    w = weights[use] / weights[use].sum()
    m = means[:, use]
    contrib = w[None, :] * np.nan_to_num(m, nan=0.0)
    total = contrib.sum(axis=1)
    texts, names = [], []
    for i in range(n):
        order = np.argsort(-contrib[i], kind="stable")
        share = contrib[i] / total[i] if total[i] > 0 else np.zeros(use.size)
        picked = [j for j in order[:MAX_DRIVERS] if share[j] >= DRIVER_MIN_SHARE] or [order[0]]
        parts = []
        for j in picked:
            value = m[i, j]
            parts.append(f"{labels[use[j]]} {value:.2f}" if np.isfinite(value) else labels[use[j]])
        texts.append("; ".join(parts))
        names.append([labels[use[j]] for j in picked])
    return texts, names


# --------------------------------------------------------------------------- frames


def _empty_prospects(crs=None) -> gpd.GeoDataFrame:
    data = {name: pd.Series([], dtype=dtype) for name, dtype in PROSPECT_COLUMNS.items()}
    return gpd.GeoDataFrame(data, geometry=gpd.GeoSeries([], crs=crs), crs=crs)


def _screen_prospects(
    folder: Path,
    screen: ProspectScreen,
    min_area_km2: float,
    max_cells: int,
    class_cache: dict,
) -> tuple[pd.DataFrame, np.ndarray, object] | None:
    """Unranked prospects of one screen: (attributes, geometries, CRS), or None if skipped."""
    score_path = folder / f"{screen.score_layer}.tif"
    if not score_path.is_file():
        log.warning("prospects: %s is missing; screen %r skipped", score_path, screen.key)
        return None
    for _, stem, _ in screen.factor_layers:
        if not (folder / f"{stem}.tif").is_file():
            log.warning(
                "prospects: %s is missing; screen %r skipped", folder / f"{stem}.tif", screen.key
            )
            return None
    grid = _read(score_path, max_cells, categorical=False)
    score = grid.array
    mask = np.isfinite(score) & (score >= screen.threshold)
    labels, n = ndimage.label(mask)  # default structure: 4-connected
    weights = _cell_weights(grid)
    empty = (pd.DataFrame(), np.zeros(0, dtype=object), grid.crs)
    if n == 0:
        return empty

    # Drop regions far below the minimum area before tracing them (noisy scores can make
    # many one-cell regions); the exact polygon areas decide below.
    row_area = _cell_areas_km2(grid) if min_area_km2 > 0 else None
    if row_area is not None:
        rows = np.broadcast_to(row_area[:, None], score.shape)
        approx = np.bincount(labels[mask], weights=rows[mask], minlength=n + 1)[1:]
        keep = approx >= 0.5 * min_area_km2
        if not keep.all():
            lut = np.zeros(n + 1, dtype=np.int32)
            lut[1:][keep] = np.arange(1, int(keep.sum()) + 1, dtype=np.int32)
            labels = lut[labels]
            mask = labels > 0
            n = int(keep.sum())
            if n == 0:
                return empty

    geoms = _clip_to_extent(_trace(labels.astype(np.int32), mask, grid.transform, n), grid)
    areas = polygon_areas_km2(geoms, grid.crs)
    keep = (areas >= min_area_km2) & ~shapely.is_empty(geoms)
    if not keep.any():
        return empty
    if not keep.all():
        lut = np.zeros(n + 1, dtype=np.int32)
        lut[1:][keep] = np.arange(1, int(keep.sum()) + 1, dtype=np.int32)
        labels = lut[labels]
        mask = labels > 0
        geoms, areas = geoms[keep], areas[keep]
        n = int(keep.sum())

    mean_score = _zonal_mean(score, labels, mask, n, weights)
    # Per-region maximum without scipy.ndimage.maximum's sort of every labelled cell
    # (int64 orderings of the whole reduced grid, ~20 MiB at 1500^2 cells).
    max_score = np.full(n + 1, -np.inf)
    np.maximum.at(max_score, labels[mask], score[mask])
    max_score = max_score[1:]
    # Factors are read one at a time, after the polygons are known, to bound memory.
    means = np.empty((n, len(screen.factor_layers)))
    for j, (_, stem, _) in enumerate(screen.factor_layers):
        factor = _read(folder / f"{stem}.tif", max_cells, categorical=False)
        if not factor.same_grid(grid):
            log.warning(
                "prospects: %s.tif is not on the grid of %s; screen %r skipped",
                stem,
                score_path.name,
                screen.key,
            )
            return None
        arr = factor.array
        means[:, j] = _zonal_mean(arr, labels, mask & np.isfinite(arr), n, weights)
        del factor, arr
    factor_weights = np.array([w for _, _, w in screen.factor_layers], dtype=np.float64)
    texts, names = _drivers([lab for lab, _, _ in screen.factor_layers], factor_weights, means)

    attrs = {
        "screen": [screen.key] * n,
        "screen_title": [screen.title] * n,
        "area_km2": areas.astype(np.float64),
        "mean_score": mean_score,
        "max_score": max_score,
        "threshold": np.full(n, screen.threshold),
    }
    classes = _read_classes(folder, grid, max_cells, class_cache)
    for column, _, scheme in _CLASS_RASTERS:
        codes = _zonal_mode(classes[column], labels, n, weights)
        known = scheme.labels()
        attrs[f"dominant_{column}"] = [
            _NODATA_LABEL if c == CLASS_NODATA else known.get(int(c), f"code {int(c)}")
            for c in codes
        ]
        attrs[f"dominant_{column}_code"] = codes
    attrs["drivers"] = texts
    for k in range(MAX_DRIVERS):
        attrs[f"driver_{k + 1}"] = [d[k] if len(d) > k else "" for d in names]
    lon, lat = _lonlat(shapely.point_on_surface(geoms), grid.crs)
    attrs["centroid_lon"], attrs["centroid_lat"] = lon, lat
    # Labels are numbered in row-major order of each region's first cell: a stable
    # position for breaking ties.
    attrs["_position"] = np.arange(n)
    return pd.DataFrame(attrs), geoms, grid.crs


def prospect_polygons(
    folder: Path,
    screens: Sequence[ProspectScreen],
    min_area_km2: float,
    max_cells: int = POLYGON_MAX_CELLS,
) -> gpd.GeoDataFrame:
    """Ranked prospect polygons of every screen from the rasters of a finished run.

    Parameters
    ----------
    folder : Path
        Folder holding ``<score_layer>.tif``, the factor rasters and, optionally,
        ``setting.tif``, ``melting_mechanism.tif`` and ``magma_type.tif``, all on
        one grid.
    screens : sequence of ProspectScreen
        Screens to vectorise (unique keys). A screen whose score or factor raster is
        missing, or not on one grid, is skipped with a warning; a missing class
        raster makes that class ``"nodata"`` (code 255).
    min_area_km2 : float
        Polygons smaller than this (km2, equal-area) are dropped.
    max_cells : int
        Rasters are read reduced so neither side exceeds this many cells.

    Returns
    -------
    GeoDataFrame
        One row per polygon, sorted by ``rank``, with the columns of
        :data:`PROSPECT_COLUMNS` and the geometry (single-part polygons in the
        raster CRS; outlines follow the reduced cells that reach the threshold).
        ``rank`` (1 = best of all screens) orders by ``mean_score``, then
        ``max_score``, then ``area_km2`` (all descending), then screen key and
        the region's position (first cell in row-major order); ``screen_rank`` is
        the same order within a screen. Scores are dimensionless (0-1), areas km2,
        ``centroid_lon``/``centroid_lat`` WGS84 degrees of a point inside the
        polygon. ``drivers`` is empty for a screen without a factor of positive
        weight. Empty (with every column and its dtype) when nothing passes.

    Notes
    -----
    Means (score, factor memberships) and dominant classes are over the polygon's
    reduced cells, weighted by cell area (cosine of latitude) on a geographic grid,
    ignoring NaN and class nodata. See the module notes for the drivers.
    """
    folder = Path(folder)
    min_area_km2 = float(min_area_km2)
    if not math.isfinite(min_area_km2) or min_area_km2 < 0:
        msg = f"min_area_km2 must be finite and >= 0, got {min_area_km2!r}"
        raise ValueError(msg)
    if int(max_cells) < 1:
        msg = f"max_cells must be >= 1, got {max_cells!r}"
        raise ValueError(msg)
    keys = [s.key for s in screens]
    if len(set(keys)) != len(keys):
        msg = f"screen keys must be unique, got {keys}"
        raise ValueError(msg)

    class_cache: dict = {}
    frames, geoms, crs = [], [], None
    for screen in screens:
        result = _screen_prospects(folder, screen, min_area_km2, int(max_cells), class_cache)
        if result is None:
            continue
        attrs, g, screen_crs = result
        if crs is None:
            crs = screen_crs
        if not len(attrs):
            continue
        if not _same_crs(crs, screen_crs):
            g = gpd.GeoSeries(g, crs=screen_crs).to_crs(crs).to_numpy()
        frames.append(attrs)
        geoms.append(g)
    if not frames:
        return _empty_prospects(crs)

    attrs = pd.concat(frames, ignore_index=True)
    geometry = np.concatenate(geoms)
    # Scores are rounded to 1e-9 and areas to 1e-6 km2 for the order, so that sums
    # rounded differently (a mean of 0.9 computed as 0.8999999999) still tie.
    key = list(
        zip(
            -np.round(attrs["mean_score"].to_numpy(), _SCORE_DECIMALS),
            -np.round(attrs["max_score"].to_numpy(), _SCORE_DECIMALS),
            -np.round(attrs["area_km2"].to_numpy(), _AREA_DECIMALS),
            attrs["screen"],
            attrs["_position"].to_numpy(),
            strict=True,
        )
    )
    order = np.array(sorted(range(len(key)), key=key.__getitem__), dtype=np.int64)
    attrs = attrs.iloc[order].reset_index(drop=True)
    geometry = geometry[order]
    attrs["rank"] = np.arange(1, len(attrs) + 1, dtype=np.int32)
    attrs["screen_rank"] = (attrs.groupby("screen", sort=False).cumcount() + 1).astype("int32")
    attrs = attrs.drop(columns="_position")
    frame = gpd.GeoDataFrame(
        {name: attrs[name].astype(dtype) for name, dtype in PROSPECT_COLUMNS.items()},
        geometry=gpd.GeoSeries(geometry, crs=crs),
        crs=crs,
    )
    return frame


# --------------------------------------------------------------------------- writing


def write_prospects_layer(gpkg_path: Path, frame: gpd.GeoDataFrame) -> int:
    """Write ``frame`` as the ``prospects`` layer of a GeoPackage.

    Parameters
    ----------
    gpkg_path : Path
        GeoPackage to write into (created if absent; other layers are kept, an
        earlier ``prospects`` layer is replaced).
    frame : GeoDataFrame
        Output of :func:`prospect_polygons` (at least the columns of
        :data:`PROSPECT_COLUMNS`). When empty, an empty layer with the full schema
        is written.

    Returns
    -------
    int
        Number of polygons written.
    """
    missing = [c for c in PROSPECT_COLUMNS if c not in frame.columns]
    if missing:
        msg = f"the prospects frame lacks the columns {missing}"
        raise ValueError(msg)
    if len(frame) == 0:
        out = _empty_prospects(frame.crs)
    else:
        out = gpd.GeoDataFrame(
            {name: frame[name].astype(dtype) for name, dtype in PROSPECT_COLUMNS.items()},
            geometry=frame.geometry,
            crs=frame.crs,
        )
    types = set(shapely.get_type_id(out.geometry.to_numpy()).tolist())
    multi = bool(types - {3})
    pyogrio.write_dataframe(
        out,
        Path(gpkg_path),
        layer=PROSPECTS_LAYER,
        driver="GPKG",
        geometry_type="MultiPolygon" if multi else "Polygon",
        promote_to_multi=multi,
        dataset_options=GPKG_DATASET_OPTIONS,
        layer_options={
            "DESCRIPTION": _LAYER_DESCRIPTION,
            "IDENTIFIER": PROSPECTS_LAYER,
            "SPATIAL_INDEX": "YES",
        },
    )
    return len(out)
