"""Layers that depend on the whole grid: distance to the nearest predicted melt.

A cell's distance to melt depends on every other cell, so it cannot be computed
window by window like the rest of the run. The pipeline therefore makes two
passes. In the first, :class:`MeltProximityCollector` sees each finished window
and keeps (a) the cells on the edge of melting areas (a melting cell with a
non-melting 4-neighbour in its window, or on the window's border) and (b) the
melt flag at the nodes of a lattice of every ``stride``-th cell. Between the
passes, :meth:`MeltProximityCollector.finish` measures the distance from each
lattice node to the nearest edge cell with a k-d tree of unit vectors
(:class:`scipy.spatial.cKDTree`; the chord becomes the great-circle distance on
the sphere of the Earth's mean radius). In the second pass,
:meth:`MeltProximityField.distance_km` interpolates the lattice bilinearly onto
the cells of a window and sets melting cells to 0.

Accuracy: distances are between cell centres on the sphere of radius
:data:`EARTH_MEAN_RADIUS_KM`, within about 0.5 % of the WGS84 geodesic (the
flattening). With ``stride == 1`` (grids up to :data:`LATTICE_MAX_NODES_PER_SIDE`
cells a side) the lattice is every cell and no interpolation happens. Larger
grids are interpolated; as distance changes by at most one km per km, the
interpolation error stays below one lattice spacing (``stride`` cells). The
result does not depend on the window size, the engine or the window order.

Memory stays bounded: the lattice has at most ``LATTICE_MAX_NODES_PER_SIDE``
nodes a side, and only edge cells (a line, not an area) are kept.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from rasterio.windows import Window
from scipy.ndimage import map_coordinates
from scipy.spatial import cKDTree

from geomelt.classes import CLASS_NODATA, Mechanism
from geomelt.constants import EARTH_MEAN_RADIUS_KM as _EARTH_RADIUS

__all__ = [
    "EARTH_MEAN_RADIUS_KM",
    "LATTICE_MAX_NODES_PER_SIDE",
    "MeltProximityCollector",
    "MeltProximityField",
    "melt_mask",
]

EARTH_MEAN_RADIUS_KM = float(_EARTH_RADIUS.value)
"""Mean radius of the Earth, km (see :data:`geomelt.constants.EARTH_MEAN_RADIUS_KM`)."""

LATTICE_MAX_NODES_PER_SIDE = 1024
"""Most lattice nodes along a side; larger grids use every ``stride``-th cell."""

LATTICE_QUERY_NODES = 65536
"""Lattice nodes measured per k-d tree query (a band of lattice rows): bounds the memory
of :meth:`MeltProximityCollector.finish` to a few MiB."""

_ALL_MECHANISMS = int(Mechanism.DECOMPRESSION | Mechanism.FLUX | Mechanism.CRUSTAL_HEATING)


def melt_mask(melting_mechanism: np.ndarray) -> np.ndarray:
    """True where any melting mechanism acts (mechanism code 1-7; 0 and nodata are False)."""
    m = np.asarray(melting_mechanism)
    return (m != 0) & (m != CLASS_NODATA) & (m <= _ALL_MECHANISMS)


def _unit_vectors(lon_deg: np.ndarray, lat_deg: np.ndarray) -> np.ndarray:
    lon, lat = np.radians(lon_deg), np.radians(lat_deg)
    cos_lat = np.cos(lat)
    return np.column_stack((cos_lat * np.cos(lon), cos_lat * np.sin(lon), np.sin(lat)))


def _lattice(n: int, stride: int) -> np.ndarray:
    return np.unique(np.r_[np.arange(0, n, stride), n - 1]).astype(np.int64)


@dataclass(frozen=True)
class MeltProximityField:
    """Distance to the nearest melt on a lattice of cells, ready to interpolate.

    Attributes
    ----------
    node_rows, node_cols : ndarray of int
        Grid rows and columns of the lattice nodes (increasing, first and last
        row and column included).
    node_distance_km : ndarray of float32, shape (len(node_rows), len(node_cols))
        Distance from each node to the nearest melting cell, km; ``inf`` when
        the grid holds no melt.
    n_edge_cells : int
        Edge cells the distances were measured to.
    """

    node_rows: np.ndarray
    node_cols: np.ndarray
    node_distance_km: np.ndarray
    n_edge_cells: int

    @property
    def stride(self) -> int:
        """Lattice spacing in cells."""
        steps = np.diff(self.node_rows) if self.node_rows.size > 1 else np.array([1])
        return int(steps.max())

    def distance_km(self, window: Window, melting: np.ndarray) -> np.ndarray:
        """Distance to the nearest melt for the cells of ``window``, km (float32).

        Parameters
        ----------
        window : Window
            Window of the grid the field was built on.
        melting : ndarray of bool, window shape
            True on melting cells (they get 0).
        """
        h, w = int(window.height), int(window.width)
        if not np.isfinite(self.node_distance_km).any():
            return np.where(melting, np.float32(0.0), np.float32(np.inf)).astype(np.float32)
        rows = np.arange(window.row_off, window.row_off + h)
        cols = np.arange(window.col_off, window.col_off + w)
        r = np.interp(rows, self.node_rows, np.arange(self.node_rows.size))
        c = np.interp(cols, self.node_cols, np.arange(self.node_cols.size))
        if self.stride == 1:
            out = self.node_distance_km[np.ix_(r.astype(np.intp), c.astype(np.intp))]
        else:
            rr, cc = np.meshgrid(r, c, indexing="ij")
            out = map_coordinates(
                self.node_distance_km, [rr, cc], order=1, mode="nearest", output=np.float32
            )
        return np.where(melting, np.float32(0.0), out).astype(np.float32)


class MeltProximityCollector:
    """First-pass side of the distance to melt: sees every window once, in any order.

    Parameters
    ----------
    grid : RasterGrid
        The run's reference grid.
    max_nodes_per_side : int
        Lattice size limit (default :data:`LATTICE_MAX_NODES_PER_SIDE`).
    """

    def __init__(self, grid, max_nodes_per_side: int = LATTICE_MAX_NODES_PER_SIDE):
        self.grid = grid
        longest = max(grid.height, grid.width)
        self.stride = max(1, math.ceil(longest / max_nodes_per_side))
        self.node_rows = _lattice(grid.height, self.stride)
        self.node_cols = _lattice(grid.width, self.stride)
        self.node_melt = np.zeros((self.node_rows.size, self.node_cols.size), dtype=bool)
        self._edge_rows: list[np.ndarray] = []
        self._edge_cols: list[np.ndarray] = []

    def add(self, window: Window, melting: np.ndarray) -> None:
        """Record one window's melting cells (``melting``: bool, window shape)."""
        melt = np.asarray(melting, dtype=bool)
        r0, c0 = int(window.row_off), int(window.col_off)
        h, w = melt.shape
        if melt.any():
            pad = np.pad(melt, 1, constant_values=False)
            inner = pad[:-2, 1:-1] & pad[2:, 1:-1] & pad[1:-1, :-2] & pad[1:-1, 2:]
            er, ec = np.nonzero(melt & ~inner)
            self._edge_rows.append((er + r0).astype(np.int32))
            self._edge_cols.append((ec + c0).astype(np.int32))
        ir = np.flatnonzero((self.node_rows >= r0) & (self.node_rows < r0 + h))
        ic = np.flatnonzero((self.node_cols >= c0) & (self.node_cols < c0 + w))
        if ir.size and ic.size:
            self.node_melt[np.ix_(ir, ic)] = melt[
                np.ix_(self.node_rows[ir] - r0, self.node_cols[ic] - c0)
            ]

    def finish(self, workers: int = 1) -> MeltProximityField:
        """Measure the lattice distances; call once, after every window was added."""
        shape = self.node_melt.shape
        if not self._edge_rows:
            dist = np.full(shape, np.inf, dtype=np.float32)
            return MeltProximityField(self.node_rows, self.node_cols, dist, 0)
        rows = np.concatenate(self._edge_rows)
        cols = np.concatenate(self._edge_cols)
        self._edge_rows.clear()
        self._edge_cols.clear()
        tree = cKDTree(_unit_vectors(*self.grid.lonlat_at(rows, cols)))
        dist = np.zeros(shape, dtype=np.float32)
        # A band of lattice rows at a time: the coordinates, unit vectors and query
        # results of all (up to a million) nodes at once would take ~100 MiB.
        band = max(1, LATTICE_QUERY_NODES // max(1, shape[1]))
        for top in range(0, shape[0], band):
            todo = ~self.node_melt[top : top + band]
            if not todo.any():
                continue
            ir, ic = np.nonzero(todo)
            lon, lat = self.grid.lonlat_at(self.node_rows[ir + top], self.node_cols[ic])
            chord, _ = tree.query(_unit_vectors(lon, lat), k=1, workers=max(1, workers))
            arc = 2.0 * EARTH_MEAN_RADIUS_KM * np.arcsin(np.minimum(chord / 2.0, 1.0))
            dist[ir + top, ic] = arc
        return MeltProximityField(self.node_rows, self.node_cols, dist, int(rows.size))
