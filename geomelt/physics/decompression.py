"""Decompression melting of upwelling mantle: isentropic melting columns and their table.

Mantle rising beneath a ridge, a rift or a plume follows its isentrope. While
solid it follows the solid adiabat

.. math:: T = T_p \\exp\\left(\\frac{\\alpha_s P}{\\rho_s c_P}\\right)  \\quad (T \\text{ in K}),

which is the potential temperature T_p projected down. Once it crosses the (dry
or hydrous) solidus it melts, and the heat of fusion cools it faster than the
adiabat. With entropy :math:`S = S_s + F \\Delta S` conserved (McKenzie 1984;
Katz et al. 2003, section 5) the path obeys

.. math:: \\left.\\frac{dT}{dP}\\right|_S = \\frac{\\bar\\alpha T / \\bar\\rho
          - T \\Delta S (\\partial F / \\partial P)_T}
          {c_P + T \\Delta S (\\partial F / \\partial T)_P},
          \\qquad \\frac{\\bar\\alpha}{\\bar\\rho} = F\\frac{\\alpha_f}{\\rho_f}
          + (1 - F)\\frac{\\alpha_s}{\\rho_s},

with F the batch melt fraction of Katz et al. (2003) (:mod:`geomelt.physics.peridotite`).
Melting stops at the base of the lid (lithosphere). The column melt thickness is
the McKenzie & Bickle (1988) integral

.. math:: h = \\int_{z_{lid}}^{z_{sol}} F(z)\\, dz

(optionally times :math:`\\rho_s / \\rho_f` to turn it into a thickness of melt).

Two routes give the same numbers:

* :func:`melting_column` integrates the equation above for one column with
  ``scipy.integrate.solve_ivp`` (partial derivatives of F taken analytically, branch
  by branch, see :func:`isentropic_gradient_k_gpa`). It is the reference.
* :class:`MeltingTable` precomputes, once per run, F(z) and the cumulative melt
  thickness on a depth grid for a grid of potential temperatures and water contents,
  and :meth:`MeltingTable.lookup` interpolates per cell (vectorised; millions of
  cells per second). The table integrates the same equation in its exact integral
  form: with dS = 0 the equation above is
  :math:`d(c_P \\ln T + \\Delta S F) = (\\bar\\alpha/\\bar\\rho)\\, dP`, so along the path

  .. math:: T(P) = T_{ad}(P) \\exp\\left(-\\frac{\\Delta S F(P) + \\left(\\frac{\\alpha_f}
            {\\rho_f} - \\frac{\\alpha_s}{\\rho_s}\\right)\\int_P^{P_{sol}} F\\, dP'}{c_P}\\right)

  and, at each depth, F is the root of the batch-melting condition with that T,
  which needs no derivatives of F and is exact at the kink where cpx is exhausted.

A column starts where the solid adiabat, followed up from depth, first meets the
wet solidus; if it is already above the solidus at the bottom of the column
(very hot or wet mantle), it starts there partially molten with the entropy of
the solid adiabat, and its solidus depth is reported as NaN.

Pressure is lithostatic with the solid density: :math:`P = \\rho_s g z` with
rho_s = 3300 kg m^-3 and g = 9.81 m s^-2 (1 GPa = 30.9 km).

Conventions: depth in km (positive down), pressure GPa, temperature degC,
water wt% (bulk, of the mantle source), melt fraction 0-1, thicknesses km.

References
----------
Katz, R. F., Spiegelman, M. & Langmuir, C. H. (2003). A new parameterization of
hydrous mantle melting. Geochem. Geophys. Geosyst. 4(9), 1073.

McKenzie, D. (1984). The generation and compaction of partially molten rock.
J. Petrol. 25, 713-765 (volume and pages from memory).

McKenzie, D. & Bickle, M. J. (1988). The volume and composition of melt generated
by extension of the lithosphere. J. Petrol. 29, 625-679.
"""

from __future__ import annotations

import dataclasses
import warnings

import numpy as np

from geomelt import constants as C
from geomelt import units
from geomelt.errors import OutsideCalibrationWarning
from geomelt.parameters import MantleMeltingParameters
from geomelt.physics._kernels import melting_table_lookup
from geomelt.physics.peridotite import (
    CALIBRATION_MAX_PRESSURE_GPA,
    _bisect_melt_fraction,
    _depression,
    _DryParts,
    _hydrous_partials,
    _solidus,
    _water_saturation,
)

__all__ = [
    "MeltingColumn",
    "MeltingTable",
    "depth_from_pressure_km",
    "isentropic_gradient_k_gpa",
    "lithostatic_pressure_gpa",
    "melting_column",
    "solid_adiabat_temperature_c",
]

_ALPHA_S = C.SOLID_MANTLE_EXPANSIVITY_PER_K.value
_ALPHA_F = C.MANTLE_MELT_EXPANSIVITY_PER_K.value
_RHO_S = C.SOLID_MANTLE_DENSITY_KG_M3.value
_RHO_F = C.MANTLE_MELT_DENSITY_KG_M3.value
_CP = C.MANTLE_HEAT_CAPACITY_J_KG_K.value
_DS = C.ENTROPY_OF_FUSION_J_KG_K.value
_GRAVITY = C.GRAVITY_M_S2.value

