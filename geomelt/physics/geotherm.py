"""Steady conductive geotherms of continental lithosphere and the thermal lithosphere base.

A cell's geotherm is fixed by its surface heat flow q0 and Moho depth. Surface
heat flow is split into heat produced by radioactive decay in the crust (and a
little in the lithospheric mantle) and the heat that enters the lithosphere
from below; heat then flows by steady one-dimensional conduction. Below the
thermal lithosphere the mantle convects and follows a linear adiabat
``T_p + G z``. The base of the thermal lithosphere (LAB) is the shallowest
depth where the conductive geotherm meets that adiabat.

Two partitions of surface heat flow are offered (``params.heat_flow_partition``):

``"hasterok_chapman"`` (default)
    Layers of uniform heat production (Hasterok & Chapman 2011): an upper
    crust that produces a fixed fraction of q0, a lower crust and a mantle
    with fixed heat production. Within each layer the geotherm is a parabola
    (Turcotte & Schubert 2002, section 4-6), so temperatures, the LAB and
    isotherm depths are closed-form.
``"pollack_chapman"``
    Heat production decreasing exponentially with depth, with the mantle
    (reduced) heat flow a fixed fraction of q0 (Pollack & Chapman 1977;
    Turcotte & Schubert 2002, eq. 4-31). The LAB and isotherm depths are
    found by a vectorised Newton iteration.

Conventions: depth z in km, positive down from the surface (z = 0); temperature
in degC; heat flow in mW m^-2 (positive upward); heat production in uW m^-3;
conductivity in W m^-1 K^-1. Inputs broadcast against each other, NaN in gives
NaN out, and non-positive heat flow or Moho depth gives NaN. Negative depths
(above the surface) give NaN.

References
----------
Hasterok, D. & Chapman, D. S. (2011). Heat production and geotherms for the
continental lithosphere. Earth Planet. Sci. Lett. 307, 59-70.

Pollack, H. N. & Chapman, D. S. (1977). On the regional variation of heat flow,
geotherms, and lithospheric thickness. Tectonophysics 38, 279-296.

Turcotte, D. L. & Schubert, G. (2002). Geodynamics, 2nd ed. Cambridge
University Press, chapter 4. Section and equation numbers cited from it here are
from memory.
"""

from __future__ import annotations

import numpy as np

from geomelt import constants as C
from geomelt import units
from geomelt.parameters import ThermalParameters

__all__ = [
    "DEFAULT_THERMAL_PARAMETERS",
    "ContinentalGeotherm",
    "conductive_heat_flow_mw_m2",
    "conductive_temperature_c",
    "geotherm_temperature_c",
    "isotherm_depth_km",
    "lab_depth_km",
    "mantle_adiabat_temperature_c",
]

DEFAULT_THERMAL_PARAMETERS = ThermalParameters()
"""Default thermal parameters (module-level singleton used as a default argument)."""

# Coherent-unit factors (both are exactly 1 but spelled out through geomelt.units):
# heat flow / conductivity -> temperature gradient: (mW m^-2) / (W m^-1 K^-1) -> K km^-1
_K_KM_PER_MW_M2_PER_W_M_K = units.mw_m2_to_w_m2(1.0) * units.km_to_m(1.0)
# heat production x thickness -> heat flow: (uW m^-3) x km -> mW m^-2
_MW_M2_PER_UW_M3_KM = units.w_m2_to_mw_m2(units.uw_m3_to_w_m3(1.0) * units.km_to_m(1.0))

_NEWTON_TOLERANCE_KM = 1.0e-7  # 0.1 mm: far below any map resolution
_NEWTON_MAX_ITERATIONS = 100  # quadratic convergence needs < 10; tangent cases converge linearly


# --------------------------------------------------------------------------------------
# small helpers
# --------------------------------------------------------------------------------------
def _as_float64(*values):
    """Broadcast inputs to one shape as float64 arrays (read-only views are fine)."""
    return np.broadcast_arrays(*(np.asarray(v, dtype=np.float64) for v in values))


def _valid_surface_inputs(heat_flow_mw_m2, moho_depth_km):
    """Heat flow and Moho depth with NaN where either is NaN, infinite or non-positive."""
    q0, moho = _as_float64(heat_flow_mw_m2, moho_depth_km)
    ok = (q0 > 0.0) & (q0 < np.inf) & (moho > 0.0) & (moho < np.inf)
    return np.where(ok, q0, np.nan), np.where(ok, moho, np.nan)


