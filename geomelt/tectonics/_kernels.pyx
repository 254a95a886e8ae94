# cython: language_level=3, boundscheck=False, wraparound=False, cdivision=True
# cython: initializedcheck=False
"""Compiled per-cell kernels of the plate-boundary search (Cython, without the GIL).

:func:`geomelt.tectonics.boundaries.boundary_fields` prepares, per block of
cells, the candidate chords of every search tile with numpy (a few calls per
tile); the per-cell part - the nearest candidate of each cell by its distance
on the ellipsoid, its attributes and its side - runs here, one cell at a time,
in C that releases Python's global interpreter lock, so that the pipeline's
worker threads compute at the same time.

The formulas are those documented in :mod:`geomelt.tectonics.boundaries`
(Lambert 1942 on the auxiliary sphere, Karney 2013; the angle-weighted
pseudo-normal of Bærentzen & Aanæs 2005 for the side). Each cell is computed
on its own, so it gets the same bits whatever block or window holds it.
"""

from libc.math cimport INFINITY, NAN, asin, sqrt
from libc.stdint cimport int8_t, int32_t, int64_t, uint8_t

# Columns of the chord kernel table (boundaries._chord_table), one row each in the
# transposed table: left unit normal (0:3), chord start A (3:6), unit tangent at A
# towards B (6:9), cos and sin of the chord's angle (9, 10).


cdef inline double _lambert_km(
    double half_chord2, double z1, double z2, double a_km, double flattening
) noexcept nogil:
    """Lambert's (1942) WGS84 distance, km; see boundaries.lambert_distance_km."""
    cdef double h2 = min(max(half_chord2, 0.0), 1.0)
    cdef double sin_half = sqrt(h2)
    cdef double cos2_half = 1.0 - h2
    cdef double sigma = 2.0 * asin(sin_half)
    cdef double sin_sigma = 2.0 * sin_half * sqrt(cos2_half)
    cdef double mean_z = 0.5 * (z1 + z2)
    cdef double half_dz = 0.5 * (z2 - z1)
    cdef double x_term = (sigma - sin_sigma) * (mean_z * mean_z) / max(cos2_half, 1e-300)
    cdef double y_term = (sigma + sin_sigma) * (half_dz * half_dz) / (h2 if h2 > 0.0 else 1.0)
    return a_km * (sigma - 0.5 * flattening * (x_term + y_term))


def lambert_many_km(
    const double[::1] half_chord2,
    const double[::1] z1,
    const double[::1] z2,
    double a_km,
    double flattening,
    double[::1] out,
):
    """Lambert's (1942) distance, km, over flat float64 arrays of one length, into ``out``."""
    cdef Py_ssize_t i
    with nogil:
        for i in range(out.shape[0]):
            out[i] = _lambert_km(half_chord2[i], z1[i], z2[i], a_km, flattening)


cdef inline double _chord_km(
    double x0, double y0, double z0, const double[:, ::1] tt, int64_t k,
    double a_km, double flattening,
) noexcept nogil:
    """WGS84 distance, km, from a cell on the auxiliary sphere to the foot on chord ``k``.

    The foot of the perpendicular lies on the arc when the cell is inside the
    wedge bounded by the planes through the chord's pole and each end; it is
    otherwise the nearer end.
    """
    cdef double nz = tt[2, k]
    cdef double az = tt[5, k]
    cdef double ez = tt[8, k]
    cdef double s = x0 * tt[0, k] + y0 * tt[1, k] + z0 * nz
    cdef double x = x0 * tt[3, k] + y0 * tt[4, k] + z0 * az
    cdef double y = x0 * tt[6, k] + y0 * tt[7, k] + z0 * ez
    cdef double c = tt[9, k]
    cdef double sn = tt[10, k]
    cdef double pb = c * x + sn * y
    cdef double r, half_chord2, z_foot
    if y > 0.0 and sn * x - c * y > 0.0:
        r = sqrt(max(1.0 - s * s, 0.0))
        # sin^2(sigma / 2) to the foot, exact inside the arc; sin(beta) of the foot
        half_chord2 = 0.5 * s * s / (1.0 + r)
        z_foot = (z0 - s * nz) / max(r, 1e-300)
    else:
        # from the cosine to the nearer end (to ~1e-8 rad there)
        half_chord2 = 0.5 - 0.5 * max(x, pb)
        z_foot = az if x >= pb else c * az + sn * ez
    return _lambert_km(half_chord2, z0, z_foot, a_km, flattening)


