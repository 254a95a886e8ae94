"""Write geomelt's single-band GeoTIFF outputs.

Each output is written window by window into a tiled working file (band
description, unit, provenance tags, colour table), then finished as a
Cloud-Optimized GeoTIFF (GDAL's COG driver: overviews, tiles in reading
order) and moved into place with an atomic rename, so a final name never
holds a partial file.

Finishing copies the file once more, but GDAL does it without holding
Python's global interpreter lock, so several files finish at the same time
and alongside other work (rasterio's ``build_overviews`` on the open file held
the lock for as long as it ran).
"""

from __future__ import annotations

import json
import os
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np
import rasterio
import rasterio.shutil
from rasterio.enums import Resampling
from rasterio.windows import Window

from geomelt.io.rasters import RasterGrid

__all__ = ["COG_OPTIONS", "GEOTIFF_PROFILE", "GeoTiffWriter", "WORKING_OPTIONS"]

GEOTIFF_PROFILE: dict[str, Any] = {
    "driver": "GTiff",
    "count": 1,
    "tiled": True,
    "BIGTIFF": "IF_SAFER",
}
"""Creation options shared by every output."""

COG_OPTIONS: dict[str, dict[str, Any]] = {
    # Measured on 4096 x 4096 float32 fields written by 512-cell windows on this project's
    # 2-core machines: ZSTD level 1 + floating-point predictor wrote in 0.18-0.20 s against
    # 0.72-0.79 s for DEFLATE level 6, for files within 1 % of the size (56.4 vs 56.2 MB).
    "f": {"compress": "ZSTD", "level": 1, "predictor": "FLOATING_POINT"},
    # Class rasters: DEFLATE without predictor was smallest and any TIFF reader opens it.
    "u": {"compress": "DEFLATE", "level": 6, "predictor": "NO"},
    "i": {"compress": "DEFLATE", "level": 6, "predictor": "STANDARD"},
}
"""Compression of the finished files per dtype kind (float, unsigned and signed integer),
as options of GDAL's COG driver."""

WORKING_OPTIONS: dict[str, Any] = {"compress": "zstd", "zstd_level": 1, "predictor": 1}
"""Compression of the working files (temporary): the cheapest to write and to read back.
Measured on 4096 x 4096 float32 fields of a run: 0.08 s to write against 0.18 s with the
floating-point predictor, for 44 instead of 27 MB; the copy into the COG took the same."""

WORKING_TILE_CELLS = 128
"""Tile side of the working files (the finished COGs have tiles of ``tile_size``). Every
open working file holds buffers of about two tiles; with ~70 outputs open at once, tiles
of 128 cells instead of 256 took 22 MiB off a run's resident memory (measured on the
4096^2 benchmark region) and did not slow the writing or the COG copy."""

WORKING_SUFFIX = ".part.tif"
"""Ending of the working file an output is written into before it is finished."""


def _tag_value(value: Any) -> str:
    if isinstance(value, str):
        return value
    return json.dumps(value, allow_nan=False, default=str, sort_keys=True)