def _valid_depth(depth_km):
    """Depth with NaN above the surface."""
    return np.where(depth_km >= 0.0, depth_km, np.nan)


def _scalar_if_0d(values):
    """Return numpy scalars for 0-d results, as numpy ufuncs do."""
    return np.asarray(values)[()]


def mantle_adiabat_temperature_c(
    depth_km,
    potential_temperature_c=C.MANTLE_POTENTIAL_TEMPERATURE_C.value,
    gradient_k_km=C.ADIABAT_GRADIENT_K_KM.value,
):
    """Temperature of the convecting mantle on a linear adiabat.

    Parameters
    ----------
    depth_km : array_like
        Depth below the surface, km.
    potential_temperature_c : float or array_like, optional
        Mantle potential temperature T_p (the adiabat projected to the surface), degC.
        Default: ``mantle_potential_temperature_c`` (Herzberg, Condie & Korenaga 2010).
    gradient_k_km : float or array_like, optional
        Adiabatic gradient G, K km^-1. Default: ``adiabat_gradient_k_km`` (a linear fit
        to the upper-mantle adiabat of Katsura 2022).

    Returns
    -------
    temperature_c : ndarray
        ``T_p + G z``, degC.

    Notes
    -----
    .. math:: T_a(z) = T_p + G\\,z

    A linear approximation of the isentrope of the upper mantle.

    Examples
    --------
    >>> print(f"{float(mantle_adiabat_temperature_c(100.0, 1350.0, 0.45)):.1f}")
    1395.0
    """
    z, tp, g = _as_float64(depth_km, potential_temperature_c, gradient_k_km)
    return _scalar_if_0d(tp + g * _valid_depth(z))


