"""Vectorise class rasters into clean polygon layers and summarise other rasters per polygon.

:func:`class_polygons` turns a uint8 class raster into one polygon per
connected region of a class:

1. optional block-mode decimation (``decimate``) for large grids;
2. :func:`rasterio.features.sieve` merges regions smaller than the minimum
   mapping unit into their largest neighbour (nodata is left untouched);
3. :func:`rasterio.features.shapes` traces the regions (4-connected);
4. the traced edges are noded so that neighbouring polygons share every
   vertex (a valid polygonal coverage), then simplified together with
   :func:`shapely.coverage_simplify`, which, unlike per-polygon
   simplification, leaves no gaps or overlaps between neighbours;
5. ``area_km2`` is computed in an equal-area CRS: the grid's own CRS when it
   is equal-area, else a Lambert azimuthal equal-area projection centred on
   the data, on the grid's own geodetic datum.

:func:`zonal_summary` adds, per polygon, the mean of continuous rasters and
the dominant (modal) class of class rasters.

The whole (possibly decimated) class array is held in memory.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import geopandas as gpd
import numpy as np
import shapely
from affine import Affine
from pyproj import CRS, Transformer
from pyproj.crs import ProjectedCRS
from pyproj.crs.coordinate_operation import LambertAzimuthalEqualAreaConversion
from rasterio.features import rasterize, shapes, sieve

from geomelt.classes import CLASS_NODATA, ClassScheme

__all__ = [
    "CODE_COLUMN",
    "KEY_COLUMN",
    "LABEL_COLUMN",
    "AREA_COLUMN",
    "block_mode",
    "class_polygons",
    "equal_area_crs_for",
    "is_equal_area",
    "polygon_areas_km2",
    "row_area_weights",
    "zonal_summary",
]

CODE_COLUMN = "class_code"
KEY_COLUMN = "class_key"
LABEL_COLUMN = "class_label"
AREA_COLUMN = "area_km2"

_EQUAL_AREA_METHODS = {
    "mollweide",
    "sinusoidal",
    "equal earth",
    "eckert iv",
    "eckert vi",
    "goode homolosine",
    "interrupted goode homolosine",
}

_SHAPES_DTYPES = {"int16", "int32", "uint8", "uint16"}


# --------------------------------------------------------------------------- CRS helpers


def _pyproj_crs(crs) -> CRS:
    if crs is None:
        msg = "a CRS is required to compute areas"
        raise ValueError(msg)
    if hasattr(crs, "to_wkt"):
        return CRS.from_wkt(crs.to_wkt())
    return CRS.from_user_input(crs)


def is_equal_area(crs) -> bool:
    """True when ``crs`` is a projected CRS whose projection preserves area."""
    pc = _pyproj_crs(crs)
    if pc.is_bound:
        pc = pc.source_crs
    if not pc.is_projected or pc.coordinate_operation is None:
        return False
    method = pc.coordinate_operation.method_name.lower()
    return "equal area" in method or method in _EQUAL_AREA_METHODS


def equal_area_crs_for(crs, lon: float, lat: float) -> CRS:
    """Lambert azimuthal equal-area CRS centred on (lon, lat), on ``crs``'s geodetic datum."""
    pc = _pyproj_crs(crs)
    if pc.is_bound:
        pc = pc.source_crs
    geodetic = pc.geodetic_crs or CRS.from_epsg(4326)
    return ProjectedCRS(
        conversion=LambertAzimuthalEqualAreaConversion(
            latitude_natural_origin=float(lat), longitude_natural_origin=float(lon)
        ),
        geodetic_crs=geodetic,
        name=f"Lambert azimuthal equal-area centred on {lat:.4f}, {lon:.4f}",
    )


def _metres_per_unit(pc: CRS) -> float:
    return float(pc.axis_info[0].unit_conversion_factor)