_PA_PER_GPA = units.PA_PER_GPA
_GPA_PER_KM = _RHO_S * _GRAVITY * units.km_to_m(1.0) / _PA_PER_GPA  # 0.03237 GPa per km
# alpha/rho of solid and melt times 1e9 Pa/GPa, in J kg^-1 K^-1 GPa^-1
_AS_GPA = _ALPHA_S / _RHO_S * _PA_PER_GPA
_AF_GPA = _ALPHA_F / _RHO_F * _PA_PER_GPA

_TABLE_ITERATIONS = 36  # bisection steps per table node: F within 1e-11
_REFERENCE_ITERATIONS = 50  # bisection steps in the reference integration: F within 1e-15
_CROSSING_ITERATIONS = 40  # bisection steps for the solidus depth: 1 km / 2^40
_SOLIDUS_SCAN_COLUMNS = 4096  # solidus crossings found this many columns at a time (the
# 80,661 columns of the default refined grid at once took ~130 MiB of temporaries)
_SURFACE_NODES = 36  # extra table nodes above the first depth step, spaced by a ratio of
_SURFACE_RATIO = 1.2  # 1.2 down to 1.4 m below the surface (for 1-km steps)


def _as_float64(*values):
    return np.broadcast_arrays(*(np.asarray(v, dtype=np.float64) for v in values))


def _scalar_if_0d(values):
    return np.asarray(values)[()]


# --------------------------------------------------------------------------------------
# pressure, depth and the solid adiabat
# --------------------------------------------------------------------------------------
def lithostatic_pressure_gpa(depth_km):
    """Lithostatic pressure of a mantle column, P = rho_s g z.

    Parameters
    ----------
    depth_km : array_like
        Depth below the surface, km.

    Returns
    -------
    pressure_gpa : ndarray
        Pressure, GPa (rho_s = 3300 kg m^-3, g = 9.81 m s^-2).

    Examples
    --------
    >>> print(f"{float(lithostatic_pressure_gpa(100.0)):.3f}")
    3.237
    """
    (z,) = _as_float64(depth_km)
    return _scalar_if_0d(z * _GPA_PER_KM)


def depth_from_pressure_km(pressure_gpa):
    """Depth of a lithostatic pressure, z = P / (rho_s g).

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa.

    Returns
    -------
    depth_km : ndarray
        Depth, km.

    Examples
    --------
    >>> print(f"{float(depth_from_pressure_km(1.0)):.1f}")
    30.9
    """
    (p,) = _as_float64(pressure_gpa)
    return _scalar_if_0d(p / _GPA_PER_KM)


def _adiabat_k(tp_k, p_gpa):
    return tp_k * np.exp(_AS_GPA * p_gpa / _CP)


def solid_adiabat_temperature_c(pressure_gpa, potential_temperature_c):
    """Temperature of solid mantle on the isentrope of potential temperature T_p.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa.
    potential_temperature_c : array_like
        Mantle potential temperature T_p, degC.

    Returns
    -------
    temperature_c : ndarray
        T = T_p exp(alpha_s P / (rho_s c_P)) with temperatures in K, returned in degC.

    Notes
    -----
    Integral of :math:`dT/dP = \\alpha_s T / (\\rho_s c_P)` for constant alpha_s = 4e-5
    K^-1, rho_s = 3300 kg m^-3 and c_P = 1000 J kg^-1 K^-1 (Katz et al. 2003, Table 2):
    19.7 K GPa^-1 (0.64 K km^-1) near the surface for T_p = 1350 degC.

    Examples
    --------
    >>> print(f"{float(solid_adiabat_temperature_c(1.0, 1350.0)):.1f}")
    1369.8
    """
    p, tp = _as_float64(pressure_gpa, potential_temperature_c)
    return _scalar_if_0d(units.k_to_c(_adiabat_k(units.c_to_k(tp), p)))


def isentropic_gradient_k_gpa(
    pressure_gpa,
    temperature_c,
    water_bulk_wt_pct=0.0,
    cpx_mass_fraction=C.CPX_MASS_FRACTION.value,
    water_partition_coefficient=C.WATER_PARTITION_COEFFICIENT.value,
    *,
    iterations=_REFERENCE_ITERATIONS,
):
    """Temperature change with pressure of partially molten mantle at constant entropy.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa.
    temperature_c : array_like
        Temperature, degC.
    water_bulk_wt_pct : array_like, optional
        Bulk water, wt%. Default 0.
    cpx_mass_fraction : float, optional
        Modal cpx of the source M_cpx. Default 0.17.
    water_partition_coefficient : float, optional
        Bulk partition coefficient of water D. Default 0.01.
    iterations : int, optional
        Bisection steps for the hydrous melt fraction (default 50: machine precision).

    Returns
    -------
    gradient_k_gpa : ndarray
        dT/dP at constant entropy, K GPa^-1 (positive: T falls as P falls).

    Notes
    -----
    .. math:: \\frac{dT}{dP} = \\frac{\\bar\\alpha T/\\bar\\rho - T \\Delta S
              (\\partial F/\\partial P)_T}{c_P + T \\Delta S (\\partial F/\\partial T)_P}

    (McKenzie 1984; Katz et al. 2003, section 5), T in K. F is the batch melt fraction
    (Katz et al. 2003, eq. 19). Its partial derivatives are taken analytically, branch by
    branch of eqs. 2-9, and through the water terms (eqs. 16-18) by implicit
    differentiation. Difference quotients are not used because F has a kink where cpx
    is exhausted: a central difference straddling it blends the two branches and lets an
    integrator stick to the kink, losing entropy. In solid mantle F = 0 and the
    gradient is that of the solid adiabat.

    Examples
    --------
    Solid mantle at 4 GPa on the T_p = 1350 degC adiabat, then partially molten mantle
    at 2 GPa (melting absorbs heat, so the path cools faster as it rises):

    >>> print(f"{float(isentropic_gradient_k_gpa(4.0, 1430.0)):.1f}")
    20.6
    >>> print(f"{float(isentropic_gradient_k_gpa(2.0, 1370.0)):.1f}")
    62.1
    """
    p, t, w = _as_float64(pressure_gpa, temperature_c, water_bulk_wt_pct)
    gradient, _ = _isentropic_gradient(
        p, t, w, cpx_mass_fraction, water_partition_coefficient, iterations
    )
    return _scalar_if_0d(gradient)