# --------------------------------------------------------------------------------------
# Layered (Hasterok & Chapman) profile
# --------------------------------------------------------------------------------------
class _LayeredProfile:
    """Upper crust, lower crust and lithospheric mantle, each of uniform heat production.

    Inside a layer of heat production H and conductivity k, with ``s = z - z_top``
    (Turcotte & Schubert 2002, section 4-6)::

        q(s) = q_top - H s                              heat flow
        T(s) = T_top + q_top s / k - H s^2 / (2k)       = T_top + s (g - c s)

    with gradient ``g = q_top / k`` and curvature ``c = H / (2k)``. The temperature at any
    depth is the sum of the three layers' contributions, each evaluated at the part of the
    layer above that depth (clipped, branch-free). Where heat production would drive the
    heat flow below zero (the crust produces more heat than reaches the surface), the
    heat flow is held at zero below that depth and the temperature at its maximum: the
    layer's ``s`` is clipped at the vertex ``q_top / H`` of its parabola.
    """

    def __init__(self, heat_flow_mw_m2, moho_depth_km, params):
        p = params
        q0, moho = _valid_surface_inputs(heat_flow_mw_m2, moho_depth_km)
        self.shape = q0.shape
        self.surface_temperature_c = t0 = p.surface_temperature_c
        per_k_crust = _K_KM_PER_MW_M2_PER_W_M_K / p.crust_conductivity_w_m_k
        per_k_mantle = _K_KM_PER_MW_M2_PER_W_M_K / p.mantle_conductivity_w_m_k
        d_uc = p.upper_crust_thickness_km

        # upper crust [0, z_uc]: H_uc = f q0 / D_uc (Hasterok & Chapman 2011), truncated at
        # the Moho in thin crust. Its heat flow stays >= (1 - f) q0 > 0, so no vertex.
        self.z_uc = z_uc = np.minimum(moho, d_uc)
        drop_uc_per_q0 = p.upper_crust_heat_fraction / d_uc  # (mW m^-2 per km) per q0
        self.drop_uc = q0 * drop_uc_per_q0  # H_uc as a heat-flow drop, mW m^-2 km^-1
        self.g_uc = q0 * per_k_crust
        self.c_uc = self.drop_uc * (0.5 * per_k_crust)
        self.t_uc = t0 + z_uc * (self.g_uc - self.c_uc * z_uc)
        q_uc = q0 - self.drop_uc * z_uc

        # lower crust [z_uc, moho]
        self.drop_lc = p.lower_crust_heat_production_uw_m3 * _MW_M2_PER_UW_M3_KM
        self.g_lc = q_uc * per_k_crust
        self.c_lc = self.drop_lc * (0.5 * per_k_crust)
        thickness_lc = moho - z_uc
        self.s_lc_max = np.minimum(thickness_lc, _vertex_km(q_uc, self.drop_lc))
        self.t_moho = self.t_uc + self.s_lc_max * (self.g_lc - self.c_lc * self.s_lc_max)
        q_moho_unclipped = q_uc - self.drop_lc * thickness_lc
        self.q_moho = np.maximum(q_moho_unclipped, 0.0)
        self.crust_heat_exceeds_surface = q_moho_unclipped < 0.0

        # lithospheric mantle [moho, inf)
        self.moho = moho
        self.drop_m = p.mantle_heat_production_uw_m3 * _MW_M2_PER_UW_M3_KM
        self.g_m = self.q_moho * per_k_mantle
        self.c_m = self.drop_m * (0.5 * per_k_mantle)
        self.s_m_max = _vertex_km(self.q_moho, self.drop_m)
        self.q0 = q0

    @property
    def moho_temperature_c(self):
        return self.t_moho

    @property
    def moho_heat_flow_mw_m2(self):
        return self.q_moho

    def _depth_in_layers(self, z):
        """Depth below the top of each layer, clipped to the layer (and its vertex)."""
        s_uc = np.minimum(z, self.z_uc)
        s_lc = np.minimum(np.maximum(z - self.z_uc, 0.0), self.s_lc_max)
        s_m = np.minimum(np.maximum(z - self.moho, 0.0), self.s_m_max)
        return s_uc, s_lc, s_m

    def temperature_c(self, z):
        s_uc, s_lc, s_m = self._depth_in_layers(z)
        return (
            self.surface_temperature_c
            + s_uc * (self.g_uc - self.c_uc * s_uc)
            + s_lc * (self.g_lc - self.c_lc * s_lc)
            + s_m * (self.g_m - self.c_m * s_m)
        )

    def heat_flow_mw_m2(self, z):
        s_uc, s_lc, s_m = self._depth_in_layers(z)
        q = self.q0 - self.drop_uc * s_uc - self.drop_lc * s_lc - self.drop_m * s_m
        return np.maximum(q, 0.0)

    def crossing_km(self, intercept_c, gradient_k_km, max_depth_km):
        """Shallowest depth where the conductive geotherm reaches the line ``A + B z``.

        ``B >= 0`` is a scalar. Returns 0 where ``A`` is at or below the surface
        temperature, ``inf`` where there is no crossing at or above ``max_depth_km``,
        NaN for invalid cells.
        """
        a_line = np.asarray(intercept_c, dtype=np.float64)
        b_line = float(gradient_k_km)
        # line minus geotherm at the top of each layer
        gap_surface = a_line - self.surface_temperature_c
        gap_uc = a_line + b_line * self.z_uc - self.t_uc
        gap_moho = a_line + b_line * self.moho - self.t_moho
        with np.errstate(divide="ignore", invalid="ignore"):
            s_uc, _, _ = _first_root(self.c_uc, b_line - self.g_uc, gap_surface)
            s_lc, _, _ = _first_root(self.c_lc, b_line - self.g_lc, gap_uc)
            s_m, disc_m, b_m = _first_root(self.c_m, b_line - self.g_m, gap_moho)
        # the mantle may have no crossing; the crust layers always have one once selected
        mantle = np.where((disc_m < 0.0) | (b_m >= 0.0), np.inf, self.moho + s_m)
        # the crossing lies in the first layer whose base is at or above the line
        depth = np.where(gap_uc <= 0.0, s_uc, np.where(gap_moho <= 0.0, self.z_uc + s_lc, mantle))
        depth = np.where(depth > max_depth_km, np.inf, depth)
        return np.where(gap_surface <= 0.0, 0.0, depth)


def _vertex_km(heat_flow_mw_m2, drop_mw_m2_km):
    """Depth below a layer top where its heat flow reaches zero (inf without production)."""
    if drop_mw_m2_km > 0.0:
        return heat_flow_mw_m2 / drop_mw_m2_km
    return np.inf


def _first_root(a, b, c):
    """Smaller root of ``a s^2 + b s + c = 0`` (a >= 0, c > 0), its discriminant and b.

    Written as ``2c / (-b + sqrt(b^2 - 4ac))`` to avoid cancellation; valid for a = 0.
    """
    disc = b * b - 4.0 * a * c
    return 2.0 * c / (np.sqrt(np.maximum(disc, 0.0)) - b), disc, b


