"""Plate-boundary lines turned into per-cell fields: distances, nearest rates and plate sides.

A :class:`BoundarySet` is built once per run from the plate-boundary layer
(:func:`geomelt.io.vectors.read_plate_boundaries`), in any CRS. It is then
used read-only by :func:`boundary_fields` on every window of the grid, from
any number of threads.

Distances are geodesic on the WGS84 ellipsoid whatever the grid CRS
(projected or geographic), across the antimeridian and near the poles.

Method
------
1. Lines are densified (in the source CRS when it is projected, so that
   they follow the straight lines drawn on that map; then along geodesics,
   ``pyproj.Geod``, Karney 2013) and their vertices placed on the
   *auxiliary sphere* of reduced latitude. A geodesic is a great circle on
   that sphere when longitude is measured by Karney's (2013, eq. 8)
   auxiliary longitude; with the geographic longitude instead, a segment of
   angle s strays by O(f s^2) from its great circle, about 1 cm for 5 km.
2. Each line is indexed by a binary strip tree (Ballard 1981): every node
   stores the great-circle chord between its first and last vertex and a
   width ``h``, the largest angular distance from its vertices to that chord,
   so that the line and the chord lie within ``h`` of each other. The lines
   of one boundary type are grouped above that by spherical caps.
3. The sphere is cut into tiles of a gnomonic cube (Ronchi, Iacono & Paolucci
   1996). For each tile a branch-and-bound search over the trees keeps the
   nodes that can hold the nearest boundary point of some cell of the tile,
   opening a node until its width is below ``rtol`` times its distance to
   the tile, or below ``atol_km`` (numpy, a few calls per tile). Each cell
   then takes the nearest chord among its tile's nodes, skipping those that a
   linear lower bound over the tile already rules out (compiled, one cell at
   a time without Python's global lock: ``geomelt.tectonics._kernels``).
   Tiles are fixed on the sphere, so the result for a cell does not depend on
   the window it is computed in.
4. Candidates are compared by their distance on the ellipsoid: the distance
   from the cell to the foot of the perpendicular on each chord is converted
   with Lambert's (1942) formula on the auxiliary sphere (relative error
   below 2e-6). (Comparing angles on the auxiliary sphere instead would err
   by up to the flattening, 0.34 %, where two boundaries lie at nearly the
   same distance in different directions.)

Steps 2-3 guarantee an error below ``max(rtol * d, atol_km)``. With the
defaults (0.1 %, 2 m), distances agree with ``pyproj.Geod`` point-to-line
distances to 0.1 % beyond 2 km and 2 m closer
(``tests/tectonics/test_boundaries.py``).

References
----------
Ballard, D. H. (1981). Strip trees: a hierarchical representation for
curves. Communications of the ACM 24(5), 310-321.

Bærentzen, J. A. & Aanæs, H. (2005). Signed distance computation using the
angle weighted pseudonormal. IEEE Transactions on Visualization and Computer
Graphics 11(3), 243-253.

Karney, C. F. F. (2013). Algorithms for geodesics. Journal of Geodesy 87,
43-55 (the algorithms of GeographicLib, used by ``pyproj.Geod``).

Lambert, W. D. (1942). The distance between two widely separated points on
the surface of the earth. Journal of the Washington Academy of Sciences
32(5), 125-130.

Ronchi, C., Iacono, R. & Paolucci, P. S. (1996). The "cubed sphere": a new
method for the solution of partial differential equations in spherical
geometry. Journal of Computational Physics 124, 93-114.
"""

from __future__ import annotations

import logging
import math
from dataclasses import dataclass

import numpy as np
import pandas as pd
import shapely
from pyproj import CRS, Geod, Transformer

from geomelt.errors import InputLayerError, LayerMismatchError, ParameterError
from geomelt.io.vectors import BOUNDARY_TYPES, UPPER_PLATE_SIDES
from geomelt.tectonics._kernels import lambert_many_km, nearest_line_of_type
from geomelt.units import km_to_m

__all__ = [
    "BOUNDARY_FIELDS",
    "DEFAULT_MAX_DISTANCE_KM",
    "NO_BOUNDARY_CODE",
    "SIDE_TYPES",
    "BoundaryField",
    "BoundarySet",
    "aux_sphere_components",
    "boundary_fields",
    "lambert_distance_km",
    "suggest_tile_km",
]

log = logging.getLogger(__name__)

_GEOD = Geod(ellps="WGS84")
_A_KM = _GEOD.a / 1000.0  # WGS84 semi-major axis, km
_F = _GEOD.f  # WGS84 flattening
_MAX_REACH_KM = 5000.0  # range over which Lambert's formula and the bounds were checked

DEFAULT_MAX_DISTANCE_KM = 1500.0
"""Default reach of :func:`boundary_fields`, km: beyond it a boundary counts as absent."""

DEFAULT_MAX_SEGMENT_KM = 5.0
"""Default longest segment after densification, km."""

DEFAULT_TILE_KM = 32.0
"""Default edge of the search tiles at the centre of a cube face, km (suits ~1 km cells)."""

SIDE_TYPES = ("subduction", "collision")
"""Boundary types for which the upper-plate side is reported."""

NO_BOUNDARY_CODE = 255
"""``nearest_boundary_type`` value where no boundary lies within reach."""

NO_FEATURE = -1
"""``nearest_<type>_feature`` value where no line of that type lies within reach."""


def suggest_tile_km(cell_size_km: float) -> float:
    """A good ``tile_km`` for :meth:`BoundarySet.from_frame` on a grid of this cell size.

    Parameters
    ----------
    cell_size_km : float
        Grid cell size, km (for a geographic grid, the east-west size at the
        grid's middle latitude is close enough).

    Returns
    -------
    float
        32 cells, kept within 8-256 km. Measured: 32 km tiles were the
        fastest for 1 km cells, 128-256 km for 10 km cells.

    Examples
    --------
    >>> suggest_tile_km(1.0), suggest_tile_km(10.0), suggest_tile_km(0.1)
    (32.0, 256.0, 8.0)
    """
    return float(min(max(32.0 * float(cell_size_km), 8.0), 256.0))


_CHUNK_CELLS = 1 << 16
"""Cells searched together: one window of 256 x 256 cells. Bounds the working memory of a
call (12 MiB traced at 2^16 cells, outputs included) and shares the tiles' candidate
search among more cells (measured on 16 windows of the 4096^2 benchmark region: 14 ms
per window at 2^16, 16 at 2^15, 20 at 2^14, 16 at 2^17)."""


_NO_SIDE = np.empty(0, dtype=np.float32)
"""Stand-in side output for the types without a side (the kernel does not write it)."""


@dataclass(frozen=True)
class BoundaryField:
    """One output of :func:`boundary_fields`: its unit, dtype, nodata and meaning."""

    name: str
    unit: str
    dtype: str
    nodata: float | int
    description: str


