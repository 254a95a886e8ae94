"""Read input rasters and put them on one reference grid, window by window.

The reference grid is the grid of one input (the crustal-thickness raster
unless the configuration names another). Every other raster is read through a
:class:`rasterio.vrt.WarpedVRT` onto that grid, so reprojection and
resampling happen lazily, only for the window being processed.
"""

from __future__ import annotations

import logging
import math
import threading
import warnings
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import rasterio
from affine import Affine
from pyproj import Transformer
from rasterio.crs import CRS
from rasterio.enums import Resampling
from rasterio.errors import RasterioIOError
from rasterio.vrt import WarpedVRT
from rasterio.windows import Window

from geomelt.errors import GeomeltWarning, InputLayerError, LayerMismatchError, MissingLayerError

__all__ = [
    "AlignedRaster",
    "RasterGrid",
    "crs_label",
    "open_raster_checked",
    "read_grid",
    "read_reduced",
    "sample_inputs_at",
]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class RasterGrid:
    """A georeferenced grid: CRS, affine transform and size in cells."""

    crs: CRS
    transform: Affine
    width: int
    height: int

    @classmethod
    def from_dataset(cls, ds) -> RasterGrid:
        """Grid of an open rasterio dataset."""
        return cls(crs=ds.crs, transform=ds.transform, width=ds.width, height=ds.height)

    @property
    def shape(self) -> tuple[int, int]:
        """(rows, columns)."""
        return (self.height, self.width)

    @property
    def bounds(self) -> tuple[float, float, float, float]:
        """(left, bottom, right, top) in grid CRS units."""
        t = self.transform
        xs = (t.c, t.c + t.a * self.width)
        ys = (t.f, t.f + t.e * self.height)
        return (min(xs), min(ys), max(xs), max(ys))

    @property
    def cell_size(self) -> tuple[float, float]:
        """Cell size (x, y) in CRS units (positive)."""
        return (abs(self.transform.a), abs(self.transform.e))

    @property
    def is_geographic(self) -> bool:
        """True when the CRS is geographic (degrees)."""
        return bool(self.crs is not None and self.crs.is_geographic)

    def describe(self) -> str:
        """Short human-readable description used in logs and metadata."""
        dx, dy = self.cell_size
        unit = "deg" if self.is_geographic else (self.crs.linear_units if self.crs else "?")
        crs = crs_label(self.crs)
        return f"{self.width} x {self.height} cells of {dx:g} x {dy:g} {unit}, {crs}"

    def windows(self, block_size: int) -> Iterator[Window]:
        """Row-major windows of at most ``block_size`` cells a side covering the grid."""
        for row in range(0, self.height, block_size):
            for col in range(0, self.width, block_size):
                yield Window(
                    col, row, min(block_size, self.width - col), min(block_size, self.height - row)
                )

    def cell_centres(self, window: Window | None = None) -> tuple[np.ndarray, np.ndarray]:
        """Cell-centre coordinates (x, y) in the grid CRS for a window (2-D arrays)."""
        if window is None:
            window = Window(0, 0, self.width, self.height)
        cols = np.arange(window.col_off, window.col_off + window.width) + 0.5
        rows = np.arange(window.row_off, window.row_off + window.height) + 0.5
        t = self.transform
        x = t.c + t.a * cols[None, :] + t.b * rows[:, None]
        y = t.f + t.d * cols[None, :] + t.e * rows[:, None]
        return x, y

    def lonlat(self, window: Window | None = None) -> tuple[np.ndarray, np.ndarray]:
        """Cell-centre longitude and latitude (degrees, WGS84) for a window."""
        x, y = self.cell_centres(window)
        if self.crs.to_epsg() == 4326:
            return x, y
        lon, lat = _to_wgs84(self.crs.to_wkt()).transform(x, y)
        return np.asarray(lon), np.asarray(lat)

    def same_as(self, other: RasterGrid, rtol: float = 1e-9) -> bool:
        """True when both grids have the same CRS, size and (nearly) the same transform."""
        if (self.width, self.height) != (other.width, other.height):
            return False
        if self.crs != other.crs:
            return False
        scale = max(abs(self.transform.a), abs(self.transform.e))
        return all(
            math.isclose(a, b, rel_tol=rtol, abs_tol=rtol * scale)
            for a, b in zip(self.transform[:6], other.transform[:6], strict=True)
        )