# --------------------------------------------------------------------------------------
# Exponential (Pollack & Chapman / Turcotte & Schubert eq. 4-31) profile
# --------------------------------------------------------------------------------------
def _exponential_temperature_and_gradient(z, reduced, produced, moho, decay_moho, params):
    """T (degC), dT/dz (K km^-1) and d2T/dz2 (K km^-2) of the exponential geotherm.

    ``reduced`` is the mantle heat flow q_m and ``produced`` = q0 - q_m = rho H0 h_r
    (both mW m^-2); ``decay_moho`` is ``exp(-moho / h_r)``. Heat production
    ``(produced / h_r) exp(-z / h_r)`` continues below the Moho, where the conductivity
    changes from k_crust to k_mantle.
    """
    p = params
    h_r = p.heat_production_depth_scale_km
    to_gradient_crust = _K_KM_PER_MW_M2_PER_W_M_K / p.crust_conductivity_w_m_k
    to_gradient_mantle = _K_KM_PER_MW_M2_PER_W_M_K / p.mantle_conductivity_w_m_k
    z_crust = np.minimum(z, moho)
    decay = np.exp(-z / h_r)
    decay_crust = np.maximum(decay, decay_moho)  # exp(-min(z, moho) / h_r)
    # T&S eq. 4-31 in the crust: T = T0 + q_m z / k + (rho H0 h_r^2 / k)(1 - exp(-z/h_r))
    t_crust = reduced * z_crust + produced * h_r * (1.0 - decay_crust)
    # the same integral with k_mantle below the Moho
    t_mantle = reduced * (z - z_crust) + produced * h_r * (decay_crust - decay)
    temperature = (
        p.surface_temperature_c + t_crust * to_gradient_crust + t_mantle * to_gradient_mantle
    )
    # q(z) = q_m + rho H0 h_r exp(-z/h_r)   (T&S eq. 4-30 at z = 0)
    per_k = np.where(z < moho, to_gradient_crust, to_gradient_mantle)
    gradient = (reduced + produced * decay) * per_k
    # d2T/dz2 = -H(z) / k = -(rho H0 h_r / h_r) exp(-z/h_r) / k
    curvature = (produced / h_r) * decay * per_k
    return temperature, gradient, -curvature