def _field_table() -> dict[str, BoundaryField]:
    nan = float("nan")
    fields = []
    for btype in BOUNDARY_TYPES:
        fields.append(
            BoundaryField(
                f"distance_to_{btype}_km",
                "km",
                "float32",
                nan,
                f"Geodesic (WGS84) distance to the nearest {btype} line; NaN where none lies "
                "within the reach",
            )
        )
    for btype in BOUNDARY_TYPES:
        fields.append(
            BoundaryField(
                f"{btype}_rate_mm_yr",
                "mm/yr",
                "float32",
                nan,
                f"rate_mm_yr of the nearest {btype} line; NaN where none lies within the reach "
                "or its rate is not given",
            )
        )
    for btype in SIDE_TYPES:
        fields.append(
            BoundaryField(
                f"{btype}_side",
                "1",
                "float32",
                nan,
                f"+1 on the upper-plate (overriding) side of the nearest {btype} line, -1 on the "
                "lower-plate side, 0 where its upper_plate_side is not given (or the cell lies "
                "on the line); NaN where none lies within the reach",
            )
        )
    for btype in BOUNDARY_TYPES:
        fields.append(
            BoundaryField(
                f"nearest_{btype}_feature",
                "",
                "int32",
                NO_FEATURE,
                f"Row (0-based, in the input layer) of the nearest {btype} line; {NO_FEATURE} "
                "where none lies within the reach (to total per-cell quantities per line)",
            )
        )
    fields.append(
        BoundaryField(
            "distance_to_boundary_km",
            "km",
            "float32",
            nan,
            "Geodesic (WGS84) distance to the nearest plate boundary of any type; NaN where none "
            "lies within the reach",
        )
    )
    fields.append(
        BoundaryField(
            "nearest_boundary_type",
            "",
            "uint8",
            NO_BOUNDARY_CODE,
            "Type of the nearest plate boundary: index into geomelt.io.vectors.BOUNDARY_TYPES "
            f"({', '.join(f'{i} {t}' for i, t in enumerate(BOUNDARY_TYPES))}); "
            f"{NO_BOUNDARY_CODE} where none lies within the reach",
        )
    )
    return {f.name: f for f in fields}


BOUNDARY_FIELDS: dict[str, BoundaryField] = _field_table()
"""Every array :func:`boundary_fields` returns, by name, in the order it returns them."""


# ---------------------------------------------------------------------------
# Auxiliary-sphere geometry
# ---------------------------------------------------------------------------


def aux_sphere_components(lon_deg: np.ndarray, lat_deg: np.ndarray) -> np.ndarray:
    """Unit vectors on the auxiliary sphere of reduced latitude, as rows x, y, z (3, n).

    The reduced latitude ``beta`` satisfies ``tan(beta) = (1 - f) tan(phi)``
    (Karney 2013, eq. 1); ``(cos beta, sin beta)`` is obtained by
    normalising ``(cos phi, (1 - f) sin phi)``, without an arctangent.
    """
    lon = np.radians(np.ravel(lon_deg))
    lat = np.radians(np.ravel(lat_deg))
    cos_phi = np.cos(lat)
    sin_phi_b = (1.0 - _F) * np.sin(lat)
    norm = np.hypot(cos_phi, sin_phi_b)
    cos_beta = cos_phi / norm
    out = np.empty((3, lon.size))
    np.multiply(cos_beta, np.cos(lon), out=out[0])
    np.multiply(cos_beta, np.sin(lon), out=out[1])
    np.divide(sin_phi_b, norm, out=out[2])
    return out


def _aux_unit_vectors(lon_deg: np.ndarray, lat_deg: np.ndarray) -> np.ndarray:
    """Unit vectors (n, 3) on the auxiliary sphere (see :func:`aux_sphere_components`)."""
    return np.ascontiguousarray(aux_sphere_components(lon_deg, lat_deg).T)


def _dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Row-wise dot product of (n, 3) arrays, summed in a fixed order.

    Plain element-wise arithmetic gives each row the same bits whatever the
    number of rows, which keeps results independent of the window.
    """
    return a[:, 0] * b[:, 0] + a[:, 1] * b[:, 1] + a[:, 2] * b[:, 2]


def _normalise(v: np.ndarray) -> np.ndarray:
    """Rows of ``v`` scaled to unit length; zero rows stay zero."""
    norm = np.sqrt(_dot(v, v))
    return v / np.where(norm > 0.0, norm, 1.0)[:, None]


def _angle_between(p: np.ndarray, q: np.ndarray) -> np.ndarray:
    """Angle (rad) between unit vectors, from the chord (accurate at small angles)."""
    d = p - q
    chord = np.sqrt(_dot(d, d))
    return 2.0 * np.arcsin(np.minimum(chord * 0.5, 1.0))


# Columns of the per-node kernel table: left unit normal of the chord (0:3),
# chord start A (3:6), unit tangent at A towards B (6:9), cos and sin of the
# chord's angle (9, 10). A degenerate chord (a point) has zero normal and
# tangent, cos 1 and sin 0.
_KN, _KA, _KE, _KC, _KS = slice(0, 3), slice(3, 6), slice(6, 9), 9, 10


def _chord_table(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Kernel table (n, 11) of great-circle chords from ``a`` to ``b`` (unit vectors)."""
    cross = np.cross(a, b)
    sin_t = np.sqrt(_dot(cross, cross))
    cos_t = _dot(a, b)
    # A chord shorter than ~1 mm, or nearly antipodal, has no usable great circle:
    # it is then treated as the point A (its node width covers the rest).
    degenerate = (sin_t < 1e-10) | (cos_t < -0.5)
    normal = cross / np.where(degenerate, 1.0, sin_t)[:, None]
    normal[degenerate] = 0.0
    tangent = np.cross(normal, a)
    table = np.empty((len(a), 11))
    table[:, _KN] = normal
    table[:, _KA] = a
    table[:, _KE] = tangent
    table[:, _KC] = np.where(degenerate, 1.0, cos_t)
    table[:, _KS] = np.where(degenerate, 0.0, sin_t)
    return table


def _arc_distance_rad(p: np.ndarray, table: np.ndarray) -> np.ndarray:
    """Angular distance (rad) from points ``p`` (n, 3) to the chords of ``table`` (n, 11).

    The foot of the perpendicular lies on the arc when ``p`` is inside the
    wedge bounded by the planes through the chord's pole and each end; the
    distance is then ``arcsin |p . n|``, otherwise the distance to the nearer
    end.
    """
    s = _dot(p, table[:, _KN])
    x = _dot(p, table[:, _KA])
    y = _dot(p, table[:, _KE])
    c, sn = table[:, _KC], table[:, _KS]
    inside = (y > 0.0) & (sn * x - c * y > 0.0)
    a = table[:, _KA]
    b = c[:, None] * a + sn[:, None] * table[:, _KE]
    ends = np.minimum(_angle_between(p, a), _angle_between(p, b))
    return np.where(inside, np.arcsin(np.minimum(np.abs(s), 1.0)), ends)


