# cython: language_level=3, boundscheck=False, wraparound=False, cdivision=True
# cython: initializedcheck=False
"""Compiled per-cell kernels of the physics layer (Cython, without the GIL).

Only the per-cell step of a table lookup lives here: locating a cell on the
table's uniform axes and interpolating (trilinear over potential temperature,
water^gamma and depth; bilinear for the solidus depth), one cell at a time,
so each cell gets the same bits whatever block it is computed in. The tables
themselves, and every equation, stay in the module that documents them
(:class:`geomelt.physics.decompression.MeltingTable`); the interpolation is
tested against SciPy's ``RegularGridInterpolator``.
"""

from libc.math cimport NAN, isnan

# Rows of the ``axes`` array given to melting_table_lookup: potential temperature and
# water^gamma of the melting table, depth, then potential temperature and water^gamma of
# the solidus table. Columns: first node, spacing, index of the last cell, index of the
# last node (both as floats).
cdef enum:
    _START = 0
    _STEP = 1
    _LAST = 2
    _SPAN = 3


cdef inline Py_ssize_t _locate(
    double value, const double[:, ::1] axes, int row, double* fraction, bint* outside
) noexcept nogil:
    """Cell index and fraction of ``value`` on a uniform axis; outside values (and NaN)
    get index 0 and fraction 0 (masked by the caller)."""
    cdef double x = (value - axes[row, _START]) / axes[row, _STEP]
    cdef double span = axes[row, _SPAN]
    cdef Py_ssize_t i
    outside[0] = not (x >= -1.0e-9 and x <= span + 1.0e-9)
    if outside[0] or isnan(x):
        x = 0.0
    else:
        x = min(max(x, 0.0), span)
    i = min(<Py_ssize_t>x, <Py_ssize_t>axes[row, _LAST])
    fraction[0] = x - i
    return i


cdef inline double _trilinear(
    const float[::1] values, Py_ssize_t base, Py_ssize_t stride_x, Py_ssize_t stride_y,
    double fx, double fy, double fz,
) noexcept nogil:
    """Trilinear interpolation on a flattened 3-D grid at flat corner index ``base``."""
    cdef double gz = 1.0 - fz
    cdef double gx = 1.0 - fx
    cdef double gy = 1.0 - fy
    cdef Py_ssize_t idx = base
    cdef double out = (values[idx] * gz + values[idx + 1] * fz) * (gx * gy)
    idx = base + stride_y
    out = out + (values[idx] * gz + values[idx + 1] * fz) * (gx * fy)
    idx = base + stride_x
    out = out + (values[idx] * gz + values[idx + 1] * fz) * (fx * gy)
    idx = base + (stride_x + stride_y)
    return out + (values[idx] * gz + values[idx + 1] * fz) * (fx * fy)


cdef inline double _bilinear(
    const double[::1] values, Py_ssize_t base, Py_ssize_t stride_x, double fx, double fy
) noexcept nogil:
    """Bilinear interpolation on a flattened 2-D grid at flat corner index ``base``."""
    cdef double gx = 1.0 - fx
    cdef double gy = 1.0 - fy
    return (values[base] * gx + values[base + stride_x] * fx) * gy + (
        values[base + 1] * gx + values[base + stride_x + 1] * fx
    ) * fy


def melting_table_lookup(
    const double[::1] tp,
    const double[::1] w,
    const double[::1] u,
    const double[::1] lid,
    const double[:, ::1] axes,
    double depth_last,
    const float[::1] fmax,
    const float[::1] thickness,
    const double[::1] solidus,
    Py_ssize_t nw,
    Py_ssize_t nz,
    Py_ssize_t nws,
    double[::1] out_solidus,
    double[::1] out_f,
    double[::1] out_h,
):
    """Per-cell interpolation of :class:`~geomelt.physics.decompression.MeltingTable`.

    Parameters
    ----------
    tp, w, u, lid : ndarray (n,)
        Potential temperature (degC), bulk water (wt%), water^gamma and lid
        depth (km) of each cell.
    axes : ndarray (5, 4)
        Uniform axes (see the row and column constants of this module).
    depth_last : float
        Deepest node of the melting table, km.
    fmax, thickness : ndarray of float32
        Flattened tables of the largest melt fraction and the melt thickness
        (km) over (T_p, water^gamma, depth).
    solidus : ndarray
        Flattened table of the solidus depth (km) over (T_p, water^gamma).
    nw, nz, nws : int
        Water and depth nodes of the melting table, water nodes of the
        solidus table.
    out_solidus, out_f, out_h : ndarray (n,)
        Filled with the solidus depth, largest melt fraction and melt
        thickness (NaN where invalid; see ``MeltingTable.lookup``).

    Returns
    -------
    int
        Cells outside the table (not counting NaN inputs).
    """
    cdef Py_ssize_t i, ix, iy, iz, jx, jy, base
    cdef double t, uu, z, fx, fy, fz, gx, gy, f, h, zs
    cdef bint nan_in, bad, invalid, deep, lost, bad_x, bad_y, unused
    cdef Py_ssize_t n_bad = 0
    with nogil:
        for i in range(tp.shape[0]):
            t = tp[i]
            uu = u[i]
            z = lid[i]
            nan_in = isnan(t) or isnan(w[i]) or isnan(z)
            bad = not (z >= 0.0) and not nan_in
            ix = _locate(t, axes, 0, &fx, &bad_x)
            iy = _locate(uu, axes, 1, &fy, &bad_y)
            if (bad_x or bad_y) and not nan_in:
                bad = True
            invalid = bad or nan_in
            deep = z > depth_last
            iz = _locate(0.0 if invalid else min(z, depth_last), axes, 2, &fz, &unused)
            base = (ix * nw + iy) * nz + iz
            f = _trilinear(fmax, base, nw * nz, nz, fx, fy, fz)
            h = _trilinear(thickness, base, nw * nz, nz, fx, fy, fz)
            # a lid below the table is only meaningful where the columns have stopped melting
            lost = deep and not invalid and f > 0.0
            if lost:
                bad = True
                invalid = True
            jx = _locate(t, axes, 3, &gx, &unused)
            jy = _locate(uu, axes, 4, &gy, &unused)
            zs = _bilinear(solidus, jx * nws + jy, nws, gx, gy)
            out_f[i] = NAN if invalid else f
            out_h[i] = NAN if invalid else h
            out_solidus[i] = NAN if invalid and not lost else zs
            if bad:
                n_bad += 1
    return n_bad