class _ExponentialProfile:
    """Exponentially decreasing heat production with a fixed reduced heat flow fraction."""

    def __init__(self, heat_flow_mw_m2, moho_depth_km, params):
        q0, moho = _valid_surface_inputs(heat_flow_mw_m2, moho_depth_km)
        self.params = params
        self.shape = q0.shape
        self.surface_temperature_c = params.surface_temperature_c
        self.reduced_mw_m2 = q0 * params.reduced_heat_flow_fraction  # q_m
        self.produced_mw_m2 = q0 - self.reduced_mw_m2  # rho H0 h_r = q0 - q_m (T&S eq. 4-30)
        self.moho_km = moho
        self.decay_moho = np.exp(-moho / params.heat_production_depth_scale_km)
        self.moho_temperature_c = self.temperature_c(moho)
        self.moho_heat_flow_mw_m2 = self.heat_flow_mw_m2(moho)
        # heat flow never drops below q_m > 0 in this model
        self.crust_heat_exceeds_surface = np.zeros(self.shape, dtype=bool)

    def temperature_c(self, z):
        t, _, _ = _exponential_temperature_and_gradient(
            z, self.reduced_mw_m2, self.produced_mw_m2, self.moho_km, self.decay_moho, self.params
        )
        return t

    def heat_flow_mw_m2(self, z):
        return self.reduced_mw_m2 + self.produced_mw_m2 * np.exp(
            -z / self.params.heat_production_depth_scale_km
        )

    def _bound_crossing_km(self, a_line, b_line, reduced, produced, moho):
        """Crossing of ``A + B z`` with an upper bound of the geotherm: a lower bound of the root.

        Dropping ``exp(-z / h_r)`` from eq. 4-31 (and taking all produced heat through
        k_crust, as k_mantle >= k_crust) gives the piecewise-linear upper bound
        ``T0 + (q_m z_c + rho H0 h_r^2) / k_c + q_m (z - z_c) / k_m``, z_c = min(z, Moho).
        Its crossing lies at or above the geotherm's first crossing and, for crossings
        several h_r deep, within metres of it. ``inf`` where the bound never crosses.
        """
        p = self.params
        per_k_crust = _K_KM_PER_MW_M2_PER_W_M_K / p.crust_conductivity_w_m_k
        per_k_mantle = _K_KM_PER_MW_M2_PER_W_M_K / p.mantle_conductivity_w_m_k
        offset = p.surface_temperature_c + produced * p.heat_production_depth_scale_km * per_k_crust
        with np.errstate(divide="ignore", invalid="ignore"):
            slope_crust = reduced * per_k_crust - b_line
            z_crust = np.maximum((a_line - offset) / slope_crust, 0.0)
            t_moho = offset + reduced * moho * per_k_crust
            slope_mantle = reduced * per_k_mantle - b_line
            z_mantle = moho + (a_line + b_line * moho - t_moho) / slope_mantle
        in_crust = (slope_crust > 0.0) & (z_crust <= moho)
        return np.where(in_crust, z_crust, np.where(slope_mantle > 0.0, z_mantle, np.inf))

    def crossing_km(self, intercept_c, gradient_k_km, max_depth_km):
        """Shallowest crossing with ``A + B z``: monotone Newton iteration.

        The geotherm is concave (heat flow decreases with depth and k_mantle >= k_crust),
        so ``g(z) = T(z) - A - B z`` is concave, and Newton steps started left of the first
        root (from :meth:`_bound_crossing_km`, where ``g <= 0``) increase monotonically and
        never pass it. A non-positive slope ``g'`` while ``g < 0`` means there is no root;
        an iterate deeper than ``max_depth_km`` means the root (if any) is deeper.
        """
        b_line = float(gradient_k_km)
        # per-cell arrays, compacted to the unfinished cells as the iteration proceeds
        a_line, reduced, produced, moho, decay_moho = (
            v.ravel()
            for v in _as_float64(
                intercept_c, self.reduced_mw_m2, self.produced_mw_m2, self.moho_km, self.decay_moho
            )
        )
        shape = np.broadcast_shapes(np.shape(intercept_c), self.shape)
        out = np.full(a_line.size, np.inf)
        invalid = np.isnan(a_line) | np.isnan(reduced) | np.isnan(moho)
        out[invalid] = np.nan
        at_surface = ~invalid & (a_line <= self.surface_temperature_c)
        out[at_surface] = 0.0
        idx = np.flatnonzero(~invalid & ~at_surface)
        cells = tuple(v[idx] for v in (a_line, reduced, produced, moho, decay_moho))
        z = self._bound_crossing_km(cells[0], b_line, *cells[1:4])
        near = z <= max_depth_km  # else the bound, and so the geotherm, crosses deeper or never
        idx, z, cells = idx[near], z[near], tuple(v[near] for v in cells)
        for _ in range(_NEWTON_MAX_ITERATIONS):
            if idx.size == 0:
                break
            a_line, reduced, produced, moho, decay_moho = cells
            t, dt_dz, d2t_dz2 = _exponential_temperature_and_gradient(
                z, reduced, produced, moho, decay_moho, self.params
            )
            g = t - a_line - b_line * z
            slope = dt_dz - b_line
            with np.errstate(divide="ignore", invalid="ignore"):
                step = -g / slope
            z_next = z + step
            no_root = ((slope <= 0.0) & (g < 0.0)) | (z_next > max_depth_km)
            reached = (slope <= 0.0) & (g >= 0.0)  # rounding at a tangent point
            # Newton error left after the step: |T''| step^2 / (2 g') (T'' is largest at z,
            # since |T''| decreases with depth), valid when no Moho kink lies in between
            smooth = (z_next <= moho) | (z >= moho)
            small = np.abs(step) <= _NEWTON_TOLERANCE_KM
            small |= smooth & (-d2t_dz2 * step * step <= 2.0 * _NEWTON_TOLERANCE_KM * slope)
            converged = ~no_root & (reached | small)
            out[idx[converged]] = np.where(reached, z, z_next)[converged]
            keep = ~(no_root | converged)
            idx, z, cells = idx[keep], z_next[keep], tuple(v[keep] for v in cells)
        else:  # pragma: no cover - only for pathological tangent cases
            out[idx] = z
        return out.reshape(shape)