def crs_label(crs: CRS | None) -> str:
    """Short name of a CRS: ``EPSG:4326`` when it has a code, else its WKT name."""
    if crs is None:
        return "no CRS"
    epsg = crs.to_epsg()
    if epsg is not None:
        return f"EPSG:{epsg}"
    from pyproj import CRS as ProjCRS

    return ProjCRS.from_wkt(crs.to_wkt()).name


_TRANSFORMERS = threading.local()


def _to_wgs84(crs_wkt: str):
    """A per-thread cached pyproj transformer from ``crs_wkt`` to lon/lat (pyproj
    transformers must not be shared between threads)."""
    cache = getattr(_TRANSFORMERS, "cache", None)
    if cache is None:
        cache = _TRANSFORMERS.cache = {}
    if crs_wkt not in cache:
        cache[crs_wkt] = Transformer.from_crs(crs_wkt, "EPSG:4326", always_xy=True)
    return cache[crs_wkt]


def open_raster_checked(path: Path, layer: str):
    """Open a raster read-only, turning failures into errors that name the layer.

    Raises
    ------
    MissingLayerError
        The file does not exist.
    InputLayerError
        The file exists but GDAL cannot read it as a raster, or it has no CRS.
    """
    path = Path(path)
    if not path.exists():
        msg = (
            f"input layer '{layer}': file {str(path)!r} does not exist. Check the path in the "
            "configuration (relative paths are relative to the TOML file) or pass "
            f"--input {layer}=PATH."
        )
        raise MissingLayerError(msg)
    try:
        ds = rasterio.open(path, "r")
    except RasterioIOError as exc:
        msg = (
            f"input layer '{layer}': {str(path)!r} cannot be read as a raster ({exc}). "
            "Give a GeoTIFF or another raster format GDAL reads."
        )
        raise InputLayerError(msg) from None
    if ds.crs is None:
        ds.close()
        msg = (
            f"input layer '{layer}': {str(path)!r} has no coordinate reference system. "
            "Assign one, e.g. gdal_edit.py -a_srs EPSG:XXXX FILE, then run again."
        )
        raise LayerMismatchError(msg)
    if ds.count > 1:
        warnings.warn(
            f"input layer '{layer}': {path.name} has {ds.count} bands; using band 1.",
            GeomeltWarning,
            stacklevel=2,
        )
    return ds


def read_grid(path: Path, layer: str) -> RasterGrid:
    """Grid of the raster at ``path`` (used to define the reference grid)."""
    with open_raster_checked(path, layer) as ds:
        return RasterGrid.from_dataset(ds)


def _overlap_fraction(grid: RasterGrid, ds) -> float:
    """Fraction of the reference grid's area covered by the dataset's footprint."""
    from rasterio.warp import transform_bounds

    try:
        left, bottom, right, top = transform_bounds(ds.crs, grid.crs, *ds.bounds, densify_pts=21)
    except Exception:  # noqa: BLE001 - projection failure means we cannot judge; assume overlap
        return 1.0
    gl, gb, gr, gt = grid.bounds
    if not all(map(math.isfinite, (left, bottom, right, top))):
        return 1.0
    w = max(0.0, min(gr, right) - max(gl, left))
    h = max(0.0, min(gt, top) - max(gb, bottom))
    area = (gr - gl) * (gt - gb)
    return (w * h) / area if area > 0 else 0.0