def _isentropic_gradient(p, t, w, mcpx, d, iterations):
    """dT/dP (K/GPa) and F at (p, t): F by bisection, its partial derivatives analytic."""
    p, t, w = np.broadcast_arrays(p, t, w)
    parts = _DryParts(p, mcpx)
    f = _batch_fraction(p, t, w, mcpx, d, iterations)
    df_dt, df_dp = _hydrous_partials(parts, t, f, w, d)  # per K, per GPa
    t_k = units.c_to_k(t)
    alpha_over_rho = f * _AF_GPA + (1.0 - f) * _AS_GPA  # per GPa
    gradient = (alpha_over_rho * t_k - t_k * _DS * df_dp) / (_CP + t_k * _DS * df_dt)
    return gradient, f


def _batch_fraction(p, t, w, mcpx, d, iterations):
    """Batch melt fraction (Katz et al. 2003, eq. 19); the dry expression when w == 0."""
    parts = _DryParts(p, mcpx)
    if not np.any(w > 0.0):
        return np.where(np.isnan(w), np.nan, parts.fraction(t))
    return _bisect_melt_fraction(parts, lambda _f: t, w, d, iterations)


# --------------------------------------------------------------------------------------
# where the isentrope meets the (wet) solidus
# --------------------------------------------------------------------------------------
def _wet_solidus(p, w, d):
    return _solidus(p) - _depression(np.minimum(w / d, _water_saturation(p)))  # eqs. 4, 16-18


def _crossing_depth(tp_k, w, d, depth_grid_km):
    """Depth where the solid adiabat meets the wet solidus, per column.

    Returns ``(start_depth, solidus_depth, molten_at_bottom)``. The melting path
    starts at the deepest crossing; if the adiabat is above the solidus at the bottom
    of the grid, the path starts at the bottom (``start_depth`` = grid bottom,
    ``solidus_depth`` NaN); if it never crosses, both are NaN.
    """
    tp_k, w = np.broadcast_arrays(tp_k, w)
    z = depth_grid_km[:, None]
    p = z * _GPA_PER_KM
    excess = units.k_to_c(_adiabat_k(tp_k, p)) - _wet_solidus(p, w, d)  # (nz, n)
    above = excess > 0.0
    nz = depth_grid_km.size
    # deepest node above the solidus
    rev = above[::-1]
    any_above = rev.any(axis=0)
    k = nz - 1 - np.argmax(rev, axis=0)
    molten_at_bottom = above[-1]
    k_lo = np.clip(k, 0, nz - 2)
    z_lo = depth_grid_km[k_lo].astype(np.float64)  # above the solidus
    z_hi = depth_grid_km[k_lo + 1].astype(np.float64)  # below it
    for _ in range(_CROSSING_ITERATIONS):
        mid = 0.5 * (z_lo + z_hi)
        pm = mid * _GPA_PER_KM
        up = units.k_to_c(_adiabat_k(tp_k, pm)) > _wet_solidus(pm, w, d)
        z_lo = np.where(up, mid, z_lo)
        z_hi = np.where(up, z_hi, mid)
    crossing = 0.5 * (z_lo + z_hi)
    invalid = np.isnan(tp_k) | np.isnan(w)
    solidus = np.where(any_above & ~molten_at_bottom & ~invalid, crossing, np.nan)
    start = np.where(molten_at_bottom & ~invalid, depth_grid_km[-1], solidus)
    return start, solidus, molten_at_bottom & ~invalid


# --------------------------------------------------------------------------------------
# table integration (exact integral form, vectorised over columns)
# --------------------------------------------------------------------------------------
def _integrate_columns(tp_c, w, depth_grid_km, mcpx, d, iterations=_TABLE_ITERATIONS):
    """March all columns from their start depth up to the surface on ``depth_grid_km``.

    Returns arrays over (depth, column): temperature_c, melt_fraction, and the
    cumulative melt thickness H(z) = integral from z to the start of F dz' (km); and
    per column the solidus depth (NaN if never crossed or deeper than the grid) and
    the molten-at-bottom flag.
    """
    tp_k = units.c_to_k(np.asarray(tp_c, dtype=np.float64))
    w = np.asarray(w, dtype=np.float64)
    tp_k, w = np.broadcast_arrays(tp_k, w)
    nz, n = depth_grid_km.size, tp_k.size
    start, solidus, molten_at_bottom = _crossing_depth(tp_k, w, d, depth_grid_km)

    temperature = np.empty((nz, n))
    fraction = np.zeros((nz, n))
    thickness = np.zeros((nz, n))
    z_prev = start.copy()
    f_prev = np.zeros(n)
    h_prev = np.zeros(n)
    for k in range(nz - 1, -1, -1):
        z = float(depth_grid_km[k])
        p = z * _GPA_PER_KM
        t_ad = _adiabat_k(tp_k, p)
        active = z <= start  # False where start is NaN (no melting)
        if not np.any(active):
            temperature[k] = units.k_to_c(t_ad)
            continue
        dz = np.where(active, z_prev - z, 0.0)
        parts = _DryParts(np.float64(p), mcpx)

        def temperature_of_f(f, t_ad=t_ad, dz=dz, h_prev=h_prev, f_prev=f_prev):
            h = h_prev + 0.5 * (f_prev + f) * dz  # trapezoid, km
            integral_gpa = h * _GPA_PER_KM  # integral of F dP, GPa
            s_drop = _DS * f + (_AF_GPA - _AS_GPA) * integral_gpa  # J kg^-1 K^-1
            return units.k_to_c(t_ad * np.exp(-s_drop / _CP))

        f = _bisect_melt_fraction(parts, temperature_of_f, w, d, iterations)
        f = np.where(active, f, 0.0)
        h = np.where(active, h_prev + 0.5 * (f_prev + f) * dz, 0.0)
        temperature[k] = np.where(active, temperature_of_f(f), units.k_to_c(t_ad))
        fraction[k] = f
        thickness[k] = h
        z_prev = np.where(active, z, z_prev)
        f_prev = f
        h_prev = h
    return temperature, fraction, thickness, solidus, molten_at_bottom