def _foot_points(p: np.ndarray, table: np.ndarray) -> np.ndarray:
    """Nearest point (n, 3) on each chord of ``table`` to the points ``p`` (n, 3)."""
    n = table[:, _KN]
    a = table[:, _KA]
    e = table[:, _KE]
    c, sn = table[:, _KC, None], table[:, _KS, None]
    s = _dot(p, n)[:, None]
    x = _dot(p, a)[:, None]
    y = _dot(p, e)[:, None]
    inside = (y > 0.0) & (sn * x - c * y > 0.0)
    end = np.where(x >= c * x + sn * y, a, c * a + sn * e)
    return np.where(inside, _normalise(p - s * n), end)


def lambert_distance_km(half_chord2: np.ndarray, z1: np.ndarray, z2: np.ndarray) -> np.ndarray:
    """Ellipsoidal (WGS84) distance, km, between two points of the auxiliary sphere.

    Lambert's (1942) formula: with ``sigma`` the central angle on the sphere
    of reduced latitude ``beta`` and ``z = sin(beta)``,

    .. math::

        X = (\\sigma - \\sin\\sigma) \\frac{((z_1 + z_2)/2)^2}{\\cos^2(\\sigma/2)},\\quad
        Y = (\\sigma + \\sin\\sigma) \\frac{((z_2 - z_1)/2)^2}{\\sin^2(\\sigma/2)},\\quad
        s = a\\,(\\sigma - \\tfrac{f}{2}(X + Y)).

    ``sin^2(sigma/2)`` is given from the chord so the formula stays exact as
    the points meet. Relative error against ``pyproj.Geod`` (Karney 2013):
    below 2e-6 from 1 m to 5000 km. Inputs broadcast; the result is float64.
    """
    h2, z1, z2 = np.broadcast_arrays(
        *(np.asarray(v, dtype=np.float64) for v in (half_chord2, z1, z2))
    )
    out = np.empty(h2.shape)
    # one compiled formula for this function and the per-cell search
    lambert_many_km(h2.ravel(), z1.ravel(), z2.ravel(), _A_KM, _F, out.reshape(-1))
    return out


# ---------------------------------------------------------------------------
# Cube tiles
# ---------------------------------------------------------------------------


def _tiles_per_face(tile_km: float) -> int:
    # A gnomonic face spans u in [-1, 1]; at its centre du = d(angle), so a tile
    # of 2 / n in u is 2 a / n km wide there (and narrower towards the corners).
    return max(1, math.ceil(2.0 * _A_KM / tile_km))


def _tile_ids(pc: np.ndarray, n: int) -> np.ndarray:
    """Cube-face tile index (int64) of unit vectors given as rows x, y, z (3, m).

    The face is that of the largest component; ``u, v`` are the next two
    components (cyclically) divided by it, binned into ``n`` steps each.
    """
    x, y, z = pc
    ax, ay, az = np.abs(x), np.abs(y), np.abs(z)
    on_x = (ax >= ay) & (ax >= az)
    on_y = ~on_x & (ay >= az)
    major = np.where(on_x, x, np.where(on_y, y, z))
    scale = 0.5 * n / np.abs(major)
    u = np.where(on_x, y, np.where(on_y, z, x)) * scale
    v = np.where(on_x, z, np.where(on_y, x, y)) * scale
    face = np.where(on_x, 0, np.where(on_y, 1, 2)) + 3 * (major < 0.0)
    i = np.clip(np.floor(u + 0.5 * n).astype(np.int64), 0, n - 1)
    j = np.clip(np.floor(v + 0.5 * n).astype(np.int64), 0, n - 1)
    return (face * n + i) * n + j