class AlignedRaster:
    """One input raster read on the reference grid, window by window.

    Parameters
    ----------
    path : path-like
        Raster file (opened read-only).
    layer : str
        Input layer name, used in messages (``heat_flow_mw_m2``).
    grid : RasterGrid
        Reference grid to read onto.
    resampling : rasterio.enums.Resampling
        Resampling used when the raster is not already on the grid
        (bilinear for continuous fields, nearest for classes).

    Notes
    -----
    Values equal to the file's nodata value, and NaN, come back as NaN. Cells
    outside the raster's footprint come back as NaN. The instance holds an
    open dataset: use it as a context manager, and do not share one instance
    between threads.
    """

    def __init__(self, path, layer: str, grid: RasterGrid, resampling=Resampling.bilinear):
        self.path = Path(path)
        self.layer = layer
        self.grid = grid
        self._src = open_raster_checked(self.path, layer)
        src_grid = RasterGrid.from_dataset(self._src)
        self.reprojected = not src_grid.same_as(grid)
        self.source_grid = src_grid
        nodata = self._src.nodata
        self._nodata = nodata
        if self.reprojected:
            frac = _overlap_fraction(grid, self._src)
            if frac <= 0.0:
                self._src.close()
                msg = (
                    f"input layer '{layer}': {self.path.name} does not overlap the reference "
                    f"grid ({grid.describe()}). Check that it covers the same region and that "
                    "its CRS is right."
                )
                raise LayerMismatchError(msg)
            self.overlap_fraction = frac
            src_nodata = nodata if nodata is not None else np.nan
            if nodata is None and np.dtype(self._src.dtypes[0]).kind != "f":
                src_nodata = None
            self._reader = WarpedVRT(
                self._src,
                crs=grid.crs,
                transform=grid.transform,
                width=grid.width,
                height=grid.height,
                resampling=resampling,
                src_nodata=src_nodata,
                nodata=np.nan,
                dtype="float32",
            )
            log.info(
                "%s: reprojecting %s (%s) onto the reference grid with %s resampling",
                layer,
                self.path.name,
                src_grid.describe(),
                resampling.name,
            )
        else:
            self.overlap_fraction = 1.0
            self._reader = self._src
            log.info("%s: %s is already on the reference grid", layer, self.path.name)

    def read(self, window: Window | None = None) -> np.ndarray:
        """Read one window (or the whole grid) as float64 with NaN for nodata."""
        arr = self._reader.read(1, window=window, masked=False).astype(np.float64, copy=False)
        if not self.reprojected and self._nodata is not None and not np.isnan(self._nodata):
            arr = np.where(arr == self._nodata, np.nan, arr)
        return arr

    def close(self) -> None:
        """Close the underlying datasets."""
        if self._reader is not self._src:
            self._reader.close()
        self._src.close()

    def __enter__(self) -> AlignedRaster:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def sample_inputs_at(grid: RasterGrid, raster_inputs: dict, x: float, y: float, crs=None):
    """Values of every raster input in the reference-grid cell containing a point.

    The inputs are read through :class:`AlignedRaster` exactly as a map run
    reads them, so a probed cell agrees with the maps.

    Parameters
    ----------
    grid : RasterGrid
        Reference grid.
    raster_inputs : dict
        Input layer name -> path.
    x, y : float
        Location, in ``crs`` (default: the grid's CRS).
    crs : str, optional
        CRS of the location, e.g. ``"EPSG:4326"`` (longitude, latitude order).

    Returns
    -------
    values : dict
        Input name -> value (NaN where nodata).
    location : dict
        Point in the grid CRS, its longitude/latitude, cell row and column.

    Raises
    ------
    LayerMismatchError
        The point lies outside the reference grid.
    """
    from rasterio.transform import rowcol

    gx, gy = x, y
    if crs is not None:
        tr = Transformer.from_crs(crs, grid.crs.to_wkt(), always_xy=True)
        gx, gy = tr.transform(x, y)
    row, col = rowcol(grid.transform, gx, gy)
    if not (0 <= row < grid.height and 0 <= col < grid.width):
        msg = (
            f"location ({x:g}, {y:g}{', ' + str(crs) if crs else ''}) lies outside the reference "
            f"grid ({grid.describe()}); give a point inside it (use --crs or --lonlat if it is "
            "in another CRS)."
        )
        raise LayerMismatchError(msg)
    window = Window(col, row, 1, 1)
    values = {}
    for name, path in raster_inputs.items():
        with AlignedRaster(path, name, grid) as reader:
            values[name] = float(reader.read(window)[0, 0])
    lon, lat = grid.lonlat(window)
    location = {
        "x": float(gx),
        "y": float(gy),
        "crs": crs_label(grid.crs),
        "lon": float(lon[0, 0]),
        "lat": float(lat[0, 0]),
        "row": int(row),
        "col": int(col),
    }
    return values, location


def read_reduced(path, max_cells: int = 1500, categorical: bool = False):
    """Read band 1 reduced so neither side exceeds ``max_cells`` (overviews are used).

    Returns
    -------
    array : ndarray
        Reduced band (nodata kept as stored; float NaN stays NaN).
    transform : affine.Affine
        Transform of the reduced array.
    factor : int
        Reduction factor (1: full resolution).
    """
    with rasterio.open(path) as ds:
        factor = max(1, math.ceil(max(ds.width, ds.height) / max_cells))
        shape = (max(1, ds.height // factor), max(1, ds.width // factor))
        method = Resampling.mode if categorical else Resampling.average
        arr = ds.read(1, out_shape=shape, resampling=method)
        transform = ds.transform * Affine.scale(ds.width / shape[1], ds.height / shape[0])
    return arr, transform, factor