# --------------------------------------------------------------------------------------
# Public model object and functions
# --------------------------------------------------------------------------------------
class ContinentalGeotherm:
    """Steady conductive geotherm of each cell, built once and evaluated many times.

    Parameters
    ----------
    heat_flow_mw_m2 : array_like
        Surface heat flow q0, mW m^-2. NaN or non-positive values give NaN everywhere.
    moho_depth_km : array_like
        Depth of the Moho (crustal thickness), km. NaN or non-positive gives NaN.
    params : ThermalParameters, optional
        Partition, heat production, conductivities, surface temperature and adiabat.

    Attributes
    ----------
    shape : tuple of int
        Broadcast shape of the two inputs.
    moho_temperature_c : ndarray
        Conductive temperature at the Moho, degC.
    moho_heat_flow_mw_m2 : ndarray
        Conductive heat flow at the Moho (heat entering the crust from the mantle),
        mW m^-2. Zero where the crust produces more heat than the surface loses.
    crust_heat_exceeds_surface : ndarray of bool
        True where the partition's crustal heat production is larger than the surface heat
        flow (possible only in the layered partition at very low heat flow); there heat flow
        is held at zero from the depth where it vanishes and the geotherm is isothermal below.
    lab_depth_km : ndarray
        Thermal lithosphere base, km (NaN where there is no crossing shallower than
        ``params.lab_max_depth_km``).

    Notes
    -----
    See the module docstring for the two partitions. The full geotherm
    (:meth:`temperature_c`) is conductive above the LAB and adiabatic below it; where
    there is no LAB within ``lab_max_depth_km`` it is conductive throughout.

    Examples
    --------
    >>> p = ThermalParameters(surface_temperature_c=0.0)
    >>> g = ContinentalGeotherm(60.0, 40.0, p)
    >>> print(f"{float(g.moho_temperature_c):.0f} degC, LAB {float(g.lab_depth_km):.0f} km")
    714 degC, LAB 100 km
    """

    def __init__(
        self, heat_flow_mw_m2, moho_depth_km, params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS
    ):
        self.params = params
        if params.heat_flow_partition == "pollack_chapman":
            self._profile = _ExponentialProfile(heat_flow_mw_m2, moho_depth_km, params)
        else:
            self._profile = _LayeredProfile(heat_flow_mw_m2, moho_depth_km, params)
        self.shape = self._profile.shape
        self._lab_crossing_km = None

    @property
    def moho_temperature_c(self):
        return self._profile.moho_temperature_c

    @property
    def moho_heat_flow_mw_m2(self):
        return self._profile.moho_heat_flow_mw_m2

    @property
    def crust_heat_exceeds_surface(self):
        return self._profile.crust_heat_exceeds_surface

    def _lab_or_inf_km(self):
        """LAB depth with ``inf`` where there is none within ``lab_max_depth_km``."""
        if self._lab_crossing_km is None:
            p = self.params
            self._lab_crossing_km = self._profile.crossing_km(
                p.mantle_potential_temperature_c, p.adiabat_gradient_k_km, p.lab_max_depth_km
            )
        return self._lab_crossing_km

    @property
    def lab_depth_km(self):
        lab = self._lab_or_inf_km()
        return np.where(np.isinf(lab), np.nan, lab)

    def conductive_temperature_c(self, depth_km):
        """Conductive temperature, ignoring the adiabat.

        Parameters
        ----------
        depth_km : array_like
            Depth, km; broadcast against the cells (negative gives NaN).

        Returns
        -------
        temperature_c : ndarray
            degC.
        """
        return self._profile.temperature_c(_valid_depth(np.asarray(depth_km, dtype=np.float64)))

    def conductive_heat_flow_mw_m2(self, depth_km):
        """Conductive (upward) heat flow.

        Parameters
        ----------
        depth_km : array_like
            Depth, km; broadcast against the cells.

        Returns
        -------
        heat_flow_mw_m2 : ndarray
            mW m^-2.
        """
        return self._profile.heat_flow_mw_m2(_valid_depth(np.asarray(depth_km, dtype=np.float64)))

    def temperature_c(self, depth_km):
        """Temperature on the full geotherm: conductive above the LAB, adiabat below.

        Parameters
        ----------
        depth_km : array_like
            Depth, km; broadcast against the cells.

        Returns
        -------
        temperature_c : ndarray
            degC.
        """
        p = self.params
        z = _valid_depth(np.asarray(depth_km, dtype=np.float64))
        conductive = self._profile.temperature_c(z)
        adiabat = p.mantle_potential_temperature_c + p.adiabat_gradient_k_km * z
        return np.where(z >= self._lab_or_inf_km(), adiabat, conductive)

    def isotherm_depth_km(self, temperature_c):
        """Shallowest depth of an isotherm along the full geotherm.

        Parameters
        ----------
        temperature_c : array_like
            Isotherm temperature, degC; broadcast against the cells.

        Returns
        -------
        depth_km : ndarray
            km. 0 where the isotherm is at or below the surface temperature; NaN where it
            is deeper than ``params.lab_max_depth_km`` or the cell is invalid.
        """
        p = self.params
        t_iso = np.asarray(temperature_c, dtype=np.float64)
        lab = self._lab_or_inf_km()
        t_lab = p.mantle_potential_temperature_c + p.adiabat_gradient_k_km * lab
        on_adiabat = t_iso > t_lab  # False where there is no LAB (t_lab = inf) or NaN
        conductive = self._profile.crossing_km(t_iso, 0.0, p.lab_max_depth_km)
        adiabatic = (t_iso - p.mantle_potential_temperature_c) / p.adiabat_gradient_k_km
        depth = np.where(on_adiabat, adiabatic, conductive)
        return np.where(depth > p.lab_max_depth_km, np.nan, depth)