def polygon_areas_km2(geoms, crs, equal_area_crs=None) -> np.ndarray:
    """Areas in km² of polygons given in ``crs``.

    In an equal-area ``crs`` the planar area is used directly. Otherwise the
    polygons are densified (edges of at most 0.05 degree or 5 km, so straight
    edges of the source CRS, such as parallels of a geographic grid, keep their
    shape), reprojected to ``equal_area_crs`` or to a Lambert azimuthal
    equal-area projection centred on the polygons, and measured there.
    """
    geoms = np.asarray(geoms, dtype=object)
    if geoms.size == 0:
        return np.zeros(0)
    pc = _pyproj_crs(crs)
    if equal_area_crs is None and is_equal_area(pc):
        return shapely.area(geoms) * _metres_per_unit(pc) ** 2 / 1e6
    if pc.is_geographic:
        step = 0.05
    else:
        step = 5000.0 / _metres_per_unit(pc)
    dense = shapely.segmentize(geoms, step)
    if equal_area_crs is None:
        xmin, ymin, xmax, ymax = shapely.total_bounds(geoms)
        cx, cy = (xmin + xmax) / 2.0, (ymin + ymax) / 2.0
        if pc.is_geographic:
            lon, lat = cx, cy
        else:
            to_geo = Transformer.from_crs(pc, pc.geodetic_crs, always_xy=True)
            lon, lat = to_geo.transform(cx, cy)
        target = equal_area_crs_for(pc, lon, lat)
    else:
        target = _pyproj_crs(equal_area_crs)
        if not is_equal_area(target):
            msg = f"equal_area_crs {target.name!r} is not an equal-area projection"
            raise ValueError(msg)
    tr = Transformer.from_crs(pc, target, always_xy=True)
    projected = shapely.transform(dense, lambda x, y: tr.transform(x, y), interleaved=False)
    return shapely.area(projected) * _metres_per_unit(target) ** 2 / 1e6


# --------------------------------------------------------------------------- decimation