# --------------------------------------------------------------------------------------
# reference integration of one column
# --------------------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class MeltingColumn:
    """One isentropic decompression melting column (result of :func:`melting_column`).

    Profiles are sampled on ``depth_km`` (surface first); summary values refer to the
    lid depth the column was computed for.

    Attributes
    ----------
    potential_temperature_c : float
        Mantle potential temperature, degC.
    water_bulk_wt_pct : float
        Bulk water of the source, wt%.
    lid_depth_km : float
        Depth of the base of the lid where melting stops, km.
    depth_km, pressure_gpa, temperature_c, melt_fraction : ndarray
        Profiles along the isentrope (km, GPa, degC, 0-1); F = 0 below the solidus and
        NaN above the lid, where the column stops.
    cumulative_melt_thickness_km : ndarray
        H(z): integral of F from z down to the start of melting, km (no density factor;
        NaN above the lid).
    solidus_depth_km : float
        Depth where the solid adiabat meets the (wet) solidus; NaN if it never does
        within the column, or if the column is already above the solidus at its base.
    melt_fraction_max : float
        Largest melt fraction below the lid (F at the lid for ordinary columns).
    melt_thickness_km : float
        H at the lid, times rho_s / rho_f if the column used that density scaling, km.
    """

    potential_temperature_c: float
    water_bulk_wt_pct: float
    lid_depth_km: float
    depth_km: np.ndarray
    pressure_gpa: np.ndarray
    temperature_c: np.ndarray
    melt_fraction: np.ndarray
    cumulative_melt_thickness_km: np.ndarray
    solidus_depth_km: float
    melt_fraction_max: float
    melt_thickness_km: float


def _scalar(name, value):
    arr = np.asarray(value, dtype=np.float64)
    if arr.ndim != 0:
        msg = f"{name} must be a single number for one column, got shape {arr.shape}"
        raise ValueError(msg)
    return float(arr)


def _density_factor(density_scaling):
    if density_scaling == "none":
        return 1.0
    if density_scaling == "solid_to_melt":
        return _RHO_S / _RHO_F
    msg = f"density_scaling must be 'none' or 'solid_to_melt', got {density_scaling!r}"
    raise ValueError(msg)


def _max_depth_check(max_depth_km):
    limit = CALIBRATION_MAX_PRESSURE_GPA / _GPA_PER_KM
    if not (0.0 < max_depth_km <= limit):
        msg = (
            f"max_depth_km = {max_depth_km:g} km must be in (0, {limit:.0f}] km: deeper than "
            f"{CALIBRATION_MAX_PRESSURE_GPA:.1f} GPa the Katz et al. (2003) solidus is not "
            "defined"
        )
        raise ValueError(msg)