class GeoTiffWriter:
    """Write one single-band output GeoTIFF window by window.

    Parameters
    ----------
    final_path : path-like
        Where the finished file goes.
    staging_dir : path-like
        Folder for the file while it is written (same filesystem as
        ``final_path`` so the final move is an atomic rename).
    grid : RasterGrid
        Output grid.
    dtype : str
        ``"float32"`` (NaN nodata) or an integer type with ``nodata``.
    nodata : float
        Nodata value.
    description, unit : str
        Band description (the quantity's name) and unit, as GDAL shows them.
    band_tags, dataset_tags : mapping
        Free-form metadata; non-string values are stored as JSON.
    block_size : int
        Size of the processing windows in cells (multiple of 16); the tile size
        is 256 when it divides the window size, else the window size.
    categorical : bool
        Use nearest-neighbour instead of averaging for overviews.
    """

    def __init__(
        self,
        final_path,
        staging_dir,
        grid: RasterGrid,
        *,
        dtype: str = "float32",
        nodata: float = float("nan"),
        description: str = "",
        unit: str = "",
        band_tags: Mapping[str, Any] | None = None,
        dataset_tags: Mapping[str, Any] | None = None,
        block_size: int = 512,
        categorical: bool = False,
        colormap: Mapping[int, tuple[int, int, int, int]] | None = None,
        scheme=None,
    ):
        self.final_path = Path(final_path)
        self.staging_path = Path(staging_dir) / self.final_path.name
        self.working_path = Path(staging_dir) / (self.final_path.stem + WORKING_SUFFIX)
        self.grid = grid
        self.dtype = np.dtype(dtype)
        self.nodata = nodata
        self.categorical = categorical
        self.scheme = scheme
        self.sidecars: list[Path] = []
        self._seen = np.zeros(256, dtype=bool) if scheme is not None else None
        # Tiles of 256 cells unless the processing windows are not a multiple of that;
        # windows must cover whole tiles or compressed tiles get rewritten.
        block = 256 if block_size % 256 == 0 else max(16, block_size // 16 * 16)
        self.tile_size = block
        working = WORKING_TILE_CELLS if block % WORKING_TILE_CELLS == 0 else block
        profile = dict(
            GEOTIFF_PROFILE,
            width=grid.width,
            height=grid.height,
            crs=grid.crs,
            transform=grid.transform,
            dtype=self.dtype.name,
            nodata=nodata,
            **WORKING_OPTIONS,
            blockxsize=working,
            blockysize=working,
        )
        self.staging_path.parent.mkdir(parents=True, exist_ok=True)
        self._ds = rasterio.open(self.working_path, "w", **profile)
        self._ds.set_band_description(1, description)
        if unit:
            self._ds.set_band_unit(1, unit)
        if band_tags:
            self._ds.update_tags(1, **{k: _tag_value(v) for k, v in band_tags.items()})
        # How the overviews are made (GDAL's COG driver copies default-domain tags only).
        self._ds.update_tags(1, overview_resampling="nearest" if categorical else "average")
        if dataset_tags:
            self._ds.update_tags(**{k: _tag_value(v) for k, v in dataset_tags.items()})
        if colormap is None and scheme is not None:
            colormap = scheme.colormap()
        if colormap:
            self._ds.write_colormap(1, dict(colormap))

    def write(self, array: np.ndarray, window: Window) -> None:
        """Write one window; NaN becomes the nodata value for integer outputs."""
        arr = np.asarray(array)
        if self.dtype.kind != "f":
            arr = np.where(np.isnan(arr), self.nodata, arr) if arr.dtype.kind == "f" else arr
        arr = arr.astype(self.dtype, copy=False)
        if self._seen is not None:
            self._seen |= np.bincount(arr.ravel(), minlength=256)[:256] > 0
        # As a (1, rows, cols) block: a 2-D array would be copied into one by rasterio.
        self._ds.write(arr[np.newaxis], [1], window=window)

    def close(self) -> None:
        """Close the working file (after its last window); :meth:`finish` does it too."""
        if not self._ds.closed:
            self._ds.close()

    def finish(self) -> Path:
        """Make the Cloud-Optimized GeoTIFF with its overviews and move it into place.

        Safe to call from any thread once the last window is written (one call per
        writer); GDAL releases the GIL while it copies, on one thread of its own
        (files finish in parallel instead, see
        :func:`geomelt.pipeline.runner.finish_outputs`).
        """
        self.close()
        method = Resampling.nearest if self.categorical else Resampling.average
        rasterio.shutil.copy(
            self.working_path,
            self.staging_path,
            driver="COG",
            blocksize=self.tile_size,
            overview_resampling=method.name.upper(),
            bigtiff="IF_SAFER",
            **COG_OPTIONS[self.dtype.kind],
        )
        self.working_path.unlink()
        if self.scheme is not None:
            # Category names (.aux.xml), a QGIS style listing only the classes present
            # (.qml) and an OGC SLD, staged with the file and moved in before it.
            from geomelt.io.styles import write_raster_styles

            present = [int(c) for c in np.flatnonzero(self._seen) if c != self.nodata]
            staged = write_raster_styles(self.staging_path, self.scheme, present)
            for path in staged.values():
                final = self.final_path.parent / (
                    self.final_path.name + path.name[len(self.staging_path.name) :]
                    if path.name.startswith(self.staging_path.name)
                    else self.final_path.stem + path.suffix
                )
                os.replace(path, final)
                self.sidecars.append(final)
        os.replace(self.staging_path, self.final_path)
        return self.final_path

    def abort(self) -> None:
        """Close and delete the working and staging files."""
        try:
            self._ds.close()
        finally:
            for path in (self.working_path, self.staging_path):
                path.unlink(missing_ok=True)
                for suffix in (".aux.xml", ".ovr.tmp"):
                    Path(str(path) + suffix).unlink(missing_ok=True)
