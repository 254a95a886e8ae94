"""Read input rasters and put them on one reference grid, window by window.

The reference grid is the grid of one input (the crustal-thickness raster
unless the configuration names another). Every other raster is read through a
:class:`rasterio.vrt.WarpedVRT` onto that grid, so reprojection and
resampling happen lazily, only for the window being processed.

Before a run, :func:`check_raster_values` pre-scans each input on a reduced
read and refuses values no run can use (wrong units, wrong sign, undeclared
fill values, an empty layer) with a message that says how to convert them.
"""

from __future__ import annotations

import dataclasses
import functools
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
from geomelt.layers import INPUT_LAYERS

__all__ = [
    "AlignedRaster",
    "RasterGrid",
    "ValueScan",
    "check_raster_values",
    "crs_label",
    "open_raster_checked",
    "read_grid",
    "read_reduced",
    "sample_inputs_at",
    "scan_raster_values",
    "similar_file_hint",
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
        wkt = self.crs.to_wkt()
        if _is_wgs84_lonlat(wkt):
            return x, y
        lon, lat = _to_wgs84(wkt).transform(x, y)
        return np.asarray(lon), np.asarray(lat)

    def lonlat_at(self, rows, cols) -> tuple[np.ndarray, np.ndarray]:
        """Cell-centre longitude and latitude (degrees, WGS84) of cells given by row and
        column indices (arrays of the same shape)."""
        r = np.asarray(rows, dtype=np.float64) + 0.5
        c = np.asarray(cols, dtype=np.float64) + 0.5
        t = self.transform
        x = t.c + t.a * c + t.b * r
        y = t.f + t.d * c + t.e * r
        wkt = self.crs.to_wkt()
        if _is_wgs84_lonlat(wkt):
            return x, y
        lon, lat = _to_wgs84(wkt).transform(x, y)
        return np.asarray(lon), np.asarray(lat)

    def cell_area_km2(self, window: Window | None = None) -> np.ndarray:
        """True (ellipsoidal) area of each cell of a window, km² (2-D float64 array).

        Geographic grids: the exact area of an ellipsoidal quadrangle,
        ``a²/2 · Δλ · (q(φ2) - q(φ1))`` with Snyder's (1987, eq. 3-12) ``q``.
        Equal-area projections: the map area of a cell. Other projections: the
        map area divided by the projection's areal scale factor (pyproj
        ``Proj.get_factors``), evaluated on a lattice of every 16th cell and
        interpolated bilinearly (the scale varies slowly across a cell).
        """
        if window is None:
            window = Window(0, 0, self.width, self.height)
        shape = (int(window.height), int(window.width))
        kind, value = _area_model(self.crs.to_wkt())
        if kind == "equal_area":
            return np.full(shape, abs(self.transform.a * self.transform.e) * value / 1e6)
        if kind == "geographic":
            a_m, e = value
            t = self.transform
            rows = np.arange(window.row_off, window.row_off + window.height + 1, dtype=np.float64)
            lat = np.clip(t.f + t.e * rows, -90.0, 90.0)
            q = _authalic_q(np.radians(lat), e)
            zone_m2 = 0.5 * a_m**2 * np.abs(np.diff(q)) * math.radians(abs(t.a))
            return np.broadcast_to((zone_m2 / 1e6)[:, None], shape).copy()
        # conformal or other projections: nominal area over the areal scale factor
        step = 16
        r = np.unique(np.r_[np.arange(0, shape[0], step), shape[0] - 1])
        c = np.unique(np.r_[np.arange(0, shape[1], step), shape[1] - 1])
        t = self.transform
        cols = c[None, :] + window.col_off + 0.5
        rows = r[:, None] + window.row_off + 0.5
        x = t.c + t.a * cols + t.b * rows
        y = t.f + t.d * cols + t.e * rows
        lon, lat = _to_wgs84(self.crs.to_wkt()).transform(x, y)
        scale = np.asarray(value.get_factors(lon, lat).areal_scale, dtype=np.float64)
        nominal_km2 = abs(t.a * t.e) * _linear_factor(self.crs) ** 2 / 1e6
        lattice = nominal_km2 / scale.reshape(len(r), len(c))
        rr = np.interp(np.arange(shape[0]), r, np.arange(len(r)))
        cc = np.interp(np.arange(shape[1]), c, np.arange(len(c)))
        from scipy.ndimage import map_coordinates

        grid_r, grid_c = np.meshgrid(rr, cc, indexing="ij")
        return map_coordinates(lattice, [grid_r, grid_c], order=1, mode="nearest")

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


def crs_label(crs) -> str:
    """Short name of a CRS (rasterio or pyproj): ``EPSG:4326`` when it has a code, else its
    WKT name. Cached by WKT: identifying a CRS without a code searches the whole PROJ
    database (about 0.1 s), too much to repeat for every map or file."""
    if crs is None:
        return "no CRS"
    return _crs_label_of_wkt(crs.to_wkt())


@functools.lru_cache(maxsize=16)
def _crs_label_of_wkt(wkt: str) -> str:
    from pyproj import CRS as ProjCRS

    pcrs = ProjCRS.from_wkt(wkt)
    epsg = pcrs.to_epsg()
    if epsg is not None:
        return f"EPSG:{epsg}"
    if pcrs.name and pcrs.name.lower() != "unknown":
        return pcrs.name
    with warnings.catch_warnings():  # the PROJ string is only a label here
        warnings.simplefilter("ignore", UserWarning)
        proj4 = pcrs.to_proj4() or ""
    return " ".join(t for t in proj4.split() if not t.startswith(("+no_defs", "+type"))) or "?"


_TRANSFORMERS = threading.local()


def _linear_factor(crs) -> float:
    """Metres per unit of a projected CRS."""
    factor = crs.linear_units_factor[1] if crs is not None else 1.0
    return float(factor or 1.0)


def _authalic_q(phi_rad: np.ndarray, e: float) -> np.ndarray:
    """Snyder (1987) eq. 3-12: ``q`` of the authalic latitude (sphere when ``e == 0``)."""
    sin = np.sin(phi_rad)
    if e == 0.0:
        return 2.0 * sin
    es = e * sin
    return (1.0 - e * e) * (sin / (1.0 - es * es) - np.log((1.0 - es) / (1.0 + es)) / (2.0 * e))


_AREA_MODELS: dict[str, tuple[str, object]] = {}
_AREA_LOCK = threading.Lock()


def _area_model(crs_wkt: str) -> tuple[str, object]:
    """How cell areas are computed on a CRS: ``("equal_area", m² per unit²)``,
    ``("geographic", (a_m, e))`` or ``("scaled", pyproj.Proj)``."""
    with _AREA_LOCK:
        model = _AREA_MODELS.get(crs_wkt)
        if model is not None:
            return model
        from pyproj import CRS as PCRS
        from pyproj import Proj

        from geomelt.io.polygons import is_equal_area

        pc = PCRS.from_wkt(crs_wkt)
        if pc.is_geographic:
            ell = pc.ellipsoid
            inv_f = ell.inverse_flattening
            f = 1.0 / inv_f if inv_f and math.isfinite(inv_f) else 0.0
            model = ("geographic", (ell.semi_major_metre, math.sqrt(f * (2.0 - f))))
        elif is_equal_area(pc):
            unit = float(pc.axis_info[0].unit_conversion_factor) if pc.axis_info else 1.0
            model = ("equal_area", unit * unit)
        else:
            model = ("scaled", Proj(pc))
        _AREA_MODELS[crs_wkt] = model
        return model


@functools.lru_cache(maxsize=32)
def _is_wgs84_lonlat(crs_wkt: str) -> bool:
    """True when the CRS is EPSG:4326 (cached: identifying a CRS costs tens of ms, too much
    to repeat for every window)."""
    return CRS.from_wkt(crs_wkt).to_epsg() == 4326


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
        The file exists but GDAL cannot read it as a raster (a folder, a text
        file, a vector data set, a truncated file).
    LayerMismatchError
        The raster has no coordinate reference system.
    """
    path = Path(path)
    if not path.exists():
        msg = (
            f"input layer '{layer}': file {str(path)!r} does not exist{similar_file_hint(path)}. "
            "Check the path in the configuration (relative paths are relative to the TOML "
            f"file) or pass --input {layer}=PATH."
        )
        raise MissingLayerError(msg)
    if path.is_dir():
        msg = (
            f"input layer '{layer}': {str(path)!r} is a folder, not a raster file. Give the "
            f"path of the {layer} GeoTIFF inside it."
        )
        raise InputLayerError(msg)
    try:
        ds = rasterio.open(path, "r")
    except RasterioIOError as exc:
        vector_layers = _vector_layer_names(path)
        if vector_layers:
            msg = (
                f"input layer '{layer}': {str(path)!r} is a vector data set (layers: "
                f"{', '.join(vector_layers)}), not a raster. Give the {layer} grid as a GeoTIFF "
                "or another raster format GDAL reads; lines and points belong to the "
                "plate_boundaries and hotspots inputs."
            )
        else:
            msg = (
                f"input layer '{layer}': {str(path)!r} cannot be read as a raster "
                f"({_gdal_reason(exc)}). Give a GeoTIFF or another raster format GDAL reads; "
                "a truncated or damaged file must be copied or exported again."
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


def similar_file_hint(path: Path) -> str:
    """`` (did you mean 'x.tif'?)`` when the folder holds a file of a similar name, else ``""``."""
    import difflib

    path = Path(path)
    try:
        names = [p.name for p in path.parent.iterdir() if p.is_file()]
    except OSError:
        return ""
    close = [n for n in names if n.lower() == path.name.lower()]
    close = close or difflib.get_close_matches(path.name, names, n=1, cutoff=0.75)
    return f" (did you mean {close[0]!r}?)" if close else ""


def _gdal_reason(exc: BaseException) -> str:
    """GDAL's own words for a failure (rasterio keeps them in the chained exception)."""
    cause = exc.__cause__ or exc.__context__
    text = str(cause) if cause is not None and str(cause) else str(exc)
    return text.strip().rstrip(".")


def _vector_layer_names(path: Path) -> list[str]:
    """Layer names when ``path`` opens as a vector data set, else an empty list."""
    import pyogrio

    try:
        layers = pyogrio.list_layers(path)
    except Exception:  # noqa: BLE001 - not a vector data set either
        return []
    return [str(name) for name in layers[:, 0]] if len(layers) else []


def _read_failure(layer: str, path: Path, exc: BaseException) -> InputLayerError:
    """The error for a raster that opened but whose cells cannot be read."""
    msg = (
        f"input layer '{layer}': reading the cells of {str(path)!r} failed "
        f"({_gdal_reason(exc)}). The file is probably truncated or damaged: copy or export it "
        "again and check that it opens in your GIS."
    )
    return InputLayerError(msg)


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


def _no_overlap_error(layer: str, path: Path, grid: RasterGrid) -> LayerMismatchError:
    msg = (
        f"input layer '{layer}': {Path(path).name} does not overlap the reference grid "
        f"({grid.describe()}). Check that it covers the same region and that its CRS is right."
    )
    return LayerMismatchError(msg)


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
                raise _no_overlap_error(layer, self.path, grid)
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
        """Read one window (or the whole grid) as float64 with NaN for nodata.

        Raises
        ------
        InputLayerError
            GDAL cannot read the cells (a truncated or damaged file).
        """
        try:
            arr = self._reader.read(1, window=window, masked=False)
        except RasterioIOError as exc:
            raise _read_failure(self.layer, self.path, exc) from None
        arr = arr.astype(np.float64, copy=False)
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


# ---------------------------------------------------------------------------
# Value pre-scan: units, signs and empty layers, checked before a run starts
# ---------------------------------------------------------------------------

SCAN_MAX_CELLS = 256
"""The value pre-scan reads each raster reduced to at most this many cells a side (nearest
neighbour, from the overviews when the file has them), so it costs the same on any grid size."""

FILL_VALUES = (-3.4028234663852886e38, -1e20, -99999.0, -32768.0, -32767.0, -9999.0, -999.0)
FILL_VALUES += (999.0, 9999.0, 32767.0, 65535.0, 99999.0, 1e20, 3.4028234663852886e38)
"""Fill values common in exported grids. Stored as data (not declared as nodata) and outside
the layer's plausible range, they are an undeclared nodata value, not a measurement."""

_UNIT_FIXES: dict[str, tuple[tuple[float, str, str], ...]] = {
    "crustal_thickness_km": (
        (1e-3, "look like metres; geomelt expects km. Divide by 1000", "A/1000"),
        (
            -1.0,
            "look like Moho heights (negative down); geomelt expects crustal thickness in km, "
            "positive. Multiply by -1",
            "-A",
        ),
        (
            -1e-3,
            "look like Moho heights in metres (negative down); geomelt expects crustal "
            "thickness in km, positive. Multiply by -0.001",
            "-A/1000",
        ),
    ),
    "heat_flow_mw_m2": (
        (1e3, "look like W m-2; geomelt expects mW m-2. Multiply by 1000", "A*1000"),
    ),
    "slab_depth_km": (
        (
            -1.0,
            "look like heights (negative down, as Slab2 stores them); geomelt expects depth "
            "below sea level in km, positive down. Multiply by -1",
            "-A",
        ),
        (1e-3, "look like metres; geomelt expects km. Divide by 1000", "A/1000"),
        (
            -1e-3,
            "look like heights in metres (negative down); geomelt expects depth in km, "
            "positive down. Multiply by -0.001",
            "-A/1000",
        ),
    ),
}
"""Per input layer: (factor that brings the values into the plausible range, diagnosis and
fix, gdal_calc.py expression)."""


@dataclass(frozen=True)
class ValueScan:
    """What the value pre-scan of one input raster found (on a reduced sample)."""

    layer: str
    path: Path
    shape: tuple[int, int]
    """Full size of the raster (rows, columns)."""
    sample_shape: tuple[int, int]
    """Size of the reduced read the statistics come from."""
    valid_share: float
    """Share of the sampled cells holding a value (not nodata, not NaN)."""
    minimum: float = math.nan
    maximum: float = math.nan
    median: float = math.nan
    outside_share: float = 0.0
    """Share of the valid sampled cells outside the layer's plausible range."""
    on_reference_grid: bool = True
    overlap_share: float = 1.0
    """Share of the reference grid covered by the raster's footprint."""
    warnings: tuple[str, ...] = ()

    def describe(self) -> str:
        """One line for reports: value range, nodata share, plausibility, coverage."""
        spec = INPUT_LAYERS[self.layer]
        unit = f" {spec.unit}" if spec.unit else ""
        parts = [f"{self.shape[1]} x {self.shape[0]} cells"]
        if self.valid_share > 0:
            parts.append(
                f"values {self.minimum:.4g} to {self.maximum:.4g}{unit} (median {self.median:.4g})"
            )
        parts.append(f"{100 * (1 - self.valid_share):.1f} % nodata")
        if spec.plausible_range is not None and self.valid_share > 0:
            lo, hi = spec.plausible_range
            parts.append(
                f"{100 * self.outside_share:.1f} % outside the plausible {lo:g}-{hi:g}{unit}"
            )
        if not self.on_reference_grid:
            parts.append(f"covers {100 * self.overlap_share:.0f} % of the reference grid")
        if self.sample_shape != self.shape:
            parts.append(f"sampled on {self.sample_shape[1]} x {self.sample_shape[0]} cells")
        return ", ".join(parts)


def _valid(arr) -> np.ndarray:
    data = np.ma.getdata(arr).astype(np.float64, copy=False)
    return data[~np.ma.getmaskarray(arr) & np.isfinite(data)]


SCAN_STRIP_BYTES = 16 * 1024 * 1024
"""Most bytes of full-resolution rows one read of the value pre-scan holds (a file's own
strips or tile rows are read whole unless they are larger)."""


def nearest_sample(ds, shape: tuple[int, int], band: int = 1) -> np.ma.MaskedArray:
    """Band ``band`` of ``ds`` reduced to ``shape`` cells by nearest neighbour.

    The same cells as ``ds.read(band, out_shape=shape, resampling=nearest, masked=True)``,
    whose source cell is ``floor((i + 0.5) * size / n)`` on each axis. A file with
    overviews is read that way (GDAL reads the overview). Without overviews GDAL takes
    each output row from the blocks crossing it and, once its block cache is smaller
    than a row of blocks, decompresses every block again for each output row; here the
    file is read in full-width strips of its own block height instead, each block once,
    whatever the cache size, holding at most :data:`SCAN_STRIP_BYTES` of rows.
    """
    height, width = ds.height, ds.width
    if ds.overviews(band) or shape == (height, width):
        return ds.read(band, out_shape=shape, resampling=Resampling.nearest, masked=True)
    rows = np.floor((np.arange(shape[0]) + 0.5) * (height / shape[0])).astype(np.int64)
    cols = np.floor((np.arange(shape[1]) + 0.5) * (width / shape[1])).astype(np.int64)
    row_bytes = width * np.dtype(ds.dtypes[band - 1]).itemsize
    step = max(1, min(ds.block_shapes[band - 1][0], SCAN_STRIP_BYTES // row_bytes))
    parts = []
    for start in range(0, height, step):
        wanted = rows[(rows >= start) & (rows < start + step)]
        if wanted.size == 0:
            continue
        top, bottom = int(wanted[0]), int(wanted[-1]) + 1
        strip = ds.read(band, window=Window(0, top, width, bottom - top), masked=True)
        parts.append(strip[wanted - top][:, cols])
    return np.ma.concatenate(parts)


def _sample_values(ds, layer: str, path: Path) -> tuple[np.ndarray, tuple[int, int], float]:
    """Valid values of a reduced read, the read's shape and the share of valid cells."""
    shape = (min(ds.height, SCAN_MAX_CELLS), min(ds.width, SCAN_MAX_CELLS))
    try:
        values = _valid(nearest_sample(ds, shape))
        share = values.size / (shape[0] * shape[1])
        if values.size == 0 and shape != (ds.height, ds.width):
            # A sparse layer can hide between the sampled cells: read every block before
            # calling it empty (a full read, but only for layers that are nearly empty).
            found, n_valid, n_read = [], 0, 0
            for _, window in ds.block_windows(1):
                v = _valid(ds.read(1, window=window, masked=True))
                n_valid += v.size
                n_read += window.width * window.height
                if v.size:
                    found.append(v[:: max(1, v.size // 1024)])
            if found:
                values, share = np.concatenate(found), n_valid / n_read
    except RasterioIOError as exc:
        raise _read_failure(layer, path, exc) from None
    return values, shape, share


def scan_raster_values(path, layer: str, grid: RasterGrid | None = None) -> ValueScan:
    """Pre-scan an input raster's values for wrong units, signs and empty layers.

    Reads the raster reduced to at most :data:`SCAN_MAX_CELLS` cells a side
    (nearest neighbour, overviews used), so the cost does not grow with the
    grid, and compares the values with the layer's ``plausible_range``
    (:data:`geomelt.layers.INPUT_LAYERS`). Values outside the range that are
    not fatal are counted again over the whole grid while a run reads it.

    Parameters
    ----------
    path : path-like
        Raster file.
    layer : str
        Input layer name (``crustal_thickness_km``, ``heat_flow_mw_m2``, ``slab_depth_km``).
    grid : RasterGrid, optional
        Reference grid: a raster that does not overlap it is refused, and so is
        a rotated or sheared reference grid.

    Returns
    -------
    ValueScan
        Sample statistics and the non-fatal warnings.

    Raises
    ------
    MissingLayerError, InputLayerError
        Missing or unreadable file; every cell nodata (for a layer that must
        have values); an undeclared fill value such as -9999 stored as data;
        most values outside the plausible range (the message names the likely
        unit mistake and the conversion); negative values of a positive quantity.
    LayerMismatchError
        No CRS, or no overlap with ``grid``.
    """
    path = Path(path)
    spec = INPUT_LAYERS[layer]
    unit = f" {spec.unit}" if spec.unit else ""
    where = f"input layer '{layer}' ({path.name})"
    with open_raster_checked(path, layer) as ds:
        values, sample_shape, valid_share = _sample_values(ds, layer, path)
        declared = ds.nodata
        shape = (ds.height, ds.width)
        on_grid, overlap = True, 1.0
        if grid is not None and not RasterGrid.from_dataset(ds).same_as(grid):
            on_grid, overlap = False, _overlap_fraction(grid, ds)
            if overlap <= 0.0:
                raise _no_overlap_error(layer, path, grid)
        if grid is not None and on_grid and (grid.transform.b or grid.transform.d):
            msg = (
                f"input layer '{layer}' ({path.name}) defines the reference grid but its grid "
                "is rotated or sheared; geomelt's outputs need a north-up grid. Warp it first "
                f"(gdalwarp {path.name} {path.stem}_northup.tif) and use the result."
            )
            raise InputLayerError(msg)
    scan = ValueScan(
        layer,
        path,
        shape,
        sample_shape,
        valid_share,
        on_reference_grid=on_grid,
        overlap_share=overlap,
    )
    if values.size == 0:
        if spec.sparse:
            note = (
                f"{where}: every cell is nodata, so the layer contributes nothing; leave it out "
                "if the region has none, or check its nodata value"
            )
            return dataclasses.replace(scan, warnings=(note,))
        nodata = "NaN" if declared is None or np.isnan(declared) else f"{declared:g}"
        msg = (
            f"{where}: every cell is nodata (nodata value {nodata}), so nothing can be "
            "computed. Check that this is the right file and that its nodata value is right "
            "(gdal_edit.py -a_nodata VALUE FILE, or -unsetnodata)."
        )
        raise InputLayerError(msg)
    lo_v, hi_v, median = float(values.min()), float(values.max()), float(np.median(values))
    lo, hi = spec.plausible_range or (-math.inf, math.inf)
    outside = (values < lo) | (values > hi)
    for fill in FILL_VALUES:
        if not lo <= fill <= hi and np.isclose(values, fill, rtol=1e-6, atol=0.0).any():
            msg = (
                f"{where}: cells holding {fill:g} look like an undeclared nodata value, not "
                f"data. Declare it (gdal_edit.py -a_nodata {fill:g} {path.name}) and run again."
            )
            raise InputLayerError(msg)
    quantity = spec.description.split(" (")[0].split(",")[0].lower()
    if not lo <= median <= hi:
        span = f"values {lo_v:.6g} to {hi_v:.6g} (median {median:.6g})"
        for factor, diagnosis, calc in _UNIT_FIXES.get(layer, ()):
            if lo <= median * factor <= hi:
                msg = (
                    f"{where}: {span} {diagnosis} (e.g. gdal_calc.py "
                    f'-A {path.name} --calc="{calc}" --outfile={path.stem}_converted.tif, or '
                    "the raster calculator of your GIS) and point the configuration at the "
                    "converted file."
                )
                raise InputLayerError(msg)
        msg = (
            f"{where}: {span} lie mostly outside the plausible range {lo:g}-{hi:g}{unit} of "
            f"{quantity}. Check that this is the right file and that its values are in "
            f"{spec.unit or 'the unit the layer name carries'}."
        )
        raise InputLayerError(msg)
    if lo > 0 and lo_v < 0:
        msg = (
            f"{where}: {int((values < 0).sum())} of {values.size} sampled cells are negative "
            f"(down to {lo_v:.6g}{unit}), but {quantity} is positive. Set them to nodata or "
            "fix their sign, e.g. gdal_calc.py "
            f'-A {path.name} --calc="where(A<0, nan, A)" --outfile={path.stem}_fixed.tif.'
        )
        raise InputLayerError(msg)
    notes = []
    zeros = float(np.mean(values == 0.0))
    if lo > 0 and zeros >= 0.01:
        notes.append(
            f"{where}: {100 * zeros:.0f} % of the sampled cells are exactly 0{unit}; if 0 "
            f"marks missing data, declare it (gdal_edit.py -a_nodata 0 {path.name})"
        )
    return dataclasses.replace(
        scan,
        minimum=lo_v,
        maximum=hi_v,
        median=median,
        outside_share=float(outside.mean()),
        warnings=tuple(notes),
    )


def check_raster_values(path, layer: str, grid: RasterGrid | None = None) -> list[str]:
    """Pre-scan an input raster's values (:func:`scan_raster_values`); return its warnings.

    Raises :class:`~geomelt.errors.InputLayerError` (or
    :class:`~geomelt.errors.LayerMismatchError`) for values no run can use.
    """
    return list(scan_raster_values(path, layer, grid).warnings)