def melting_column(
    potential_temperature_c,
    water_bulk_wt_pct=0.0,
    dz_km=1.0,
    *,
    lid_depth_km=0.0,
    max_depth_km=C.MELTING_TABLE_MAX_DEPTH_KM.value,
    cpx_mass_fraction=C.CPX_MASS_FRACTION.value,
    water_partition_coefficient=C.WATER_PARTITION_COEFFICIENT.value,
    density_scaling=C.MELT_THICKNESS_DENSITY_SCALING.value,
    rtol=1.0e-9,
):
    """Integrate one isentropic decompression melting column (reference method).

    Parameters
    ----------
    potential_temperature_c : float
        Mantle potential temperature T_p, degC.
    water_bulk_wt_pct : float, optional
        Bulk water of the source, wt%. Default 0 (dry).
    dz_km : float, optional
        Sampling interval of the returned profiles, km (the integrator chooses its own
        steps). Default 1 km.
    lid_depth_km : float, optional
        Base of the lid (lithosphere), km: melting stops there. Default 0 (no lid).
    max_depth_km : float, optional
        Depth where the column starts, km. Default 300 km.
    cpx_mass_fraction : float, optional
        Modal cpx of the source M_cpx. Default 0.17.
    water_partition_coefficient : float, optional
        Bulk partition coefficient of water D. Default 0.01.
    density_scaling : {"none", "solid_to_melt"}, optional
        Multiply the melt thickness by rho_s / rho_f ("solid_to_melt") or not (default,
        McKenzie & Bickle 1988).
    rtol : float, optional
        Relative tolerance of ``scipy.integrate.solve_ivp`` (DOP853). Default 1e-9.

    Returns
    -------
    MeltingColumn
        Profiles and summary values.

    Raises
    ------
    ValueError
        If an input is not a finite scalar, ``dz_km`` is not positive, the lid depth is
        negative or ``max_depth_km`` is beyond the calibrated pressure range.

    Notes
    -----
    The solid adiabat is followed down to the deepest point where it meets the wet
    solidus (:func:`geomelt.physics.peridotite.wet_solidus_c`), found by bisection.
    From there up to the lid the isentropic equation (see :func:`isentropic_gradient_k_gpa`)
    is integrated in depth with ``solve_ivp``, together with dH/dz = -F for the cumulative
    melt thickness. If the adiabat is already above the solidus at ``max_depth_km`` the
    column starts there, partially molten, at the temperature where
    :math:`c_P \\ln(T_{ad}/T) = \\Delta S F` (the same entropy as the solid adiabat), a
    :class:`~geomelt.errors.OutsideCalibrationWarning` is emitted, and the solidus depth
    is NaN.

    Examples
    --------
    >>> col = melting_column(1350.0)
    >>> print(f"{col.solidus_depth_km:.0f} km, F = {col.melt_fraction_max:.3f}, "
    ...       f"h = {col.melt_thickness_km:.1f} km")
    82 km, F = 0.236, h = 8.9 km
    """
    from scipy.integrate import solve_ivp
    from scipy.optimize import brentq

    tp = _scalar("potential_temperature_c", potential_temperature_c)
    w = _scalar("water_bulk_wt_pct", water_bulk_wt_pct)
    dz = _scalar("dz_km", dz_km)
    lid = _scalar("lid_depth_km", lid_depth_km)
    zmax = _scalar("max_depth_km", max_depth_km)
    factor = _density_factor(density_scaling)
    if not all(np.isfinite([tp, w, dz, lid, zmax])):
        msg = "melting_column needs finite inputs"
        raise ValueError(msg)
    if dz <= 0.0 or lid < 0.0 or w < 0.0:
        msg = f"need dz_km > 0, lid_depth_km >= 0 and water >= 0; got {dz}, {lid}, {w}"
        raise ValueError(msg)
    _max_depth_check(zmax)
    mcpx, d = float(cpx_mass_fraction), float(water_partition_coefficient)

    n = int(np.ceil(zmax / dz - 1.0e-9))
    depth = np.minimum(np.arange(n + 1) * dz, zmax)
    pressure = depth * _GPA_PER_KM
    tp_k = units.c_to_k(tp)
    start, solidus, molten = _crossing_depth(
        np.array([tp_k]), np.array([w]), d, np.linspace(0.0, zmax, int(np.ceil(zmax)) + 1)
    )
    start, solidus, molten = float(start[0]), float(solidus[0]), bool(molten[0])

    temperature = units.k_to_c(_adiabat_k(tp_k, pressure))
    fraction = np.zeros_like(depth)
    cumulative = np.zeros_like(depth)
    above_lid = depth < lid
    for profile in (temperature, fraction, cumulative):
        profile[above_lid] = np.nan  # the column stops at the lid
    if molten and lid >= start:  # lid below a column that is still molten there: unknown
        msg = f"lid_depth_km = {lid:g} km is at or below the molten base of the column"
        warnings.warn(msg, OutsideCalibrationWarning, stacklevel=2)
        return MeltingColumn(
            tp, w, lid, depth, pressure, temperature, fraction, cumulative, solidus, np.nan, np.nan
        )
    if np.isnan(start) or lid >= start:  # never reaches the solidus below the lid
        return MeltingColumn(
            tp, w, lid, depth, pressure, temperature, fraction, cumulative, solidus, 0.0, 0.0
        )
    if molten:
        msg = (
            f"T_p = {tp:g} degC, water = {w:g} wt%: the isentrope is above the solidus at "
            f"{zmax:g} km; the column starts there partially molten and its solidus depth "
            "is unknown (NaN)"
        )
        warnings.warn(msg, OutsideCalibrationWarning, stacklevel=2)

    p0 = start * _GPA_PER_KM
    parts0 = _DryParts(np.float64(p0), mcpx)
    t_ad0 = _adiabat_k(tp_k, p0)

    def start_residual(f):  # equal entropy with the solid adiabat (0 for ordinary starts)
        t = units.k_to_c(t_ad0 * np.exp(-_DS * f / _CP))
        x = np.minimum(w / (d + f * (1.0 - d)), parts0.water_sat)
        return float(parts0.fraction(t + _depression(x))) - f

    f0 = 0.0 if start_residual(0.0) <= 0.0 else brentq(start_residual, 0.0, 1.0, xtol=1e-15)
    t0 = float(units.k_to_c(t_ad0 * np.exp(-_DS * f0 / _CP)))

    def rhs(z, y):
        gradient, f = _isentropic_gradient(
            np.float64(z * _GPA_PER_KM),
            np.float64(y[0]),
            np.float64(w),
            mcpx,
            d,
            _REFERENCE_ITERATIONS,
        )
        return [float(gradient) * _GPA_PER_KM, -float(f)]

    # integrate upward (depth decreasing) from the start of melting to the lid
    solution = solve_ivp(
        rhs,
        (start, lid),
        [t0, 0.0],
        method="DOP853",
        rtol=rtol,
        atol=1.0e-10,
        dense_output=True,
    )
    if not solution.success:  # pragma: no cover - integration of a smooth 2-D system
        msg = f"integration of the melting column failed: {solution.message}"
        raise RuntimeError(msg)

    def state_at(z_km):
        z_km = np.atleast_1d(np.asarray(z_km, dtype=np.float64))
        t, h = solution.sol(z_km)
        f = _batch_fraction(
            z_km * _GPA_PER_KM, t, np.full_like(t, w), mcpx, d, _REFERENCE_ITERATIONS
        )
        return t, f, h

    inside = (depth <= start) & ~above_lid
    if np.any(inside):  # no node between the lid and the start of melting otherwise
        t, f, h = state_at(depth[inside])
        temperature[inside], fraction[inside], cumulative[inside] = t, f, h
    _, f_lid, h_lid = state_at(lid)
    # largest F below the lid: at the integrator's steps, the profile nodes, and points
    # crowding towards the lid (F can peak within metres of the surface, where water
    # saturation, eq. 17, vanishes)
    near_lid = lid + np.minimum(dz, start - lid) * np.power(_SURFACE_RATIO, -np.arange(60.0))
    _, f_near, _ = state_at(np.concatenate([near_lid, solution.t]))
    f_max = float(max(f_lid[0], f_near.max(), fraction[inside].max(initial=0.0)))
    return MeltingColumn(
        tp,
        w,
        lid,
        depth,
        pressure,
        temperature,
        fraction,
        cumulative,
        solidus,
        f_max,
        float(h_lid[0]) * factor,
    )