def block_mode(array: np.ndarray, factor: int, nodata: int = CLASS_NODATA) -> np.ndarray:
    """Reduce a class array by ``factor`` in both directions with the block mode.

    Each output cell covers a ``factor`` x ``factor`` block (the last row and
    column of blocks may be partial). It takes the most frequent class among
    the block's data cells (ties go to the lower code) unless fewer than half
    of the block's cells have data, in which case it is nodata. The output has
    ``ceil(rows / factor)`` x ``ceil(cols / factor)`` cells.
    """
    arr = np.asarray(array)
    factor = int(factor)
    if factor <= 1:
        return arr.copy()
    h, w = arr.shape
    nh, nw = -(-h // factor), -(-w // factor)
    padded = np.full((nh * factor, nw * factor), nodata, dtype=arr.dtype)
    padded[:h, :w] = arr
    blocks = padded.reshape(nh, factor, nw, factor)
    # Number of real (not padding) cells per block.
    rows_in = np.minimum(factor, h - np.arange(nh) * factor)
    cols_in = np.minimum(factor, w - np.arange(nw) * factor)
    n_real = rows_in[:, None] * cols_in[None, :]
    codes = np.unique(arr)
    codes = codes[codes != nodata]
    out = np.full((nh, nw), nodata, dtype=arr.dtype)
    if codes.size == 0:
        return out
    counts = np.empty((codes.size, nh, nw), dtype=np.int32)
    for i, c in enumerate(codes):
        counts[i] = np.count_nonzero(blocks == c, axis=(1, 3))
    n_valid = counts.sum(axis=0)
    best = codes[np.argmax(counts, axis=0)]
    keep = 2 * n_valid >= n_real
    out[keep] = best[keep]
    return out


# --------------------------------------------------------------------------- polygons


def _empty_frame(crs) -> gpd.GeoDataFrame:
    return gpd.GeoDataFrame(
        {
            CODE_COLUMN: np.zeros(0, dtype="int32"),
            KEY_COLUMN: np.zeros(0, dtype=object),
            LABEL_COLUMN: np.zeros(0, dtype=object),
            AREA_COLUMN: np.zeros(0, dtype="float64"),
        },
        geometry=gpd.GeoSeries([], crs=crs),
        crs=crs,
    )


def class_polygons(
    class_array: np.ndarray,
    transform,
    crs,
    scheme: ClassScheme,
    nodata: int | None = None,
    sieve_cells: int = 0,
    simplify_tolerance: float = 0.0,
    equal_area_crs=None,
    *,
    decimate: int = 1,
) -> gpd.GeoDataFrame:
    """Vectorise a class raster into single-part polygons, one per connected region.

    Parameters
    ----------
    class_array : 2-D integer array
        Class codes of ``scheme``; ``nodata`` cells are left out.
    transform : affine.Affine
        Grid transform (no rotation).
    crs : CRS-like
        Grid CRS; the polygons are returned in it.
    scheme : ClassScheme
        Supplies keys and labels.
    nodata : int, optional
        Nodata code (default ``scheme.nodata``).
    sieve_cells : int
        Minimum region size in cells of the *input* grid; smaller regions are
        merged into their largest 4-connected neighbour (0 or 1: no sieving).
    simplify_tolerance : float
        Coverage simplification tolerance in CRS units (0: none). Half to one
        cell size removes the pixel staircase.
    equal_area_crs : CRS-like, optional
        CRS for areas; by default the grid CRS if equal-area, else a Lambert
        azimuthal equal-area projection centred on the polygons.
    decimate : int
        Block-reduce the grid by this factor with :func:`block_mode` before
        vectorising (for grids too large to trace at full resolution). The
        sieve threshold is divided by ``decimate**2``; polygons are clipped to
        the input grid's extent.

    Returns
    -------
    GeoDataFrame
        Columns ``class_code`` (int32), ``class_key``, ``class_label`` (str),
        ``area_km2`` (float64) and ``geometry`` (Polygon), sorted by code and
        decreasing area.
    """
    arr = np.asarray(class_array)
    if arr.ndim != 2:
        msg = f"class_array must be 2-D, got shape {arr.shape}"
        raise ValueError(msg)
    if arr.dtype.kind not in "ui":
        msg = f"class_array must hold integer class codes, got {arr.dtype}"
        raise ValueError(msg)
    nodata = scheme.nodata if nodata is None else int(nodata)
    transform = Affine(*tuple(transform)[:6])
    if transform.b != 0 or transform.d != 0:
        msg = "rotated grids are not supported"
        raise ValueError(msg)
    orig_shape, orig_transform = arr.shape, transform
    decimate = max(1, int(decimate))
    sieve_size = int(sieve_cells)
    if decimate > 1:
        arr = block_mode(arr, decimate, nodata)
        transform = transform * Affine.scale(decimate)
        sieve_size = math.ceil(sieve_size / decimate**2) if sieve_size > 1 else 0
    valid = arr != nodata
    if arr.dtype.name not in _SHAPES_DTYPES:
        info = np.iinfo(np.int32)
        if arr.size and (arr.min() < info.min or arr.max() > info.max):
            msg = f"class codes do not fit in int32 ({arr.dtype})"
            raise ValueError(msg)
        arr = arr.astype(np.int32)
    if not valid.any():
        return _empty_frame(crs)
    if 1 < sieve_size < arr.size:  # rasterio refuses a sieve as large as the image
        arr = sieve(arr, size=sieve_size, mask=valid, connectivity=4)

    # Trace in pixel coordinates: vertices are exact integers there. shapes() puts a
    # vertex only where a polygon's own boundary turns, so a straight edge of one
    # polygon may pass a vertex of its neighbours; segmentising at one cell puts a
    # vertex at every cell corner (exactly, in integers) so neighbours share all
    # vertices, as coverage simplification requires. The affine is applied afterwards,
    # identically to the shared vertices.
    geoms, codes = [], []
    for geom, value in shapes(arr, mask=valid, connectivity=4):
        geoms.append(shapely.geometry.shape(geom))
        codes.append(int(value))
    geoms = np.asarray(geoms, dtype=object)
    codes = np.asarray(codes, dtype=np.int64)
    # With 4-connected tracing each polygon is already one maximal connected region of
    # its class: the per-class dissolve followed by explode into single parts returns
    # these same polygons, so neither is run here.
    geoms = shapely.segmentize(geoms, 1.0)
    a, b, c, d, e, f = transform.a, transform.b, transform.c, transform.d, transform.e, transform.f
    geoms = shapely.transform(
        geoms, lambda x, y: (a * x + b * y + c, d * x + e * y + f), interleaved=False
    )

    if decimate > 1 and (orig_shape[0] % decimate or orig_shape[1] % decimate):
        geoms, codes = _clip_to_grid(geoms, codes, orig_transform, orig_shape)

    if simplify_tolerance and simplify_tolerance > 0:
        geoms = shapely.coverage_simplify(geoms, float(simplify_tolerance))
    else:
        # Drop the cell-corner vertices again; a zero tolerance keeps shared nodes.
        geoms = shapely.coverage_simplify(geoms, 0.0)
    keep = ~shapely.is_empty(geoms)
    geoms, codes = geoms[keep], codes[keep]

    areas = polygon_areas_km2(geoms, crs, equal_area_crs)
    by_code = scheme.by_code()
    keys = [by_code[k].key if k in by_code else f"code_{k}" for k in codes]
    labels = [by_code[k].label if k in by_code else f"code {k}" for k in codes]
    frame = gpd.GeoDataFrame(
        {
            CODE_COLUMN: codes.astype("int32"),
            KEY_COLUMN: keys,
            LABEL_COLUMN: labels,
            AREA_COLUMN: areas.astype("float64"),
        },
        geometry=gpd.GeoSeries(geoms, crs=crs),
        crs=crs,
    )
    order = np.lexsort((-frame[AREA_COLUMN].to_numpy(), frame[CODE_COLUMN].to_numpy()))
    return frame.iloc[order].reset_index(drop=True)


def _clip_to_grid(geoms, codes, transform: Affine, shape: tuple[int, int]):
    """Clip polygons of a padded decimated grid to the original grid's extent."""
    h, w = shape
    x0, y0 = transform * (0, 0)
    x1, y1 = transform * (w, h)
    box = shapely.box(min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1))
    clipped = shapely.intersection(geoms, box)
    parts, index = shapely.get_parts(clipped, return_index=True)
    is_poly = shapely.get_type_id(parts) == 3
    return parts[is_poly], codes[index[is_poly]]


