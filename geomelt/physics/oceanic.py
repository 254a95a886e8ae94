"""Oceanic lithosphere: half-space cooling and the GDH1 plate model.

Oceanic lithosphere cools from above as it moves away from the ridge. The
half-space model (Turcotte & Schubert 2002, section 4-16) gives temperature
and surface heat flow as functions of plate age; the GDH1 plate model (Stein &
Stein 1992) gives the empirical heat flow and seafloor depth used worldwide.
Here GDH1 turns observed heat flow into a plate age, and the half-space model
with an adiabatic interior turns age into temperature at depth.

Conventions: depth in km (positive down) except seafloor depth in m; plate age
in Ma; temperature in degC; heat flow in mW m^-2; diffusivity in m^2 s^-1.
Inputs broadcast; NaN in gives NaN out; negative ages give NaN.

References
----------
Stein, C. A. & Stein, S. (1992). A model for the global variation in oceanic
depth and heat flow with lithospheric age. Nature 359, 123-129.

Turcotte, D. L. & Schubert, G. (2002). Geodynamics, 2nd ed. Cambridge
University Press, section 4-16 (section number from memory).
"""

from __future__ import annotations

import functools

import numpy as np
from numpy.polynomial import chebyshev
from scipy import special

from geomelt import constants as C
from geomelt import units
from geomelt.parameters import ThermalParameters
from geomelt.physics.geotherm import DEFAULT_THERMAL_PARAMETERS

__all__ = [
    "GDH1_DECAY_RATE_PER_MA",
    "OceanicGeotherm",
    "GDH1_DEPTH_AMPLITUDE_M",
    "GDH1_DEPTH_ASYMPTOTE_M",
    "GDH1_DEPTH_SWITCH_AGE_MA",
    "GDH1_HEAT_FLOW_AMPLITUDE_MW_M2",
    "GDH1_HEAT_FLOW_ASYMPTOTE_MW_M2",
    "GDH1_HEAT_FLOW_COEFFICIENT_MW_M2_MA05",
    "GDH1_HEAT_FLOW_SWITCH_AGE_MA",
    "GDH1_RIDGE_DEPTH_M",
    "GDH1_SUBSIDENCE_COEFFICIENT_M_MA05",
    "boundary_layer_thickness_km",
    "gdh1_age_from_heat_flow_ma",
    "gdh1_depth_m",
    "gdh1_heat_flow_mw_m2",
    "half_space_heat_flow_mw_m2",
    "half_space_temperature_c",
    "oceanic_geotherm_temperature_c",
    "oceanic_heat_flow_mw_m2",
    "oceanic_isotherm_depth_km",
    "oceanic_lab_depth_km",
]

# --------------------------------------------------------------------------------------
# GDH1 coefficients (Stein & Stein 1992, Nature 359:123). Published fits of the model,
# not user parameters: heat flow q = 510 t^-1/2 (t <= 55 Ma), 48 + 96 exp(-0.0278 t)
# (t > 55 Ma); seafloor depth d = 2600 + 365 t^1/2 (t < 20 Ma), 5651 - 2473 exp(-0.0278 t).
# --------------------------------------------------------------------------------------
GDH1_HEAT_FLOW_COEFFICIENT_MW_M2_MA05 = 510.0
GDH1_HEAT_FLOW_SWITCH_AGE_MA = 55.0
GDH1_HEAT_FLOW_ASYMPTOTE_MW_M2 = 48.0
GDH1_HEAT_FLOW_AMPLITUDE_MW_M2 = 96.0
GDH1_DECAY_RATE_PER_MA = 0.0278
GDH1_RIDGE_DEPTH_M = 2600.0
GDH1_SUBSIDENCE_COEFFICIENT_M_MA05 = 365.0
GDH1_DEPTH_SWITCH_AGE_MA = 20.0
GDH1_DEPTH_ASYMPTOTE_M = 5651.0
GDH1_DEPTH_AMPLITUDE_M = 2473.0

_NEWTON_STEP_ACCEPT_KM = 1.0e-3  # see OceanicGeotherm.isotherm_depth_km
_BRACKET_TOLERANCE_KM = 1.0e-7  # 0.1 mm
_SOLVER_MAX_ITERATIONS = 100
_INTERPOLATION_DEGREE = 12  # Chebyshev interpolant of the isotherm's u(eps)
_INTERPOLATION_TOLERANCE_KM = 1.0e-7  # accepted interpolation error, else per-cell Newton
_TWO_OVER_SQRT_PI = 2.0 / np.sqrt(np.pi)  # d erf(x) / dx = (2 / sqrt(pi)) exp(-x^2)