# --------------------------------------------------------------------------------------
# the precomputed table
# --------------------------------------------------------------------------------------
_GAMMA = C.KATZ_WATER_SOLIDUS_GAMMA.value  # water axis is uniform in water^gamma


class MeltingTable:
    """Precomputed decompression melting over potential temperature, water and lid depth.

    Build it once per run with :meth:`build`, then call :meth:`lookup` on arrays of any
    shape. Nodes are uniform in potential temperature, in (bulk water)^gamma (gamma =
    0.75, the exponent of the solidus depression, which makes the solidus depth nearly
    linear along that axis) and in depth; lookups interpolate trilinearly. The solidus
    depth has its own, finer (T_p, water) grid because near the bottom of the table the
    adiabat and the solidus are almost parallel and their crossing moves fast.

    Attributes
    ----------
    potential_temperature_c : ndarray, shape (nt,)
        Potential-temperature nodes, degC.
    water_wt_pct : ndarray, shape (nw,)
        Bulk-water nodes, wt%.
    depth_km : ndarray, shape (nz,)
        Depth nodes, km (0 first).
    melt_fraction_max : ndarray, shape (nt, nw, nz)
        Largest melt fraction at or below each depth (= F at that depth for ordinary
        columns).
    melt_thickness_km : ndarray, shape (nt, nw, nz)
        Melt thickness of the column cut off at each depth (density factor applied), km.
    solidus_potential_temperature_c, solidus_water_wt_pct : ndarray
        Nodes of the solidus-depth grid (same ranges, finer spacing).
    solidus_depth_km : ndarray, shape (nts, nws)
        Depth where each isentrope meets the solidus, km (NaN if it never does within
        the table or the column is already above the solidus at the table bottom).
    parameters : MantleMeltingParameters
        Parameters the table was built with.
    """

    def __init__(
        self,
        potential_temperature_c,
        water_wt_pct,
        depth_km,
        melt_fraction_max,
        melt_thickness_km,
        solidus_potential_temperature_c,
        solidus_water_wt_pct,
        solidus_depth_km,
        parameters,
    ):
        self.potential_temperature_c = np.asarray(potential_temperature_c, dtype=np.float64)
        self.water_wt_pct = np.asarray(water_wt_pct, dtype=np.float64)
        self.depth_km = np.asarray(depth_km, dtype=np.float64)
        self.melt_fraction_max = np.asarray(melt_fraction_max, dtype=np.float64)
        self.melt_thickness_km = np.asarray(melt_thickness_km, dtype=np.float64)
        self.solidus_potential_temperature_c = np.asarray(
            solidus_potential_temperature_c, dtype=np.float64
        )
        self.solidus_water_wt_pct = np.asarray(solidus_water_wt_pct, dtype=np.float64)
        self.solidus_depth_km = np.asarray(solidus_depth_km, dtype=np.float64)
        self.parameters = parameters
        axes = (self.potential_temperature_c, self.water_wt_pct, self.depth_km)
        solidus_axes = (self.solidus_potential_temperature_c, self.solidus_water_wt_pct)
        if (
            self.melt_fraction_max.shape != tuple(a.size for a in axes)
            or self.melt_thickness_km.shape != self.melt_fraction_max.shape
            or self.solidus_depth_km.shape != tuple(a.size for a in solidus_axes)
            or min(a.size for a in axes + solidus_axes) < 2
        ):
            msg = "table axes do not match the table shapes (or have fewer than 2 nodes)"
            raise ValueError(msg)
        self._axes = np.array(
            [
                _uniform_axis(self.potential_temperature_c),
                _uniform_axis(np.power(self.water_wt_pct, _GAMMA)),
                _uniform_axis(self.depth_km),
                _uniform_axis(self.solidus_potential_temperature_c),
                _uniform_axis(np.power(self.solidus_water_wt_pct, _GAMMA)),
            ]
        )
        # float32 copies for the gathers: half the memory traffic, and their rounding
        # (6e-8 relative, < 1e-5 km of melt thickness) is far below the table's accuracy
        self._fmax_flat = self.melt_fraction_max.astype(np.float32).ravel()
        self._thickness_flat = self.melt_thickness_km.astype(np.float32).ravel()
        self._solidus_flat = self.solidus_depth_km.ravel()

    @classmethod
    def build(
        cls,
        params: MantleMeltingParameters | None = None,
        potential_temperature_range_c=None,
        water_range_wt_pct=None,
        depth_step_km=None,
        *,
        potential_temperature_step_k=5.0,
        water_nodes=21,
        max_depth_km=None,
        solidus_refinement=(5, 8),
    ) -> MeltingTable:
        """Integrate the melting columns of every (T_p, water) node.

        Parameters
        ----------
        params : MantleMeltingParameters, optional
            Source and table parameters (defaults if omitted).
        potential_temperature_range_c : (float, float), optional
            Lowest and highest potential temperature, degC. Default from ``params``
            (1200-1700 degC).
        water_range_wt_pct : (float, float), optional
            Lowest and highest bulk water, wt%. Default 0 to
            ``params.melting_table_max_water_wt_pct`` (0.1 wt%).
        depth_step_km : float, optional
            Depth step, km. Default ``params.melting_table_depth_step_km`` (1 km).
        potential_temperature_step_k : float, optional
            Largest spacing of potential-temperature nodes, K (default 5 K).
        water_nodes : int, optional
            Number of water nodes, uniform in water^0.75 (default 21).
        max_depth_km : float, optional
            Bottom of the columns, km. Default ``params.melting_table_max_depth_km``
            (300 km).
        solidus_refinement : (int, int), optional
            How many times finer the solidus-depth grid is in T_p and in water
            (default 5 and 8: 1 K and 161 water nodes).

        Returns
        -------
        MeltingTable

        Raises
        ------
        ValueError
            If a range is empty or reversed, water is negative, the depth step is not
            positive or the columns would start deeper than the calibrated range.

        Notes
        -----
        Each column is integrated on the depth grid from its solidus crossing to the
        surface with the exact integral form of the isentropic equation (module
        docstring): per depth node a bisection for F, and the trapezoid rule for the
        integral of F. With the defaults the table has 101 x 21 x 301 nodes and takes
        about a second to build; against :func:`melting_column` at random off-grid
        points it agrees within 0.01 km of melt thickness and 0.001 of melt fraction
        (tested against 0.05 km and 0.002).
        """
        params = params or MantleMeltingParameters()
        if potential_temperature_range_c is None:
            potential_temperature_range_c = (
                params.melting_table_min_potential_temperature_c,
                params.melting_table_max_potential_temperature_c,
            )
        if water_range_wt_pct is None:
            water_range_wt_pct = (0.0, params.melting_table_max_water_wt_pct)
        dz = float(depth_step_km or params.melting_table_depth_step_km)
        zmax = float(max_depth_km or params.melting_table_max_depth_km)
        _max_depth_check(zmax)
        t_lo, t_hi = (float(v) for v in potential_temperature_range_c)
        w_lo, w_hi = (float(v) for v in water_range_wt_pct)
        refine_t, refine_w = (int(v) for v in solidus_refinement)
        if not (
            t_hi > t_lo
            and w_hi > w_lo >= 0.0
            and dz > 0.0
            and water_nodes >= 2
            and potential_temperature_step_k > 0.0
            and refine_t >= 1
            and refine_w >= 1
        ):
            msg = (
                "need increasing potential-temperature and water ranges, water >= 0, "
                "positive steps, >= 2 water nodes and refinements >= 1; got "
                f"{potential_temperature_range_c}, {water_range_wt_pct}, {dz}, "
                f"{potential_temperature_step_k}, {water_nodes}, {solidus_refinement}"
            )
            raise ValueError(msg)
        nt = max(int(np.ceil((t_hi - t_lo) / float(potential_temperature_step_k) - 1e-9)), 1)
        tp_nodes = np.linspace(t_lo, t_hi, nt + 1)
        w_nodes = _water_nodes(w_lo, w_hi, int(water_nodes))
        nz = int(np.ceil(zmax / dz - 1e-9)) + 1
        depth = np.linspace(0.0, (nz - 1) * dz, nz)
        mcpx, d = params.cpx_mass_fraction, params.water_partition_coefficient

        tp_grid, w_grid = np.meshgrid(tp_nodes, w_nodes, indexing="ij")
        # Extra nodes in the top interval, geometric towards the surface: within a few
        # hundred metres of it the melt's water saturation (eq. 17, X_sat ~ P^0.6) drops to
        # zero, so water leaves the melt and F falls back in a thin layer; the peak of F
        # above it must be caught for the largest melt fraction of columns with no lid.
        top = depth[1] * np.power(_SURFACE_RATIO, -np.arange(1, _SURFACE_NODES + 1))
        march = np.union1d(depth, top)
        _, fraction, thickness, _, _ = _integrate_columns(
            tp_grid.ravel(), w_grid.ravel(), march, mcpx, d
        )
        # largest F at or below each depth (F grows upward in ordinary columns)
        fmax = np.maximum.accumulate(fraction[::-1], axis=0)[::-1]
        on_grid = np.searchsorted(march, depth)
        fmax, thickness = fmax[on_grid], thickness[on_grid]
        factor = _density_factor(params.melt_thickness_density_scaling)
        shape = (tp_nodes.size, w_nodes.size, nz)

        tps_nodes = np.linspace(t_lo, t_hi, nt * refine_t + 1)
        ws_nodes = _water_nodes(w_lo, w_hi, (int(water_nodes) - 1) * refine_w + 1)
        tps_grid, ws_grid = np.meshgrid(tps_nodes, ws_nodes, indexing="ij")
        scan = np.linspace(0.0, depth[-1], int(np.ceil(depth[-1] / 5.0)) + 1)  # 5-km scan
        tps_k, ws = units.c_to_k(tps_grid.ravel()), ws_grid.ravel()
        solidus = np.concatenate(
            [
                _crossing_depth(
                    tps_k[i : i + _SOLIDUS_SCAN_COLUMNS], ws[i : i + _SOLIDUS_SCAN_COLUMNS], d, scan
                )[1]
                for i in range(0, tps_k.size, _SOLIDUS_SCAN_COLUMNS)
            ]
        )
        return cls(
            tp_nodes,
            w_nodes,
            depth,
            fmax.T.reshape(shape),
            (thickness * factor).T.reshape(shape),
            tps_nodes,
            ws_nodes,
            solidus.reshape(tps_grid.shape),
            params,
        )

    def lookup(self, potential_temperature_c, water_bulk_wt_pct, lid_depth_km):
        """Interpolate decompression melting per cell.

        Parameters
        ----------
        potential_temperature_c : array_like
            Mantle potential temperature T_p per cell, degC.
        water_bulk_wt_pct : array_like
            Bulk water of the source per cell, wt%.
        lid_depth_km : array_like
            Depth of the base of the lid (thermal lithosphere), km.

        Returns
        -------
        dict of ndarray
            ``solidus_depth_km`` (km; NaN if the isentrope never meets the solidus or
            is already above it at the table bottom), ``melt_fraction_max`` (0-1) and
            ``melt_thickness_km`` (km), broadcast to the shape of the inputs.

        Notes
        -----
        NaN in any input gives NaN out. Potential temperatures or water contents outside
        the table, negative lid depths, and lids below the table bottom in columns that
        are still molten there give NaN and one
        :class:`~geomelt.errors.OutsideCalibrationWarning` per call. Where the lid is
        deeper than the solidus there is no melt (0, 0). The per-cell interpolation runs in
        a compiled kernel (:mod:`geomelt.physics._kernels`), 65536 cells at a time.

        Examples
        --------
        >>> table = MeltingTable.build(potential_temperature_range_c=(1300.0, 1400.0))
        >>> out = table.lookup([1350.0, 1350.0], 0.0, [0.0, 70.0])
        >>> print(out["melt_thickness_km"].round(1), out["solidus_depth_km"].round(0))
        [8.9 0.1] [82. 82.]
        """
        tp, w, lid = _as_float64(potential_temperature_c, water_bulk_wt_pct, lid_depth_km)
        shape = tp.shape
        tp, w, lid = tp.ravel(), w.ravel(), lid.ravel()
        n = tp.size
        out = {name: np.empty(n) for name in _LOOKUP_NAMES}
        outside = 0
        chunk = 1 << 16
        for s in range(0, n, chunk):
            e = min(s + chunk, n)
            outside += self._lookup_chunk(tp[s:e], w[s:e], lid[s:e], out, s, e)
        if outside:
            msg = (
                f"{outside} cell(s) outside the melting table (T_p "
                f"{self.potential_temperature_c[0]:g}-{self.potential_temperature_c[-1]:g} "
                f"degC, water {self.water_wt_pct[0]:g}-{self.water_wt_pct[-1]:g} wt%, lid "
                f"depth >= 0 and, where the column is still molten at "
                f"{self.depth_km[-1]:g} km, not deeper than that); NaN returned there. "
                "Build the table with wider ranges if these are real values"
            )
            warnings.warn(msg, OutsideCalibrationWarning, stacklevel=2)
        return {name: values.reshape(shape) for name, values in out.items()}

    def _lookup_chunk(self, tp, w, lid, out, s, e):
        """Fill ``out[...][s:e]``; return the number of cells outside the table."""
        with np.errstate(invalid="ignore"):
            u = np.power(w, _GAMMA)
        return int(
            melting_table_lookup(
                tp,
                w,
                u,
                lid,
                self._axes,
                float(self.depth_km[-1]),
                self._fmax_flat,
                self._thickness_flat,
                self._solidus_flat,
                self.water_wt_pct.size,
                self.depth_km.size,
                self.solidus_water_wt_pct.size,
                out["solidus_depth_km"][s:e],
                out["melt_fraction_max"][s:e],
                out["melt_thickness_km"][s:e],
            )
        )


_LOOKUP_NAMES = ("solidus_depth_km", "melt_fraction_max", "melt_thickness_km")


def _water_nodes(w_lo, w_hi, n):
    """``n`` water contents uniform in water^gamma from ``w_lo`` to ``w_hi`` (wt%)."""
    nodes = np.power(np.linspace(w_lo**_GAMMA, w_hi**_GAMMA, n), 1.0 / _GAMMA)
    nodes[0], nodes[-1] = w_lo, w_hi
    return nodes


def _uniform_axis(nodes) -> tuple[float, float, int, float]:
    """First node, spacing, index of the last cell and of the last node of a uniform axis
    (a row of the axes given to :func:`geomelt.physics._kernels.melting_table_lookup`)."""
    return (float(nodes[0]), float(nodes[1] - nodes[0]), nodes.size - 2, float(nodes.size - 1))