def conductive_temperature_c(
    depth_km,
    heat_flow_mw_m2,
    moho_depth_km,
    params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS,
):
    """Steady conductive temperature at depth (continental lithosphere).

    Parameters
    ----------
    depth_km : array_like
        Depth below the surface, km (negative gives NaN).
    heat_flow_mw_m2 : array_like
        Surface heat flow q0, mW m^-2.
    moho_depth_km : array_like
        Moho depth (crustal thickness), km.
    params : ThermalParameters, optional
        ``heat_flow_partition``, heat production, conductivities and surface temperature.

    Returns
    -------
    temperature_c : ndarray
        Conductive temperature, degC, of the broadcast shape of the inputs. Below the
        LAB this is the conductive extrapolation, hotter than the adiabat; use
        :func:`geotherm_temperature_c` for the full geotherm.

    Notes
    -----
    ``"hasterok_chapman"``: in each layer of uniform heat production H and
    conductivity k (Turcotte & Schubert 2002, section 4-6),

    .. math:: T(z) = T_{top} + \\frac{q_{top}\\,s}{k} - \\frac{H s^2}{2k},\\qquad
              q(z) = q_{top} - H s,\\qquad s = z - z_{top}

    with H = f q0 / D_uc in the upper crust [0, min(D_uc, Moho)] (f = 0.26,
    D_uc = 16 km; Hasterok & Chapman 2011), the lower-crust H below it and the
    mantle H below the Moho, where k changes from k_crust to k_mantle.

    ``"pollack_chapman"``: q_m = r q0 (Pollack & Chapman 1977), rho H0 h_r = q0 - q_m
    and (Turcotte & Schubert 2002, eq. 4-31)

    .. math:: T(z) = T_0 + \\frac{q_m z}{k} + \\frac{\\rho H_0 h_r^2}{k}(1 - e^{-z/h_r})

    continued below the Moho with k_mantle.

    Examples
    --------
    Turcotte & Schubert (2002) eq. 4-31 with q0 = 60 mW m^-2, k = 2.5, T0 = 0:

    >>> p = ThermalParameters(heat_flow_partition="pollack_chapman", surface_temperature_c=0.0,
    ...                       crust_conductivity_w_m_k=2.5, mantle_conductivity_w_m_k=2.5)
    >>> print(f"{float(conductive_temperature_c(35.0, 60.0, 40.0, p)):.1f}")
    597.1
    """
    z, q0, moho = _as_float64(depth_km, heat_flow_mw_m2, moho_depth_km)
    return _scalar_if_0d(ContinentalGeotherm(q0, moho, params).conductive_temperature_c(z))


def conductive_heat_flow_mw_m2(
    depth_km,
    heat_flow_mw_m2,
    moho_depth_km,
    params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS,
):
    """Conductive heat flow at depth (e.g. the heat flow entering the crust at the Moho).

    Parameters
    ----------
    depth_km : array_like
        Depth below the surface, km.
    heat_flow_mw_m2 : array_like
        Surface heat flow q0, mW m^-2.
    moho_depth_km : array_like
        Moho depth, km.
    params : ThermalParameters, optional
        Partition and heat production.

    Returns
    -------
    heat_flow_mw_m2 : ndarray
        Upward conductive heat flow, mW m^-2: q0 minus the heat produced above
        ``depth_km``. In the layered partition it is held at zero where the crust above
        would produce more than q0.

    Notes
    -----
    .. math:: q(z) = q_0 - \\int_0^z H(z')\\,dz'

    Examples
    --------
    Hasterok & Chapman (2011) partition, q0 = 60 mW m^-2, 40 km crust:
    60 - 0.26 * 60 - 0.4 * 24 = 34.8 mW m^-2 enters the crust.

    >>> print(f"{float(conductive_heat_flow_mw_m2(40.0, 60.0, 40.0)):.1f}")
    34.8
    """
    z, q0, moho = _as_float64(depth_km, heat_flow_mw_m2, moho_depth_km)
    return _scalar_if_0d(ContinentalGeotherm(q0, moho, params).conductive_heat_flow_mw_m2(z))