# --------------------------------------------------------------------------- zonal summary


def row_area_weights(crs, transform, n_rows: int) -> np.ndarray | None:
    """Relative cell area of each row of a north-up grid: cos(latitude of the row's
    centres) on a geographic CRS (a cell spans dlon x dlat, whose area on the sphere is
    proportional to cos(latitude)); None on a projected or missing CRS."""
    if crs is None or not _pyproj_crs(crs).is_geographic:
        return None
    rows = np.arange(n_rows) + 0.5
    return np.cos(np.radians(transform.f + transform.e * rows))


ZONAL_BAND_CELLS = 1 << 18
"""Cells of a raster :func:`zonal_summary` reads at a time (whole rows)."""


def zonal_summary(
    polygons: gpd.GeoDataFrame,
    rasters: Mapping[str, np.ndarray],
    transform,
    *,
    nodata: Mapping[str, float] | None = None,
    class_nodata: int = CLASS_NODATA,
) -> gpd.GeoDataFrame:
    """Per-polygon statistics of rasters on one grid.

    Polygon ids are burnt onto the grid with :func:`rasterio.features.rasterize`
    (a cell belongs to the polygon containing its centre). Then, for each
    raster:

    * floating-point rasters (continuous quantities): column ``mean_<name>``,
      the mean over the polygon's cells, ignoring NaN and ``nodata[name]``;
    * integer rasters (class codes): ``dominant_<name>``, the most frequent
      code (ties to the lower code), and ``dominant_<name>_fraction``, the
      share of the polygon's data cells it covers; ``class_nodata`` cells are
      ignored.

    On a geographic grid cells are weighted by the cosine of their latitude
    (their relative area). A polygon with no data cells gets NaN, or
    ``class_nodata`` for the dominant class.

    Returns a copy of ``polygons`` with the new columns.
    """
    out = polygons.copy()
    if not rasters:
        return out
    shapes_seen = {np.shape(v) for v in rasters.values()}
    if len(shapes_seen) != 1:
        msg = f"all rasters must have the same shape, got {sorted(shapes_seen)}"
        raise ValueError(msg)
    (shape,) = shapes_seen
    if len(shape) != 2:
        msg = f"rasters must be 2-D, got shape {shape}"
        raise ValueError(msg)
    transform = Affine(*tuple(transform)[:6])
    n = len(out)
    if n:
        ids = rasterize(
            zip(out.geometry.to_numpy(), range(1, n + 1), strict=True),
            out_shape=shape,
            transform=transform,
            fill=0,
            dtype="int32",
        )
    else:
        ids = np.zeros(shape, dtype=np.int32)

    cos_lat = row_area_weights(out.crs, transform, shape[0])

    # Rows in bands: the per-cell temporaries of a whole reduced raster (1500^2 cells)
    # took ~60 MiB; the per-polygon sums are added up band by band.
    step = max(1, ZONAL_BAND_CELLS // max(1, shape[1]))
    bands = [slice(top, top + step) for top in range(0, shape[0], step)]

    def band_weights(band, ok):
        if cos_lat is None:
            return None
        return np.broadcast_to(cos_lat[band, None], ok.shape)[ok]

    nodata = dict(nodata or {})
    for name, raster in rasters.items():
        values = np.asarray(raster)
        if values.dtype.kind == "f":
            fill = nodata.get(name)
            total_w = np.zeros(n + 1)
            total_v = np.zeros(n + 1)
            for band in bands:
                part = values[band]
                ok = (ids[band] > 0) & np.isfinite(part)
                if fill is not None and np.isfinite(fill):
                    ok &= part != fill
                w = band_weights(band, ok)
                idx = ids[band][ok]
                v = part[ok].astype(np.float64)
                total_w += np.bincount(idx, weights=w, minlength=n + 1)
                total_v += np.bincount(idx, weights=v * w if w is not None else v, minlength=n + 1)
            with np.errstate(invalid="ignore", divide="ignore"):
                mean = np.where(total_w > 0, total_v / total_w, np.nan)
            out[f"mean_{name}"] = mean[1:]
        elif values.dtype.kind in "ui":
            present = np.unique(values[(ids > 0) & (values != class_nodata)])
            k = max(1, present.size)
            table = np.zeros((n + 1) * k)
            for band in bands:
                part = values[band]
                ok = (ids[band] > 0) & (part != class_nodata)
                key = np.searchsorted(present, part[ok]).astype(np.int64)
                key += ids[band][ok].astype(np.int64) * k
                table += np.bincount(key, weights=band_weights(band, ok), minlength=(n + 1) * k)
            table = table.reshape(n + 1, k)[1:]
            total = table.sum(axis=1)
            has = total > 0
            dominant = np.full(n, class_nodata, dtype=np.int32)
            fraction = np.full(n, np.nan)
            if present.size:
                best = np.argmax(table, axis=1)
                dominant[has] = present[best[has]]
                fraction[has] = table[has, best[has]] / total[has]
            out[f"dominant_{name}"] = dominant
            out[f"dominant_{name}_fraction"] = fraction
        else:
            msg = f"raster {name!r} has unsupported dtype {values.dtype}"
            raise ValueError(msg)
    return out