def _as_float64(*values):
    return np.broadcast_arrays(*(np.asarray(v, dtype=np.float64) for v in values))


def _scalar_if_0d(values):
    return np.asarray(values)[()]


def _valid_age(age_ma):
    return np.where(age_ma >= 0.0, age_ma, np.nan)


def _diffusion_length_km(age_ma, diffusivity_m2_s):
    """``2 sqrt(kappa t)`` in km (the erf length scale of half-space cooling)."""
    return units.m_to_km(2.0 * np.sqrt(diffusivity_m2_s * units.ma_to_s(_valid_age(age_ma))))


def _erf_of_depth(depth_km, length_km):
    """``erf(z / (2 sqrt(kappa t)))``, with the zero-age limit (1 below the surface)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        x = depth_km / length_km
    x = np.where((length_km == 0.0) & (depth_km == 0.0), 0.0, x)
    return special.erf(x)


# --------------------------------------------------------------------------------------
# Half-space cooling
# --------------------------------------------------------------------------------------
def half_space_temperature_c(
    depth_km,
    age_ma,
    surface_temperature_c=C.SURFACE_TEMPERATURE_C.value,
    mantle_temperature_c=C.MANTLE_POTENTIAL_TEMPERATURE_C.value,
    diffusivity_m2_s=C.MANTLE_THERMAL_DIFFUSIVITY_M2_S.value,
):
    """Temperature in a cooling half-space.

    Parameters
    ----------
    depth_km : array_like
        Depth below the seafloor, km (negative gives NaN).
    age_ma : array_like
        Plate age, Ma (negative gives NaN; 0 gives the interior temperature below
        the surface).
    surface_temperature_c : float or array_like, optional
        Surface temperature T0, degC. Default ``surface_temperature_c``.
    mantle_temperature_c : float or array_like, optional
        Initial (interior) temperature T_m, degC. Default ``mantle_potential_temperature_c``.
    diffusivity_m2_s : float or array_like, optional
        Thermal diffusivity kappa, m^2 s^-1. Default ``mantle_thermal_diffusivity_m2_s``.

    Returns
    -------
    temperature_c : ndarray
        degC.

    Notes
    -----
    Turcotte & Schubert (2002), section 4-16:

    .. math:: T = T_0 + (T_m - T_0)\\,\\mathrm{erf}\\left(\\frac{z}{2\\sqrt{\\kappa t}}\\right)

    Examples
    --------
    >>> print(f"{float(half_space_temperature_c(20.0, 50.0, 0.0, 1350.0, 1.0e-6)):.0f}")
    376
    """
    z, age, t0, tm, kappa = _as_float64(
        depth_km, age_ma, surface_temperature_c, mantle_temperature_c, diffusivity_m2_s
    )
    z = np.where(z >= 0.0, z, np.nan)
    erf = _erf_of_depth(z, _diffusion_length_km(age, kappa))
    return _scalar_if_0d(t0 + (tm - t0) * erf)


def half_space_heat_flow_mw_m2(
    age_ma,
    conductivity_w_m_k,
    temperature_difference_k,
    diffusivity_m2_s=C.MANTLE_THERMAL_DIFFUSIVITY_M2_S.value,
):
    """Surface heat flow of a cooling half-space.

    Parameters
    ----------
    age_ma : array_like
        Plate age, Ma (0 gives ``inf``; negative gives NaN).
    conductivity_w_m_k : float or array_like
        Thermal conductivity k, W m^-1 K^-1.
    temperature_difference_k : float or array_like
        Interior minus surface temperature, K.
    diffusivity_m2_s : float or array_like, optional
        Thermal diffusivity kappa, m^2 s^-1.

    Returns
    -------
    heat_flow_mw_m2 : ndarray
        mW m^-2.

    Notes
    -----
    Turcotte & Schubert (2002), section 4-16:

    .. math:: q_0 = \\frac{k (T_m - T_0)}{\\sqrt{\\pi \\kappa t}}

    With the GDH1 constants (k = 3.138, 1450 K, kappa = 0.804e-6) the coefficient of
    t^-1/2 is 509.6 mW m^-2 Ma^1/2, close to GDH1's 510 (Stein & Stein 1992).

    Examples
    --------
    >>> print(f"{float(half_space_heat_flow_mw_m2(1.0, 3.138, 1450.0, 0.804e-6)):.1f}")
    509.6
    """
    age, k, dt, kappa = _as_float64(
        age_ma, conductivity_w_m_k, temperature_difference_k, diffusivity_m2_s
    )
    with np.errstate(divide="ignore"):
        q_w_m2 = k * dt / np.sqrt(np.pi * kappa * units.ma_to_s(_valid_age(age)))
    return _scalar_if_0d(units.w_m2_to_mw_m2(q_w_m2))


def boundary_layer_thickness_km(
    age_ma,
    diffusivity_m2_s=C.MANTLE_THERMAL_DIFFUSIVITY_M2_S.value,
    erf_argument=C.BOUNDARY_LAYER_ERF_ARGUMENT.value,
):
    """Thickness of the half-space thermal boundary layer.

    Parameters
    ----------
    age_ma : array_like
        Plate age, Ma.
    diffusivity_m2_s : float, optional
        Thermal diffusivity kappa, m^2 s^-1.
    erf_argument : float, optional
        erf argument at the base of the layer (1.16: the temperature has reached 90 %
        of the interior temperature; Turcotte & Schubert 2002, section 4-16).

    Returns
    -------
    thickness_km : ndarray
        ``2 erf_argument sqrt(kappa t)``, km (2.32 sqrt(kappa t) by default).

    Examples
    --------
    >>> print(f"{float(boundary_layer_thickness_km(100.0, 1.0e-6, 1.16)):.0f}")
    130
    """
    age, kappa, arg = _as_float64(age_ma, diffusivity_m2_s, erf_argument)
    return _scalar_if_0d(arg * _diffusion_length_km(age, kappa))


# --------------------------------------------------------------------------------------
# GDH1 (Stein & Stein 1992)
# --------------------------------------------------------------------------------------
def gdh1_heat_flow_mw_m2(age_ma):
    """Surface heat flow of the GDH1 plate model.

    Parameters
    ----------
    age_ma : array_like
        Plate age, Ma (0 gives ``inf``; negative gives NaN).

    Returns
    -------
    heat_flow_mw_m2 : ndarray
        mW m^-2.

    Notes
    -----
    Stein & Stein (1992):

    .. math:: q = 510\\,t^{-1/2}\\ (t \\le 55\\ \\mathrm{Ma}),\\qquad
              q = 48 + 96\\,e^{-0.0278 t}\\ (t > 55\\ \\mathrm{Ma})

    The two branches differ by 0.04 mW m^-2 at 55 Ma.

    Examples
    --------
    >>> print(f"{float(gdh1_heat_flow_mw_m2(25.0)):.1f}")
    102.0
    """
    age = _valid_age(np.asarray(age_ma, dtype=np.float64))
    with np.errstate(divide="ignore"):
        young = GDH1_HEAT_FLOW_COEFFICIENT_MW_M2_MA05 / np.sqrt(age)
    old = GDH1_HEAT_FLOW_ASYMPTOTE_MW_M2 + GDH1_HEAT_FLOW_AMPLITUDE_MW_M2 * np.exp(
        -GDH1_DECAY_RATE_PER_MA * age
    )
    return _scalar_if_0d(np.where(age <= GDH1_HEAT_FLOW_SWITCH_AGE_MA, young, old))


def gdh1_depth_m(age_ma):
    """Seafloor depth of the GDH1 plate model.

    Parameters
    ----------
    age_ma : array_like
        Plate age, Ma (negative gives NaN).

    Returns
    -------
    depth_m : ndarray
        Depth below sea level, m.

    Notes
    -----
    Stein & Stein (1992):

    .. math:: d = 2600 + 365\\,t^{1/2}\\ (t < 20\\ \\mathrm{Ma}),\\qquad
              d = 5651 - 2473\\,e^{-0.0278 t}\\ (t \\ge 20\\ \\mathrm{Ma})

    Examples
    --------
    >>> print(f"{float(gdh1_depth_m(100.0)):.0f}")
    5498
    """
    age = _valid_age(np.asarray(age_ma, dtype=np.float64))
    young = GDH1_RIDGE_DEPTH_M + GDH1_SUBSIDENCE_COEFFICIENT_M_MA05 * np.sqrt(age)
    old = GDH1_DEPTH_ASYMPTOTE_M - GDH1_DEPTH_AMPLITUDE_M * np.exp(-GDH1_DECAY_RATE_PER_MA * age)
    return _scalar_if_0d(np.where(age < GDH1_DEPTH_SWITCH_AGE_MA, young, old))


def gdh1_age_from_heat_flow_ma(heat_flow_mw_m2, max_age_ma=C.OCEANIC_MAX_AGE_MA.value):
    """Plate age implied by surface heat flow through GDH1 (inverse of the heat-flow fit).

    Parameters
    ----------
    heat_flow_mw_m2 : array_like
        Surface heat flow, mW m^-2 (NaN or non-positive gives NaN).
    max_age_ma : float, optional
        Oldest age returned, Ma. Heat flow at or below the 48 mW m^-2 asymptote (or
        implying an older age) gives ``max_age_ma``. Default ``oceanic_max_age_ma``.

    Returns
    -------
    age_ma : ndarray
        Ma.

    Notes
    -----
    Inverts Stein & Stein (1992):

    .. math:: t = (510 / q)^2\\ (q \\ge 510/\\sqrt{55}),\\qquad
              t = -\\ln\\left(\\frac{q - 48}{96}\\right) / 0.0278\\ \\ \\text{otherwise}

    Because the two GDH1 branches differ by 0.04 mW m^-2 at 55 Ma, ages between
    55.00 and 55.07 Ma are not returned (a 0.07 Ma gap).

    Examples
    --------
    The global mean oceanic heat flow, 101 mW m^-2 (Pollack, Hurter & Johnson 1993):

    >>> print(f"{float(gdh1_age_from_heat_flow_ma(101.0)):.1f}")
    25.5
    """
    q = np.asarray(heat_flow_mw_m2, dtype=np.float64)
    q = np.where(q > 0.0, q, np.nan)
    switch_heat_flow = GDH1_HEAT_FLOW_COEFFICIENT_MW_M2_MA05 / np.sqrt(GDH1_HEAT_FLOW_SWITCH_AGE_MA)
    young = (GDH1_HEAT_FLOW_COEFFICIENT_MW_M2_MA05 / q) ** 2
    excess = (q - GDH1_HEAT_FLOW_ASYMPTOTE_MW_M2) / GDH1_HEAT_FLOW_AMPLITUDE_MW_M2
    with np.errstate(divide="ignore", invalid="ignore"):
        # at or below the asymptote the age is unbounded (NaN stays NaN)
        old = np.where(excess <= 0.0, np.inf, -np.log(excess) / GDH1_DECAY_RATE_PER_MA)
    age = np.where(q >= switch_heat_flow, young, old)
    return _scalar_if_0d(np.minimum(age, max_age_ma))


# --------------------------------------------------------------------------------------
# Half-space geotherm with an adiabatic interior
# --------------------------------------------------------------------------------------
class OceanicGeotherm:
    """Half-space cooling geotherm with an adiabatic interior, one per cell.

    Parameters
    ----------
    age_ma : array_like
        Plate age, Ma (negative or NaN gives NaN; 0 is the ridge axis, where the interior
        adiabat reaches the surface).
    params : ThermalParameters, optional
        ``surface_temperature_c``, ``mantle_potential_temperature_c``,
        ``adiabat_gradient_k_km``, ``mantle_thermal_diffusivity_m2_s``,
        ``boundary_layer_erf_argument``, ``gdh1_plate_thickness_km`` and
        ``lab_max_depth_km``.

    Attributes
    ----------
    shape : tuple of int
        Shape of ``age_ma``.
    lab_depth_km : ndarray
        Thermal lithosphere base: the boundary-layer thickness
        ``2 erf_argument sqrt(kappa t)`` capped at the GDH1 plate thickness
        (Stein & Stein 1992), km.

    Notes
    -----
    Half-space cooling (Turcotte & Schubert 2002, section 4-16) of a mantle whose
    initial temperature follows the linear adiabat :math:`T_a(z) = T_p + G z`:

    .. math:: T(z) = T_0 + (T_a(z) - T_0)\\,\\mathrm{erf}\\left(\\frac{z}{2\\sqrt{\\kappa t}}\\right)

    Scaling the erf profile by the depth-dependent interior temperature is common
    practice; it tends to the adiabat at depth and to plain half-space cooling when
    G = 0. Heat production in oceanic lithosphere is neglected. The plate thickness
    only caps the reported lithosphere base; temperatures follow the half-space
    profile at all depths.

    Examples
    --------
    >>> g = OceanicGeotherm(25.0, ThermalParameters(surface_temperature_c=0.0))
    >>> print(f"{float(g.temperature_c(10.0)):.0f} degC, LAB {float(g.lab_depth_km):.1f} km")
    299 degC, LAB 58.5 km
    """

    def __init__(self, age_ma, params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS):
        self.params = params
        self.age_ma = _valid_age(np.asarray(age_ma, dtype=np.float64))
        self.shape = self.age_ma.shape
        # 2 sqrt(kappa t), the length scale of the erf profile, km
        self.length_km = _diffusion_length_km(self.age_ma, params.mantle_thermal_diffusivity_m2_s)

    @property
    def lab_depth_km(self):
        p = self.params
        thickness = p.boundary_layer_erf_argument * self.length_km
        return np.minimum(thickness, p.gdh1_plate_thickness_km)

    def _temperature_and_gradient(self, z, length_km):
        """T (degC) and dT/dz (K km^-1) at depth ``z`` for erf length ``length_km``."""
        p = self.params
        excess = p.mantle_potential_temperature_c - p.surface_temperature_c
        excess = excess + p.adiabat_gradient_k_km * z  # T_a(z) - T0
        with np.errstate(divide="ignore", invalid="ignore"):
            x = z / length_km
            x = np.where((length_km == 0.0) & (z == 0.0), 0.0, x)
            erf = special.erf(x)
            # d/dz erf(z/L) = 2 exp(-(z/L)^2) / (sqrt(pi) L)
            d_erf = _TWO_OVER_SQRT_PI * np.exp(-x * x) / length_km
        temperature = p.surface_temperature_c + excess * erf
        return temperature, p.adiabat_gradient_k_km * erf + excess * d_erf

    def temperature_c(self, depth_km):
        """Temperature on the geotherm.

        Parameters
        ----------
        depth_km : array_like
            Depth below the seafloor, km; broadcast against the cells (negative gives NaN).

        Returns
        -------
        temperature_c : ndarray
            degC.
        """
        z = np.asarray(depth_km, dtype=np.float64)
        z = np.where(z >= 0.0, z, np.nan)
        return self._temperature_and_gradient(z, self.length_km)[0]

    def temperature_and_heat_flow(self, depth_km, surface_heat_flow_mw_m2):
        """Temperature and conductive heat flow at depth.

        Parameters
        ----------
        depth_km : array_like
            Depth below the seafloor, km; broadcast against the cells.
        surface_heat_flow_mw_m2 : array_like
            Observed surface heat flow, mW m^-2.

        Returns
        -------
        temperature_c : ndarray
            degC.
        heat_flow_mw_m2 : ndarray
            mW m^-2: the observed surface heat flow times the ratio of the geotherm
            gradient at depth to its gradient at the surface, i.e. a uniform conductivity
            chosen so that the model reproduces the observed surface heat flow. NaN at
            zero age.
        """
        p = self.params
        z = np.asarray(depth_km, dtype=np.float64)
        z = np.where(z >= 0.0, z, np.nan)
        temperature, gradient = self._temperature_and_gradient(z, self.length_km)
        q0 = np.asarray(surface_heat_flow_mw_m2, dtype=np.float64)
        # surface gradient 2 (T_p - T0) / (sqrt(pi) L)
        excess = p.mantle_potential_temperature_c - p.surface_temperature_c
        with np.errstate(divide="ignore", invalid="ignore"):
            surface_gradient = _TWO_OVER_SQRT_PI * excess / self.length_km
        surface_gradient = np.where(self.length_km > 0.0, surface_gradient, np.nan)
        heat_flow = np.where(q0 > 0.0, q0, np.nan) * gradient / surface_gradient
        return temperature, heat_flow

    def isotherm_depth_km(self, temperature_c):
        """Depth of an isotherm.

        Parameters
        ----------
        temperature_c : array_like
            Isotherm temperature, degC; broadcast against the cells.

        Returns
        -------
        depth_km : ndarray
            km. 0 where the isotherm is at or below the surface temperature; NaN where it
            is deeper than ``lab_max_depth_km`` or the age is invalid.

        Notes
        -----
        With ``u = z / L`` (``L = 2 sqrt(kappa t)``), ``eps = G L / (T_p - T0)`` and
        ``r = (T - T0) / (T_p - T0)`` the isotherm solves ``(1 + eps u) erf(u) = r``, so
        for one isotherm temperature ``u`` depends on ``eps`` only. For a single
        temperature below T_p, ``u(eps)`` is solved exactly at Chebyshev nodes spanning the
        cells' ``eps``, interpolated, and the interpolant is checked against exact solutions
        between the nodes (error below 1e-7 km, otherwise the per-cell solver is used).
        The per-cell solver is Newton iteration safeguarded by bisection (the geotherm
        increases monotonically with depth), started below T_p from the upper bound
        ``L erfinv(r)`` (the geotherm with G = 0 is colder) and above T_p from the
        adiabat depth ``(T - T_p) / G`` (a lower bound).
        """
        t_iso = np.asarray(temperature_c, dtype=np.float64)
        if t_iso.ndim == 0:
            depth = self._isotherm_depth_by_interpolation(float(t_iso))
            if depth is not None:
                return depth
        return self._isotherm_depth_by_newton(t_iso)

    def _isotherm_depth_by_interpolation(self, temperature_c):
        """Isotherm depth from an interpolant of ``u(eps)``; None if not applicable."""
        p = self.params
        excess = p.mantle_potential_temperature_c - p.surface_temperature_c
        ratio = (temperature_c - p.surface_temperature_c) / excess
        longest = np.fmax.reduce(self.length_km.ravel(), initial=0.0)  # NaN ignored
        if not (0.0 < ratio < 1.0) or not (0.0 < longest < np.inf):
            return None
        eps_scale = p.adiabat_gradient_k_km / excess  # eps = eps_scale * L
        # round the range up to a power of two so that blocks of cells share one interpolant
        length_cap = 2.0 ** np.ceil(np.log2(longest))
        eps_max = eps_scale * length_cap
        coefficients = _isotherm_interpolant(ratio, eps_max, length_cap)
        if coefficients is None:
            return None
        # x in [-1, 1] maps eps in [0, eps_max]
        x = self.length_km * (2.0 * eps_scale / eps_max) - 1.0
        depth = self.length_km * chebyshev.chebval(x, coefficients)
        return np.where(depth > p.lab_max_depth_km, np.nan, depth)

    def _isotherm_depth_by_newton(self, temperature_c):
        """Isotherm depth by safeguarded Newton iteration, cell by cell (vectorised)."""
        p = self.params
        t0, tp = p.surface_temperature_c, p.mantle_potential_temperature_c
        grad, z_max = p.adiabat_gradient_k_km, p.lab_max_depth_km
        t_iso, length = _as_float64(temperature_c, self.length_km)
        shape = t_iso.shape
        t_iso, length = t_iso.ravel(), length.ravel()
        out = np.full(t_iso.size, np.nan)
        valid = np.isfinite(t_iso) & np.isfinite(length)
        at_surface = valid & (t_iso <= t0)
        out[at_surface] = 0.0
        ridge = valid & ~at_surface & (length == 0.0)  # zero age: adiabat up to the surface
        out[ridge] = np.maximum((t_iso[ridge] - tp) / grad, 0.0)
        idx = np.flatnonzero(valid & ~at_surface & ~ridge)
        target, length = t_iso[idx], length[idx]
        below_tp = target < tp
        erf_bound = (target - t0) / (tp - t0)
        with np.errstate(invalid="ignore"):
            u_bound = special.erfinv(erf_bound)
        upper_bound = length * u_bound
        lo = np.where(below_tp, 0.0, (target - tp) / grad)
        hi = np.where(below_tp, np.minimum(upper_bound, z_max), z_max)
        # First Newton step from the upper bound costs no erf: there erf(z/L) = erf_bound.
        with np.errstate(divide="ignore", invalid="ignore"):  # inf bounds at or above T_p
            excess = tp - t0 + grad * upper_bound
            residual = (excess * erf_bound + t0) - target
            slope = grad * erf_bound + excess * _TWO_OVER_SQRT_PI * np.exp(-(u_bound**2)) / length
            first_step = upper_bound - residual / slope
        usable = below_tp & (first_step > lo) & (first_step < hi)
        z = np.where(usable, first_step, np.where(below_tp, hi, lo))
        # where the bracket top is z_max, the isotherm may lie deeper: NaN there
        check = hi >= z_max
        if check.any():
            t_max, _ = self._temperature_and_gradient(hi[check], length[check])
            reachable = np.ones(idx.size, dtype=bool)
            reachable[check] = t_max >= target[check]
            idx, target, length = idx[reachable], target[reachable], length[reachable]
            lo, hi, z = lo[reachable], hi[reachable], z[reachable]
        for _ in range(_SOLVER_MAX_ITERATIONS):
            if idx.size == 0:
                break
            t, dt_dz = self._temperature_and_gradient(z, length)
            residual = t - target
            lo = np.where(residual < 0.0, z, lo)
            hi = np.where(residual >= 0.0, z, hi)
            with np.errstate(divide="ignore", invalid="ignore"):
                z_next = z - residual / dt_dz
            newton = (z_next > lo) & (z_next < hi)
            z_next = np.where(newton, z_next, 0.5 * (lo + hi))
            # Newton converges quadratically: after a step of 1e-3 km the error is about
            # (|T''| / 2T') step^2 ~ (z / L^2) 1e-6 km, below 1e-6 km for L > ~1 km
            converged = (newton & (np.abs(z_next - z) <= _NEWTON_STEP_ACCEPT_KM)) | (
                hi - lo <= _BRACKET_TOLERANCE_KM
            )
            converged |= residual == 0.0
            out[idx[converged]] = np.where(residual == 0.0, z, z_next)[converged]
            keep = ~converged
            idx, z, lo, hi = idx[keep], z_next[keep], lo[keep], hi[keep]
            target, length = target[keep], length[keep]
        else:  # pragma: no cover - bisection guarantees convergence long before
            out[idx] = z
        return out.reshape(shape)


@functools.lru_cache(maxsize=256)
def _isotherm_interpolant(ratio, eps_max, length_km):
    """Chebyshev coefficients of u(eps) on [0, eps_max], or None if not accurate enough.

    ``u`` solves ``(1 + eps u) erf(u) = ratio``; the interpolant is accepted when its
    error times ``length_km`` is below the tolerance at points between the nodes.
    """
    nodes = chebyshev.chebpts1(_INTERPOLATION_DEGREE + 1)
    coefficients = chebyshev.chebfit(
        nodes, _erf_isotherm_u(ratio, 0.5 * eps_max * (nodes + 1.0)), _INTERPOLATION_DEGREE
    )
    check = np.linspace(-1.0, 1.0, 4 * _INTERPOLATION_DEGREE + 1)
    exact = _erf_isotherm_u(ratio, 0.5 * eps_max * (check + 1.0))
    error = np.max(np.abs(chebyshev.chebval(check, coefficients) - exact))
    if not error * length_km <= _INTERPOLATION_TOLERANCE_KM:
        return None
    coefficients.flags.writeable = False
    return coefficients


def _erf_isotherm_u(ratio, eps):
    """Solve ``(1 + eps u) erf(u) = ratio`` for u (0 < ratio < 1, eps >= 0 array), exactly.

    Newton iteration from ``erfinv(ratio)``, an upper bound of the root; used on a few
    dozen interpolation nodes only.
    """
    u = np.full(eps.shape, special.erfinv(ratio))
    for _ in range(_SOLVER_MAX_ITERATIONS):
        erf = special.erf(u)
        residual = (1.0 + eps * u) * erf - ratio
        slope = eps * erf + (1.0 + eps * u) * _TWO_OVER_SQRT_PI * np.exp(-u * u)
        step = residual / slope
        u = np.maximum(u - step, 0.0)
        if np.all(np.abs(step) <= 1e-15 * np.maximum(u, 1.0)):
            break
    return u


def oceanic_geotherm_temperature_c(
    depth_km, age_ma, params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS
):
    """Half-space cooling geotherm with an adiabatic interior.

    Parameters
    ----------
    depth_km : array_like
        Depth below the seafloor, km (negative gives NaN).
    age_ma : array_like
        Plate age, Ma.
    params : ThermalParameters, optional
        ``surface_temperature_c``, ``mantle_potential_temperature_c``,
        ``adiabat_gradient_k_km`` and ``mantle_thermal_diffusivity_m2_s``.

    Returns
    -------
    temperature_c : ndarray
        degC.

    Notes
    -----
    See :class:`OceanicGeotherm`:

    .. math:: T = T_0 + (T_p + G z - T_0)\\,\\mathrm{erf}\\left(\\frac{z}{2\\sqrt{\\kappa t}}\\right)

    Examples
    --------
    >>> p = ThermalParameters(surface_temperature_c=0.0)
    >>> print(f"{float(oceanic_geotherm_temperature_c(10.0, 25.0, p)):.0f}")
    299
    """
    z, age = _as_float64(depth_km, age_ma)
    return _scalar_if_0d(OceanicGeotherm(age, params).temperature_c(z))


def oceanic_heat_flow_mw_m2(
    depth_km,
    age_ma,
    surface_heat_flow_mw_m2,
    params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS,
):
    """Conductive heat flow at depth in the oceanic geotherm, scaled to the observed surface.

    Parameters
    ----------
    depth_km : array_like
        Depth below the seafloor, km.
    age_ma : array_like
        Plate age, Ma (> 0; zero age gives NaN).
    surface_heat_flow_mw_m2 : array_like
        Observed surface heat flow, mW m^-2.
    params : ThermalParameters, optional
        Thermal parameters (as for :func:`oceanic_geotherm_temperature_c`).

    Returns
    -------
    heat_flow_mw_m2 : ndarray
        mW m^-2: ``q0 (dT/dz)(z) / (dT/dz)(0)``.

    Notes
    -----
    The conductivity is taken uniform and such that the model's surface heat flow
    equals the observed one; the heat flow at depth is then the observed value times
    the ratio of the geotherm gradient at depth to that at the surface,
    :math:`(dT/dz)(0) = (T_p - T_0) / \\sqrt{\\pi \\kappa t}`.

    Examples
    --------
    >>> p = ThermalParameters(surface_temperature_c=0.0)
    >>> print(f"{float(oceanic_heat_flow_mw_m2(7.0, 25.5, 101.0, p)):.1f}")
    99.6
    """
    z, age, q0 = _as_float64(depth_km, age_ma, surface_heat_flow_mw_m2)
    return _scalar_if_0d(OceanicGeotherm(age, params).temperature_and_heat_flow(z, q0)[1])


def oceanic_lab_depth_km(age_ma, params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS):
    """Base of the oceanic thermal lithosphere.

    Parameters
    ----------
    age_ma : array_like
        Plate age, Ma.
    params : ThermalParameters, optional
        ``mantle_thermal_diffusivity_m2_s``, ``boundary_layer_erf_argument`` and
        ``gdh1_plate_thickness_km``.

    Returns
    -------
    lab_depth_km : ndarray
        The half-space boundary-layer thickness ``2 erf_argument sqrt(kappa t)``, capped at
        the GDH1 plate thickness (Stein & Stein 1992), km.

    Examples
    --------
    >>> print(f"{float(oceanic_lab_depth_km(25.0)):.1f}")
    58.5
    """
    return _scalar_if_0d(OceanicGeotherm(age_ma, params).lab_depth_km)


def oceanic_isotherm_depth_km(
    temperature_c, age_ma, params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS
):
    """Depth of an isotherm in the oceanic geotherm.

    Parameters
    ----------
    temperature_c : array_like
        Isotherm temperature, degC.
    age_ma : array_like
        Plate age, Ma.
    params : ThermalParameters, optional
        As for :func:`oceanic_geotherm_temperature_c`, plus ``lab_max_depth_km``.

    Returns
    -------
    depth_km : ndarray
        km. 0 where the isotherm is at or below the surface temperature; NaN where it
        is deeper than ``lab_max_depth_km`` or inputs are invalid.

    Notes
    -----
    The geotherm of :class:`OceanicGeotherm` increases monotonically with depth; the
    isotherm is found by Newton iteration safeguarded by bisection within
    ``[0, lab_max_depth_km]``, started below T_p from the upper bound
    :math:`2\\sqrt{\\kappa t}\\,\\mathrm{erf}^{-1}((T - T_0)/(T_p - T_0))`.

    Examples
    --------
    >>> p = ThermalParameters(surface_temperature_c=0.0)
    >>> print(f"{float(oceanic_isotherm_depth_km(300.0, 25.0, p)):.2f}")
    10.02
    """
    t_iso, age = _as_float64(temperature_c, age_ma)
    return _scalar_if_0d(OceanicGeotherm(age, params).isotherm_depth_km(t_iso))