def _tile_caps(ids: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Centre (unit vector) and angular radius (rad) of a cap holding each tile."""
    j = ids % n
    i = (ids // n) % n
    face = ids // (n * n)
    axis = face % 3
    sign = np.where(face >= 3, -1.0, 1.0)
    step = 2.0 / n
    u0 = -1.0 + step * i
    v0 = -1.0 + step * j

    def point(u, v):
        q = np.empty((len(ids), 3))
        rows = np.arange(len(ids))
        q[rows, axis] = sign
        q[rows, (axis + 1) % 3] = u
        q[rows, (axis + 2) % 3] = v
        return _normalise(q)

    centre = point(u0 + 0.5 * step, v0 + 0.5 * step)
    radius = np.zeros(len(ids))
    for du in (0.0, step):
        for dv in (0.0, step):
            radius = np.maximum(radius, _angle_between(centre, point(u0 + du, v0 + dv)))
    # Gnomonic tiles are convex spherical quadrilaterals: their farthest point
    # from the centre is a corner. The margin covers rounding of cell positions.
    return centre, radius * (1.0 + 1e-9) + 1e-12


# ---------------------------------------------------------------------------
# Strip trees
# ---------------------------------------------------------------------------


@dataclass(frozen=True, eq=False, repr=False)
class _TypeIndex:
    """Strip trees of all lines of one boundary type (read-only arrays).

    Nodes are polyline nodes (the chord of a run of one line's segments;
    leaves are single segments) or group nodes (a cap over several lines,
    stored as a point chord whose width is the cap radius; never resolved).
    Children of node ``k`` are ``child_list[child_ptr[k]:child_ptr[k + 1]]``.
    """

    table: np.ndarray  # (m, 11) chord kernel table
    table_t: np.ndarray  # (11, m) the same, one row per column (fast gathers)
    width: np.ndarray  # (m,) width h, rad
    child_ptr: np.ndarray  # (m + 1,)
    child_list: np.ndarray
    resolvable: np.ndarray  # (m,) False for group nodes
    feature: np.ndarray  # (m,) feature row of polyline nodes, -1 for groups
    normal_a: np.ndarray  # (m, 3) side pseudo-normal at the chord start
    normal_b: np.ndarray  # (m, 3) side pseudo-normal at the chord end
    root: int
    n_segments: int

    def __len__(self) -> int:
        return len(self.width)


def _ranges(counts: np.ndarray) -> np.ndarray:
    """0, 1, ..., c-1 for each count c, concatenated."""
    total = int(counts.sum())
    return np.arange(total) - np.repeat(np.cumsum(counts) - counts, counts)


def _part_trees(vertices: list[np.ndarray], features: list[int]) -> dict:
    """Binary strip trees over the segments of each part (line without gaps).

    Level ``l`` node ``k`` of a part covers segments ``[k 2^l, (k+1) 2^l)``;
    its children are nodes ``2k`` and ``2k+1`` of level ``l - 1``.
    """
    counts = np.array([len(v) - 1 for v in vertices], dtype=np.int64)
    v_all = np.concatenate(vertices)
    v_off = np.concatenate([[0], np.cumsum(counts + 1)[:-1]])
    n_parts = len(vertices)
    feat = np.asarray(features, dtype=np.int64)
    # Widths are measured at vertices; between two vertices a segment of
    # length L strays at most 1/cos(L) times further from the chord (the
    # distance to a great circle is a sinusoid along another great circle).
    seg_len = np.concatenate([_angle_between(v[:-1], v[1:]) for v in vertices])
    longest = np.zeros(n_parts)
    np.maximum.at(longest, np.repeat(np.arange(n_parts), counts), seg_len)
    margin = (1.0 / np.cos(np.minimum(longest, 1.0))) * (1.0 + 1e-9)

    starts, ends, widths, parts, first_child, n_child = [], [], [], [], [], []
    roots = np.full(n_parts, -1, dtype=np.int64)
    prev_first = np.full(n_parts, -1, dtype=np.int64)
    active = np.arange(n_parts)
    size, next_id = 1, 0
    while active.size:
        m = counts[active]
        k_count = -(-m // size)
        first = next_id + np.concatenate([[0], np.cumsum(k_count)[:-1]])
        node_part = np.repeat(active, k_count)
        k = _ranges(k_count)
        base = v_off[node_part]
        s_local = k * size
        e_local = np.minimum((k + 1) * size, np.repeat(m, k_count))
        starts.append(base + s_local)
        ends.append(base + e_local)
        parts.append(node_part)
        if size == 1:
            widths.append(np.zeros(len(k)))
            first_child.append(np.full(len(k), -1, dtype=np.int64))
            n_child.append(np.zeros(len(k), dtype=np.int64))
        else:
            n_vert = e_local - s_local + 1
            vert = np.repeat(base + s_local, n_vert) + _ranges(n_vert)
            table = _chord_table(v_all[base + s_local], v_all[base + e_local])
            dist = _arc_distance_rad(v_all[vert], np.repeat(table, n_vert, axis=0))
            w = np.maximum.reduceat(dist, np.cumsum(n_vert) - n_vert)
            widths.append(w * margin[node_part] + 1e-12)
            first_child.append(prev_first[node_part] + 2 * k)
            n_child.append(1 + (e_local - s_local > size // 2).astype(np.int64))
        done = k_count == 1
        roots[active[done]] = first[done]
        prev_first[active] = first
        next_id += int(k_count.sum())
        active = active[~done]
        size *= 2
    start = np.concatenate(starts)
    end = np.concatenate(ends)
    part = np.concatenate(parts)
    table = _chord_table(v_all[start], v_all[end])
    # Side pseudo-normals at every vertex, from the segments (the leaves) that
    # meet there: the normalised sum of their left normals (the 2-D form of
    # the pseudo-normal of Bærentzen & Aanæs 2005); at a line's ends, the end
    # segment's normal, which extends the line. A node's chord ends are
    # vertices of its line, so it takes the pseudo-normals of those vertices.
    seg_normal = table[: int(counts.sum()), _KN]  # level 0 comes first
    seg_start = np.repeat(v_off, counts) + _ranges(counts)
    vert_normal = np.zeros((len(v_all), 3))
    vert_normal[seg_start] += seg_normal
    vert_normal[seg_start + 1] += seg_normal
    vert_normal = _normalise(vert_normal)
    normal_a = vert_normal[start]
    normal_b = vert_normal[end]
    return {
        "table": table,
        "width": np.concatenate(widths),
        "first_child": np.concatenate(first_child),
        "n_child": np.concatenate(n_child),
        "feature": feat[part],
        "normal_a": normal_a,
        "normal_b": normal_b,
        "roots": roots,
        "n_segments": int(counts.sum()),
    }


def _cap_tree(centres: np.ndarray, radii: np.ndarray):
    """Binary tree of spherical caps over ``len(centres)`` items (median splits).

    Returns the caps ``(centre, radius)`` of the groups and their children,
    each child ``("item", i)`` or ``("group", j)``; the last group is the top.
    """
    groups: list[tuple[np.ndarray, float, list[tuple[str, int]]]] = []

    def build(idx: np.ndarray) -> tuple[str, int]:
        if len(idx) <= 2:
            refs = [("item", int(i)) for i in idx]
        else:
            pts = centres[idx]
            axis = int(np.argmax(pts.max(axis=0) - pts.min(axis=0)))
            ordered = idx[np.argsort(pts[:, axis], kind="stable")]
            half = len(ordered) // 2
            refs = [build(ordered[:half]), build(ordered[half:])]
        mem_c = np.array([centres[i] if kind == "item" else groups[i][0] for kind, i in refs])
        mem_r = np.array([radii[i] if kind == "item" else groups[i][1] for kind, i in refs])
        c = _normalise(mem_c.sum(axis=0)[None, :])[0]
        if not np.any(c):
            c = mem_c[0]
        r = float(np.max(_angle_between(np.repeat(c[None, :], len(mem_c), 0), mem_c) + mem_r))
        groups.append((c, r, refs))
        return ("group", len(groups) - 1)

    build(np.arange(len(centres)))
    return groups


def _build_type_index(vertices: list[np.ndarray], features: list[int]) -> _TypeIndex:
    """Strip trees of one type's parts, under a tree of caps when there are several."""
    t = _part_trees(vertices, features)
    table, width, roots = t["table"], t["width"], t["roots"]
    n_poly = len(width)
    n_child = t["n_child"]
    child_lists = [np.repeat(t["first_child"], n_child) + _ranges(n_child)]
    feature, normal_a, normal_b = t["feature"], t["normal_a"], t["normal_b"]
    resolvable = np.ones(n_poly, dtype=bool)
    root = int(roots[0])
    if len(roots) > 1:
        # Cap of a part: centred on its chord's middle, radius half the chord
        # plus the width (every point of the line lies within it).
        rt = table[roots]
        a = rt[:, _KA]
        b = rt[:, _KC, None] * a + rt[:, _KS, None] * rt[:, _KE]
        mid = _normalise(a + b)
        mid = np.where(np.any(mid != 0.0, axis=1)[:, None], mid, a)
        rad = np.maximum(_angle_between(mid, a), _angle_between(mid, b)) + width[roots]
        groups = _cap_tree(mid, rad)
        g_centre = np.array([g[0] for g in groups])
        g_children = [
            [int(roots[i]) if kind == "item" else n_poly + i for kind, i in g[2]] for g in groups
        ]
        table = np.concatenate([table, _chord_table(g_centre, g_centre)])
        width = np.concatenate([width, np.array([g[1] for g in groups]) * (1.0 + 1e-9) + 1e-12])
        n_child = np.concatenate([n_child, [len(c) for c in g_children]])
        child_lists.append(np.array([c for kids in g_children for c in kids], dtype=np.int64))
        n_g = len(groups)
        feature = np.concatenate([feature, np.full(n_g, -1, dtype=np.int64)])
        normal_a = np.concatenate([normal_a, np.zeros((n_g, 3))])
        normal_b = np.concatenate([normal_b, np.zeros((n_g, 3))])
        resolvable = np.concatenate([resolvable, np.zeros(n_g, dtype=bool)])
        root = n_poly + n_g - 1
    arrays = {
        "table": np.ascontiguousarray(table),
        "table_t": np.ascontiguousarray(table.T),
        "width": np.ascontiguousarray(width),
        "child_ptr": np.concatenate([[0], np.cumsum(n_child)]).astype(np.int64),
        "child_list": np.concatenate(child_lists).astype(np.int64),
        "resolvable": resolvable,
        "feature": feature.astype(np.int64),
        "normal_a": np.ascontiguousarray(normal_a),
        "normal_b": np.ascontiguousarray(normal_b),
    }
    for arr in arrays.values():
        arr.flags.writeable = False
    return _TypeIndex(root=root, n_segments=t["n_segments"], **arrays)


# ---------------------------------------------------------------------------
# Search
# ---------------------------------------------------------------------------


def _tile_frontier(
    index: _TypeIndex,
    centres: np.ndarray,
    radii: np.ndarray,
    reach_rad: float,
    rtol: float,
    atol_rad: float,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Nodes that may hold the nearest boundary point of any cell of each tile.

    Branch and bound over the strip trees, all tiles at once. For a cell
    ``P`` of a tile (centre ``c``, radius ``rho``) and a node (chord ``C``,
    width ``h``), the distance from ``P`` to the node's line lies in
    ``[d(c, C) - rho - h, d(c, C) + rho + h]``. A node is dropped when its
    lower bound exceeds the smallest upper bound of the tile (or the reach),
    kept as a final candidate when it is a segment or ``h <= max(rtol * lb,
    atol)``, and opened otherwise.

    Returns
    -------
    ptr, nodes : ndarray
        Candidates of tile ``t`` are ``nodes[ptr[t]:ptr[t + 1]]``, sorted by
        the angle from the tile centre to their chord, then by node: the
        order depends only on the tile.
    grad, level : ndarray (3, k) and (k,)
        Per candidate, a lower bound of the WGS84 distance (km) from a cell
        ``P`` of the tile to the foot on its chord: ``level + grad . (P - c)``.
    """
    n_tiles = len(centres)
    # Lambert's (1942) distance is a sigma (1 - k f) with 0 <= k <= 1 + sigma^2 / 10
    # (sigma < 0.8): an angle sigma spans at least a (1 - f_low) sigma within reach.
    f_low = _F * (1.0 + reach_rad * reach_rad / 10.0) * (1.0 + 1e-9)
    ub_tile = np.full(n_tiles, reach_rad)
    pt = np.arange(n_tiles)
    pn = np.full(n_tiles, index.root, dtype=np.int64)
    fin_t, fin_n, fin_d, fin_lb = [], [], [], []
    while pt.size:
        d = _arc_distance_rad(centres[pt], index.table[pn])
        slack = radii[pt] + index.width[pn]
        lb = d - slack
        # Pairs stay grouped by tile (sorted), so per-tile minima are reduceat.
        first = np.flatnonzero(np.concatenate([[True], pt[1:] != pt[:-1]]))
        tiles = pt[first]
        ub_tile[tiles] = np.minimum(ub_tile[tiles], np.minimum.reduceat(d + slack, first))
        keep = (1.0 - f_low) * lb <= ub_tile[pt] * (1.0 + 1e-12) + 1e-15
        n_child = index.child_ptr[pn + 1] - index.child_ptr[pn]
        resolved = index.resolvable[pn] & (
            (n_child == 0) | (index.width[pn] <= np.maximum(rtol * lb, atol_rad))
        )
        final = keep & resolved
        fin_t.append(pt[final])
        fin_n.append(pn[final])
        fin_d.append(d[final])
        fin_lb.append(lb[final])
        opened = keep & ~resolved
        pt, pn, n_child = pt[opened], pn[opened], n_child[opened]
        pn = index.child_list[np.repeat(index.child_ptr[pn], n_child) + _ranges(n_child)]
        pt = np.repeat(pt, n_child)
    t = np.concatenate(fin_t)
    n = np.concatenate(fin_n)
    d = np.concatenate(fin_d)
    lb = np.concatenate(fin_lb)
    keep = (1.0 - f_low) * lb <= ub_tile[t] * (1.0 + 1e-12) + 1e-15
    order = np.flatnonzero(keep)
    order = order[np.lexsort((n[order], d[order], t[order]))]
    t, n, d = t[order], n[order], d[order]
    ptr = np.concatenate([[0], np.cumsum(np.bincount(t, minlength=n_tiles))])
    # Linear lower bound of the chord distance over the tile: the distance to
    # a convex set is convex in the plane, so it lies above its tangent plane
    # at the centre, d(P) >= d(c) + g . (P - c), with g the unit vector away
    # from the foot. On the sphere the distance to a great circle curves down
    # by at most tan(d) r^2 / 2 over an offset r: that (doubled) is taken off.
    c = centres[t]
    foot = _foot_points(c, index.table[n])
    away = _dot(foot, c)[:, None] * c - foot
    norm = np.sqrt(_dot(away, away))
    usable = (norm > 1e-9) & (d > 1e-9)
    grad = np.where(usable[:, None], away / np.where(usable, norm, 1.0)[:, None], 0.0)
    rho = radii[t]
    # (Beyond 1.4 rad, about 8900 km, only the Lipschitz bound d(c) - rho is used.)
    usable &= d + rho < 1.4
    grad[~usable] = 0.0
    slack = rho * rho * (np.tan(np.minimum(d + rho, 1.4)) + 0.5) + 1e-12
    level = np.where(usable, d - slack, d - rho)
    # Matching upper bound, d(P) <= d(c) + g . (P - c) + q: the distance
    # bends up by at most r^2 / (2 d_min) (Hessian of a distance to a convex
    # set below 1 / distance); near the chord, Lipschitz (q = 2 rho) instead.
    far = usable & (d > 2.0 * rho)
    q = np.where(far, rho * rho / (2.0 * np.maximum(d - rho, 1e-300)), 2.0 * rho)
    q = q + rho**3 + 1e-12
    # On the ellipsoid, Lambert's (1942) distance is a sigma (1 - k f) with
    # k = (dz / |D|)^2 (sigma + sin sigma) / (2 sigma) + X / (2 sigma), D the
    # chord vector from the cell to the foot: k <= (dz / |D|)^2 + sigma^2 / 10.
    # The chord direction is that of -g to within the turn of the direction to
    # a convex set over the tile, rho / (d - rho), the transport of g from c
    # to P, rho, and half the angle, sigma / 2: this bounds dz / |D|, so that
    # lower bounds on the ellipsoid shrink by (1 - k f) rather than (1 - f).
    reach = d + rho
    turn = np.where(far, rho / np.maximum(d - rho, 1e-300) + rho + 0.5 * reach, 2.0)
    k_f = np.minimum((np.abs(grad[:, 2]) + turn) ** 2, 1.0) + reach * reach / 10.0
    shrink = 1.0 - _F * k_f
    # A candidate is dropped for the whole tile when its lower bound exceeds
    # the upper bound of one of the tile's three nearest candidates
    # everywhere in the tile (the least of (s_e g_e - g_k) . (P - c) over the
    # tile is -rho |s_e g_e - g_k|).
    count = np.diff(ptr)
    drop = np.zeros(len(n), dtype=bool)
    for j in range(3):
        has_ref = count[t] > j
        k = np.where(has_ref, ptr[t] + j, 0)
        dg = shrink[:, None] * grad - grad[k]
        spread = rho * np.sqrt(_dot(dg, dg))
        drop |= has_ref & (shrink * level - spread > d[k] + q[k] + 1e-12)
    keep = ~drop
    scale = _A_KM * shrink[keep]
    grad_km = grad[keep] * scale[:, None]
    level_km = level[keep] * scale
    t, n = t[keep], n[keep]
    ptr = np.concatenate([[0], np.cumsum(np.bincount(t, minlength=n_tiles))])
    return ptr, n, np.ascontiguousarray(grad_km.T), level_km


# ---------------------------------------------------------------------------
# Construction from a GeoDataFrame
# ---------------------------------------------------------------------------


def _feature_label(frame, row: int) -> str:
    label = frame.index[row]
    return f"feature {label!r} (row {row})" if label != row else f"feature {row}"


def _line_parts(frame) -> tuple[list[np.ndarray], list[int], int, int]:
    """Line parts (n, 2) in the frame's CRS, their feature rows, and counts of
    empty geometries dropped and invalid geometries repaired."""
    parts: list[np.ndarray] = []
    rows: list[int] = []
    n_empty = n_repaired = 0
    for row, geom in enumerate(frame.geometry.array):
        if geom is None or geom.is_empty:
            n_empty += 1
            continue
        gtype = geom.geom_type
        if gtype not in ("LineString", "MultiLineString"):
            msg = (
                f"plate boundaries: {_feature_label(frame, row)} is a {gtype}; plate boundaries "
                "must be LineString or MultiLineString. Convert polygons to their outlines "
                "(e.g. shapely.boundary) and remove points."
            )
            raise InputLayerError(msg)
        geom = shapely.force_2d(geom)
        if not np.isfinite(shapely.get_coordinates(geom)).all():
            msg = (
                f"plate boundaries: {_feature_label(frame, row)} has NaN or infinite "
                "coordinates. Fix or delete its vertices in a GIS."
            )
            raise InputLayerError(msg)
        if not shapely.is_valid(geom):
            reason = shapely.is_valid_reason(geom)
            fixed = shapely.get_parts(shapely.get_parts(shapely.make_valid(geom)))
            lines = [g for g in fixed if g.geom_type == "LineString" and not g.is_empty]
            if not lines:
                msg = (
                    f"plate boundaries: {_feature_label(frame, row)} is not a valid line "
                    f"({reason}) and cannot be repaired: it has fewer than two distinct "
                    "vertices. Delete it, or redraw it with at least two distinct vertices."
                )
                raise InputLayerError(msg)
            log.warning(
                "plate boundaries: %s was invalid (%s); repaired with shapely.make_valid",
                _feature_label(frame, row),
                reason,
            )
            n_repaired += 1
            geom = shapely.MultiLineString(lines)
        for part in shapely.get_parts(geom):
            parts.append(shapely.get_coordinates(part))
            rows.append(row)
    return parts, rows, n_empty, n_repaired


def _to_lonlat(parts: list[np.ndarray], rows: list[int], crs: CRS, max_segment_km: float, frame):
    """Densify parts in a projected source CRS, then transform them to lon/lat (EPSG:4326)."""
    if crs.is_projected:
        unit = crs.axis_info[0].unit_conversion_factor if crs.axis_info else 1.0
        step = km_to_m(max_segment_km) / (unit or 1.0)
        # Straight lines of a projected map: densified where they are straight.
        parts = [
            shapely.get_coordinates(shapely.segmentize(shapely.LineString(c), step)) for c in parts
        ]
    sizes = np.array([len(c) for c in parts])
    xy = np.concatenate(parts)
    if crs.to_epsg() == 4326:
        lon, lat = xy[:, 0].copy(), xy[:, 1].copy()
    else:
        # A pyproj Transformer is not thread-safe: it lives only in this call.
        transformer = Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
        lon, lat = transformer.transform(xy[:, 0], xy[:, 1])
        lon, lat = np.asarray(lon, dtype=float), np.asarray(lat, dtype=float)
    bad = ~(np.isfinite(lon) & np.isfinite(lat) & (np.abs(lat) <= 90.0))
    if bad.any():
        row = rows[int(np.searchsorted(np.cumsum(sizes), np.flatnonzero(bad)[0], side="right"))]
        msg = (
            f"plate boundaries: {_feature_label(frame, row)} cannot be transformed from "
            f"{crs.name!r} to longitude/latitude. Check that the layer's CRS is right."
        )
        raise LayerMismatchError(msg)
    return np.split(np.column_stack([lon, lat]), np.cumsum(sizes)[:-1])


def _densify_geodesic(lonlat: np.ndarray, max_segment_km: float) -> np.ndarray:
    """Insert points along the geodesics between vertices so no piece exceeds
    ``max_segment_km`` (``pyproj.Geod``, Karney 2013)."""
    lon0, lat0 = lonlat[:-1, 0], lonlat[:-1, 1]
    lon1, lat1 = lonlat[1:, 0], lonlat[1:, 1]
    az, _, dist = _GEOD.inv(lon0, lat0, lon1, lat1)
    pieces = np.maximum(1, np.ceil(np.asarray(dist) / km_to_m(max_segment_km))).astype(np.int64)
    if np.all(pieces == 1):
        return lonlat
    seg = np.repeat(np.arange(len(lon0)), pieces)
    k = _ranges(pieces)
    frac = k / pieces[seg]
    lon, lat, _ = _GEOD.fwd(lon0[seg], lat0[seg], np.asarray(az)[seg], np.asarray(dist)[seg] * frac)
    lon, lat = np.asarray(lon), np.asarray(lat)
    start = k == 0
    lon[start], lat[start] = lon0[seg[start]], lat0[seg[start]]
    return np.vstack([np.column_stack([lon, lat]), lonlat[-1:]])


def _check_parameters(**values: float) -> None:
    limits = {
        "max_segment_km": (0.01, 500.0),
        "tile_km": (0.1, 20000.0),
        "rtol": (1e-6, 0.01),
        "atol_km": (0.0, 10.0),
    }
    for name, value in values.items():
        lo, hi = limits[name]
        if not (isinstance(value, (int, float)) and math.isfinite(value) and lo <= value <= hi):
            msg = f"BoundarySet: {name}={value!r} is outside [{lo:g}, {hi:g}]."
            raise ParameterError(msg)


@dataclass(frozen=True, eq=False, repr=False)
class BoundarySet:
    """Plate-boundary lines prepared for :func:`boundary_fields`.

    Build it once per run with :meth:`from_frame`; it is immutable (its
    arrays are read-only) and may be shared by threads.

    Attributes
    ----------
    indexes : tuple
        Search trees of each type of :data:`geomelt.io.vectors.BOUNDARY_TYPES`
        (None for a type without lines).
    rate_mm_yr : ndarray
        ``rate_mm_yr`` of each feature (row of the input frame), mm/yr; NaN
        where not given.
    upper_side : ndarray of int8
        +1 where ``upper_plate_side`` is ``left``, -1 ``right``, 0 not given.
    n_dropped_empty, n_repaired : int
        Features with empty (or missing) geometry, dropped; and invalid
        geometries repaired with ``shapely.make_valid``.
    max_segment_km, tile_km, rtol, atol_km : float
        Densification step (km), search tile size (km) and distance tolerance
        (relative, and absolute in km); see :meth:`from_frame`.
    n_features : int
        Features with a line (``len()``).
    """

    indexes: tuple[_TypeIndex | None, ...]
    rate_mm_yr: np.ndarray
    upper_side: np.ndarray
    n_dropped_empty: int = 0
    n_repaired: int = 0
    max_segment_km: float = DEFAULT_MAX_SEGMENT_KM
    tile_km: float = DEFAULT_TILE_KM
    rtol: float = 1e-3
    atol_km: float = 0.002
    n_features: int = 0

    @classmethod
    def from_frame(
        cls,
        frame,
        *,
        max_segment_km: float = DEFAULT_MAX_SEGMENT_KM,
        tile_km: float = DEFAULT_TILE_KM,
        rtol: float = 1e-3,
        atol_km: float = 0.002,
    ) -> BoundarySet:
        """Check, densify and index plate-boundary lines.

        Parameters
        ----------
        frame : geopandas.GeoDataFrame
            Lines with ``boundary_type`` (one of
            :data:`geomelt.io.vectors.BOUNDARY_TYPES`), optional ``rate_mm_yr``
            (mm/yr) and ``upper_plate_side`` (``left``/``right`` of the
            digitised direction), in any CRS, as given by
            :func:`geomelt.io.vectors.read_plate_boundaries`. May be empty.
        max_segment_km : float
            Longest segment after densification, km. Lines are densified in
            the source CRS when it is projected (so they follow the straight
            lines drawn on that map), then along geodesics on the WGS84
            ellipsoid (``pyproj.Geod``, Karney 2013); in a geographic CRS
            each segment is taken to be a geodesic.
        tile_km : float
            Edge of the search tiles, km. Any value gives the same accuracy;
            speed is best with tiles of about 32 grid cells
            (:func:`suggest_tile_km`). Keep one value for a whole run: the
            result for a cell depends, within the tolerance, on its tile.
        rtol, atol_km : float
            Distance tolerance: the search may stop at a coarse chord when its
            error is below ``max(rtol * distance, atol_km)`` (default 0.1 %
            and 2 m, so that the error stays below 0.5 % from 0.4 km out).

        Returns
        -------
        BoundarySet

        Raises
        ------
        InputLayerError
            A missing ``boundary_type`` column, unknown types or sides,
            geometries that are not lines, non-finite coordinates, or an
            invalid line that cannot be repaired (fewer than two distinct
            vertices); the message names the feature.
        LayerMismatchError
            The frame has features but no CRS, or a vertex cannot be
            transformed to longitude/latitude.
        ParameterError
            A parameter outside its valid range.

        Notes
        -----
        Empty geometries are dropped (counted in ``n_dropped_empty``);
        invalid ones are repaired with ``shapely.make_valid`` when lines
        remain (counted in ``n_repaired``, logged); MultiLineStrings are
        split into parts that keep their feature's attributes.
        """
        _check_parameters(
            max_segment_km=max_segment_km, tile_km=tile_km, rtol=rtol, atol_km=atol_km
        )
        n_rows = len(frame)
        if n_rows and "boundary_type" not in frame.columns:
            msg = (
                "plate boundaries: no 'boundary_type' column. Add it with one of: "
                f"{', '.join(BOUNDARY_TYPES)}."
            )
            raise InputLayerError(msg)
        types = (
            frame["boundary_type"].astype("string").str.strip().str.lower()
            if n_rows
            else pd.Series([], dtype="string")
        )
        bad = sorted({str(t) for t in types[~types.isin(BOUNDARY_TYPES)].fillna("<empty>")})
        if bad:
            msg = (
                f"plate boundaries: unknown boundary_type value(s) {', '.join(bad)}. "
                f"Allowed: {', '.join(BOUNDARY_TYPES)}."
            )
            raise InputLayerError(msg)
        if "rate_mm_yr" in frame.columns:
            rate = pd.to_numeric(frame["rate_mm_yr"], errors="coerce").to_numpy(float)
        else:
            rate = np.full(n_rows, np.nan)
        upper = np.zeros(n_rows, dtype=np.int8)
        if "upper_plate_side" in frame.columns:
            side = frame["upper_plate_side"].astype("string").str.strip().str.lower()
            if (side.notna() & ~side.isin(UPPER_PLATE_SIDES)).any():
                msg = (
                    "plate boundaries: upper_plate_side must be 'left' or 'right' (side of the "
                    "overriding plate relative to the line's digitised direction) or empty."
                )
                raise InputLayerError(msg)
            upper[(side == "left").fillna(False).to_numpy(bool)] = 1
            upper[(side == "right").fillna(False).to_numpy(bool)] = -1
        parts, rows, n_empty, n_repaired = _line_parts(frame) if n_rows else ([], [], 0, 0)
        if n_empty:
            log.info("plate boundaries: %d feature(s) with empty geometry dropped", n_empty)
        if parts and frame.crs is None:
            msg = (
                "plate boundaries: the layer has no coordinate reference system. Assign one in "
                "your GIS (or with ogr2ogr -a_srs EPSG:XXXX) and run again."
            )
            raise LayerMismatchError(msg)
        vertices: dict[str, list[np.ndarray]] = {t: [] for t in BOUNDARY_TYPES}
        features: dict[str, list[int]] = {t: [] for t in BOUNDARY_TYPES}
        if parts:
            lonlat = _to_lonlat(parts, rows, CRS.from_user_input(frame.crs), max_segment_km, frame)
            for coords, row in zip(lonlat, rows, strict=True):
                dense = _densify_geodesic(coords, max_segment_km)
                v = _aux_unit_vectors(dense[:, 0], dense[:, 1])
                keep = np.ones(len(v), dtype=bool)
                keep[1:] = _angle_between(v[1:], v[:-1]) > 1e-9  # ~6 mm
                v = v[keep]
                if len(v) < 2:
                    msg = (
                        f"plate boundaries: {_feature_label(frame, row)} has zero length on the "
                        "ellipsoid. Delete it or give it two distinct vertices."
                    )
                    raise InputLayerError(msg)
                btype = str(types.iloc[row])
                vertices[btype].append(v)
                features[btype].append(row)
        indexes = tuple(
            _build_type_index(vertices[t], features[t]) if vertices[t] else None
            for t in BOUNDARY_TYPES
        )
        rate.flags.writeable = False
        upper.flags.writeable = False
        result = cls(
            indexes=indexes,
            rate_mm_yr=rate,
            upper_side=upper,
            n_dropped_empty=n_empty,
            n_repaired=n_repaired,
            max_segment_km=float(max_segment_km),
            tile_km=float(tile_km),
            rtol=float(rtol),
            atol_km=float(atol_km),
            n_features=len(set(rows)),
        )
        log.info("plate boundaries: %r", result)
        return result

    @property
    def n_segments(self) -> int:
        """Number of segments after densification."""
        return sum(ix.n_segments for ix in self.indexes if ix is not None)

    def __len__(self) -> int:
        """Number of features with a line."""
        return self.n_features

    def __repr__(self) -> str:
        per_type = ", ".join(
            f"{t}: {ix.n_segments}"
            for t, ix in zip(BOUNDARY_TYPES, self.indexes, strict=True)
            if ix
        )
        return (
            f"BoundarySet({self.n_features} feature(s), segments per type {{{per_type}}}, "
            f"{self.n_dropped_empty} empty dropped, {self.n_repaired} repaired, "
            f"max_segment_km={self.max_segment_km:g}, tile_km={self.tile_km:g})"
        )


# ---------------------------------------------------------------------------
# Per-cell fields
# ---------------------------------------------------------------------------


def boundary_fields(
    boundaries: BoundarySet,
    lon_deg: np.ndarray,
    lat_deg: np.ndarray,
    max_distance_km: float = DEFAULT_MAX_DISTANCE_KM,
) -> dict[str, np.ndarray]:
    """Distances to, rates of and sides of the nearest plate boundaries, per cell.

    Parameters
    ----------
    boundaries : BoundarySet
        Lines prepared once with :meth:`BoundarySet.from_frame`.
    lon_deg, lat_deg : ndarray
        Cell-centre longitude and latitude, degrees (WGS84), same shape
        (typically a window of :meth:`geomelt.io.rasters.RasterGrid.lonlat`).
        Non-finite cells give nodata.
    max_distance_km : float
        Reach, km, up to 5000: boundaries farther than this count as absent
        (NaN).

    Returns
    -------
    dict of str to ndarray
        Arrays of the input shape, listed in :data:`BOUNDARY_FIELDS`:

        - ``distance_to_<type>_km`` (float32, km) for each type of
          :data:`geomelt.io.vectors.BOUNDARY_TYPES`: geodesic distance on the
          WGS84 ellipsoid to the nearest line of that type; NaN where none
          lies within ``max_distance_km``.
        - ``<type>_rate_mm_yr`` (float32, mm/yr): ``rate_mm_yr`` of that
          nearest line; NaN where none within reach or not given.
        - ``subduction_side``, ``collision_side`` (float32): +1 on the
          upper-plate side of the nearest such line, -1 on the lower-plate
          side, 0 where its ``upper_plate_side`` is not given (or the cell is
          on the line), NaN where none within reach.
        - ``nearest_<type>_feature`` (int32): row of the input frame of that
          nearest line; :data:`NO_FEATURE` (-1) where none within reach.
        - ``distance_to_boundary_km`` (float32, km): nearest of any type.
        - ``nearest_boundary_type`` (uint8): index of that type in
          ``BOUNDARY_TYPES``; :data:`NO_BOUNDARY_CODE` (255) where none.

    Raises
    ------
    ValueError
        Shapes differ, or ``max_distance_km`` is not in (0, 5000].

    Notes
    -----
    The side is the sign of the cross product of the line's local direction
    (as digitised) and the vector from the line to the cell, in the plane
    tangent at the foot of the perpendicular: positive when the cell lies to
    the left of a walker following the line. Where the foot is a vertex, the
    vertex pseudo-normal decides (Bærentzen & Aanæs 2005); beyond the ends of
    a line, its end segment is extended.

    Accuracy: within ``max(rtol * d, atol_km)`` of the geodesic distance
    (Karney 2013) plus the 1e-6 error of Lambert's (1942) formula; see the
    module docstring. The result for a cell does not depend on the window it
    is computed in. The function only reads ``boundaries`` and is safe to
    call from several threads at once.

    Examples
    --------
    >>> import geopandas as gpd
    >>> from shapely.geometry import LineString
    >>> lines = gpd.GeoDataFrame(
    ...     {"boundary_type": ["ridge"], "rate_mm_yr": [40.0]},
    ...     geometry=[LineString([(0, -5), (0, 5)])], crs="EPSG:4326")
    >>> out = boundary_fields(BoundarySet.from_frame(lines), np.array([1.0]), np.array([0.0]))
    >>> round(float(out["distance_to_ridge_km"][0]), 1), float(out["ridge_rate_mm_yr"][0])
    (111.3, 40.0)
    """
    lon = np.asarray(lon_deg, dtype=np.float64)
    lat = np.asarray(lat_deg, dtype=np.float64)
    if lon.shape != lat.shape:
        msg = f"boundary_fields: lon_deg {lon.shape} and lat_deg {lat.shape} differ in shape."
        raise ValueError(msg)
    if not (0 < max_distance_km <= _MAX_REACH_KM):
        msg = (
            f"boundary_fields: max_distance_km must be in (0, {_MAX_REACH_KM:g}] km, got "
            f"{max_distance_km!r}."
        )
        raise ValueError(msg)
    shape = lon.shape
    out = {
        name: np.full(shape, spec.nodata, dtype=spec.dtype)
        for name, spec in BOUNDARY_FIELDS.items()
    }
    flat = {name: arr.reshape(-1) for name, arr in out.items()}
    lon_f, lat_f = lon.reshape(-1), lat.reshape(-1)
    # Candidates are kept while a (1 - f) times their angle may be within reach.
    reach_rad = max_distance_km / _A_KM * (1.0 + 1e-9)
    atol_rad = boundaries.atol_km / _A_KM
    n_face = _tiles_per_face(boundaries.tile_km)
    for lo in range(0, lon_f.size, _CHUNK_CELLS):
        hi = min(lo + _CHUNK_CELLS, lon_f.size)
        clon, clat = lon_f[lo:hi], lat_f[lo:hi]
        cells = np.flatnonzero(np.isfinite(clon) & np.isfinite(clat) & (np.abs(clat) <= 90.0))
        if cells.size == 0:
            continue
        pc = aux_sphere_components(clon[cells], clat[cells])
        tiles, cell_tile = np.unique(_tile_ids(pc, n_face), return_inverse=True)
        cell_tile = cell_tile.reshape(-1)
        centres, radii = _tile_caps(tiles, n_face)
        offset = pc - centres.T[:, cell_tile]
        target = lo + cells
        nearest = np.full(cells.size, np.inf)
        for code, (btype, index) in enumerate(zip(BOUNDARY_TYPES, boundaries.indexes, strict=True)):
            if index is None:
                continue
            ptr, nodes, grad, level = _tile_frontier(
                index, centres, radii, reach_rad, boundaries.rtol, atol_rad
            )
            side = f"{btype}_side"
            nearest_line_of_type(
                pc,
                offset,
                cell_tile,
                target,
                ptr,
                nodes,
                grad,
                level,
                index.table_t,
                index.feature,
                index.normal_a,
                index.normal_b,
                boundaries.rate_mm_yr,
                boundaries.upper_side,
                btype in SIDE_TYPES,
                float(max_distance_km),
                code,
                _A_KM,
                _F,
                flat[f"distance_to_{btype}_km"],
                flat[f"{btype}_rate_mm_yr"],
                flat[f"nearest_{btype}_feature"],
                flat.get(side, _NO_SIDE),
                nearest,
                flat["nearest_boundary_type"],
            )
        found = np.isfinite(nearest)
        flat["distance_to_boundary_km"][target[found]] = nearest[found]
    return out