def lab_depth_km(
    heat_flow_mw_m2,
    moho_depth_km,
    params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS,
):
    """Depth of the thermal lithosphere base (LAB).

    Parameters
    ----------
    heat_flow_mw_m2 : array_like
        Surface heat flow q0, mW m^-2.
    moho_depth_km : array_like
        Moho depth, km.
    params : ThermalParameters, optional
        Partition, conductivities, ``mantle_potential_temperature_c``,
        ``adiabat_gradient_k_km`` and ``lab_max_depth_km``.

    Returns
    -------
    lab_depth_km : ndarray
        Shallowest depth, km, where the conductive geotherm meets the mantle adiabat
        ``T_p + G z``. NaN where there is no crossing shallower than
        ``lab_max_depth_km`` (heat flow too low, including cells whose crust produces
        more heat than the surface loses) and where inputs are NaN or non-positive.

    Notes
    -----
    Solves :math:`T(z) = T_p + G z`. In the layered partition the equation is a
    quadratic in each layer and is solved in closed form in the layer where the
    crossing lies. In the exponential partition a monotone Newton iteration from the
    surface converges to the first crossing (tolerance 1e-7 km).

    Examples
    --------
    Hasterok & Chapman (2011): 40 mW m^-2 cratons have a ~200 km thick lithosphere.

    >>> p = ThermalParameters(surface_temperature_c=0.0)
    >>> print(f"{float(lab_depth_km(40.0, 40.0, p)):.0f}")
    200
    """
    return _scalar_if_0d(ContinentalGeotherm(heat_flow_mw_m2, moho_depth_km, params).lab_depth_km)


def geotherm_temperature_c(
    depth_km,
    heat_flow_mw_m2,
    moho_depth_km,
    params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS,
):
    """Temperature on the full geotherm: conductive above the LAB, adiabatic below.

    Parameters
    ----------
    depth_km : array_like
        Depth below the surface, km.
    heat_flow_mw_m2 : array_like
        Surface heat flow q0, mW m^-2.
    moho_depth_km : array_like
        Moho depth, km.
    params : ThermalParameters, optional
        Thermal parameters.

    Returns
    -------
    temperature_c : ndarray
        degC. Where there is no LAB within ``lab_max_depth_km`` the conductive geotherm
        is used at all depths.

    Notes
    -----
    .. math:: T(z) = T_{cond}(z)\\ (z < z_{LAB}),\\qquad T_p + G z\\ (z \\ge z_{LAB})

    Examples
    --------
    >>> p = ThermalParameters(surface_temperature_c=0.0)
    >>> print(f"{float(geotherm_temperature_c(150.0, 90.0, 40.0, p)):.1f}")
    1417.5
    """
    z, q0, moho = _as_float64(depth_km, heat_flow_mw_m2, moho_depth_km)
    return _scalar_if_0d(ContinentalGeotherm(q0, moho, params).temperature_c(z))


def isotherm_depth_km(
    temperature_c,
    heat_flow_mw_m2,
    moho_depth_km,
    params: ThermalParameters = DEFAULT_THERMAL_PARAMETERS,
):
    """Shallowest depth of an isotherm along the full geotherm.

    Parameters
    ----------
    temperature_c : array_like
        Isotherm temperature, degC.
    heat_flow_mw_m2 : array_like
        Surface heat flow q0, mW m^-2.
    moho_depth_km : array_like
        Moho depth, km.
    params : ThermalParameters, optional
        Thermal parameters.

    Returns
    -------
    depth_km : ndarray
        km. 0 where the isotherm is at or below the surface temperature (the whole
        column is at least that hot); NaN where the isotherm is deeper than
        ``lab_max_depth_km``, never reached (very low heat flow) or inputs are invalid.

    Notes
    -----
    Above the LAB the conductive geotherm is inverted in closed form (layered
    partition) or by Newton iteration (exponential partition); an isotherm hotter
    than the LAB lies on the adiabat at :math:`(T - T_p)/G`.

    Examples
    --------
    >>> p = ThermalParameters(surface_temperature_c=0.0)
    >>> print(f"{float(isotherm_depth_km(714.0, 60.0, 40.0, p)):.1f}")
    40.0
    """
    t_iso, q0, moho = _as_float64(temperature_c, heat_flow_mw_m2, moho_depth_km)
    return _scalar_if_0d(ContinentalGeotherm(q0, moho, params).isotherm_depth_km(t_iso))