cdef inline double _left_of_chord(
    double x0, double y0, double z0, const double[:, ::1] tt,
    const double[:, ::1] normal_a, const double[:, ::1] normal_b, int64_t k,
) noexcept nogil:
    """``p . n`` with the chord's left normal, or with the nearer end's pseudo-normal.

    Positive when the cell lies left of the line walking as digitised
    (Bærentzen & Aanæs 2005 at vertices).
    """
    cdef double s = x0 * tt[0, k] + y0 * tt[1, k] + z0 * tt[2, k]
    cdef double x = x0 * tt[3, k] + y0 * tt[4, k] + z0 * tt[5, k]
    cdef double y = x0 * tt[6, k] + y0 * tt[7, k] + z0 * tt[8, k]
    cdef double c = tt[9, k]
    cdef double sn = tt[10, k]
    if y > 0.0 and sn * x - c * y > 0.0:
        return s
    if x >= c * x + sn * y:
        return x0 * normal_a[k, 0] + y0 * normal_a[k, 1] + z0 * normal_a[k, 2]
    return x0 * normal_b[k, 0] + y0 * normal_b[k, 1] + z0 * normal_b[k, 2]


def nearest_line_of_type(
    const double[:, ::1] pc,
    const double[:, ::1] offset,
    const int64_t[::1] cell_tile,
    const int64_t[::1] target,
    const int64_t[::1] ptr,
    const int64_t[::1] nodes,
    const double[:, ::1] grad,
    const double[::1] level,
    const double[:, ::1] tt,
    const int64_t[::1] node_feature,
    const double[:, ::1] normal_a,
    const double[:, ::1] normal_b,
    const double[::1] rate_by_feature,
    const int8_t[::1] side_by_feature,
    bint with_side,
    double max_km,
    uint8_t code,
    double a_km,
    double flattening,
    float[::1] out_km,
    float[::1] out_rate,
    int32_t[::1] out_feature,
    float[::1] out_side,
    double[::1] nearest_km,
    uint8_t[::1] nearest_code,
):
    """Nearest line of one boundary type for each cell, written into the outputs.

    Parameters
    ----------
    pc, offset : ndarray (3, n)
        Cells on the auxiliary sphere and their offset from their tile's centre.
    cell_tile : ndarray (n,)
        Tile of each cell (index into ``ptr``).
    target : ndarray (n,)
        Position of each cell in the flat output arrays.
    ptr, nodes, grad, level :
        Candidates of tile ``t`` are ``nodes[ptr[t]:ptr[t + 1]]``, nearest to
        the tile first, with the linear lower bound ``level + grad . offset``
        of their distance, km (``boundaries._tile_frontier``).
    tt, node_feature, normal_a, normal_b :
        The type's chord table (11, m), feature row of each node and side
        pseudo-normals at the chord ends.
    rate_by_feature, side_by_feature :
        ``rate_mm_yr`` and upper-plate side (+1, -1, 0) of each feature.
    with_side : bool
        Write ``out_side`` (subduction and collision lines).
    max_km : float
        Reach: a nearest line farther than this counts as absent.
    code : int
        This type's code, written to ``nearest_code`` where it is the nearest
        of the types searched so far (a tie keeps the earlier type).
    a_km, flattening : float
        Ellipsoid (WGS84) semi-major axis, km, and flattening.
    out_km, out_rate, out_feature, out_side :
        Flat outputs (float32, float32, int32, float32), left unchanged
        where no line lies within reach.
    nearest_km : ndarray (n,)
        Per cell, nearest distance of any type so far, km (updated).
    nearest_code : ndarray
        Flat output of the nearest type (updated at ``target``).

    Notes
    -----
    Candidates come nearest-to-the-tile first and a tie keeps the first, so
    the answer depends only on the cell and its tile. A candidate is skipped
    when its lower bound exceeds the best distance found by more than 1 m
    (a margin for rounding); a skipped candidate cannot be nearer.
    """
    cdef Py_ssize_t i, j, e, first, last
    cdef int64_t t, k, best, feature
    cdef double x0, y0, z0, best_km, d, lower, left, sign
    with nogil:
        for i in range(target.shape[0]):
            x0 = pc[0, i]
            y0 = pc[1, i]
            z0 = pc[2, i]
            t = cell_tile[i]
            first = ptr[t]
            last = ptr[t + 1]
            best_km = INFINITY
            best = -1
            for e in range(first, last):
                if e > first:
                    lower = level[e] + grad[0, e] * offset[0, i]
                    lower += grad[1, e] * offset[1, i]
                    lower += grad[2, e] * offset[2, i]
                    if lower > best_km + 1e-3:
                        continue
                k = nodes[e]
                d = _chord_km(x0, y0, z0, tt, k, a_km, flattening)
                if d < best_km:
                    best_km = d
                    best = k
            if best < 0 or not best_km <= max_km:
                continue
            j = target[i]
            feature = node_feature[best]
            out_km[j] = <float>best_km
            out_rate[j] = <float>rate_by_feature[feature]
            out_feature[j] = <int32_t>feature
            if with_side:
                left = _left_of_chord(x0, y0, z0, tt, normal_a, normal_b, best)
                if left > 0.0:
                    sign = 1.0
                elif left < 0.0:
                    sign = -1.0
                elif left == 0.0:
                    sign = 0.0
                else:
                    sign = NAN
                out_side[j] = <float>(side_by_feature[feature] * sign)
            if best_km < nearest_km[i]:
                nearest_km[i] = best_km
                nearest_code[j] = code
