"""Melting of mantle peridotite: the parameterization of Katz, Spiegelman & Langmuir (2003).

The degree of melting F (mass fraction of melt, 0-1) of a fertile lherzolite
is an explicit function of pressure and temperature when the rock is dry
(eqs. 2-10 of Katz et al. 2003): F rises as a power of the temperature above
the solidus until clinopyroxene (cpx) is used up, then more slowly towards the
true (dunite) liquidus. Water lowers all the reference temperatures by an
amount that depends on the water content of the melt (eqs. 16-19), which in
turn depends on F by batch partitioning, so hydrous F is found by a vectorised
bisection on F in [0, 1].

Conventions: pressure P in GPa, temperature T in degC, water in wt% (bulk water
of the rock, or water dissolved in the melt where the name says so), melt
fraction dimensionless (0-1). Inputs broadcast against each other and NaN in
gives NaN out.

Calibrated range: the solidus of eq. 4 peaks at P = -A2 / (2 A3) = 13.0 GPa;
beyond it (and at negative pressure) the parameterization means nothing.
Functions here return NaN at such pressures and emit one
:class:`~geomelt.errors.OutsideCalibrationWarning` per call, instead of
clipping silently. Negative water contents give NaN with the same warning.

References
----------
Katz, R. F., Spiegelman, M. & Langmuir, C. H. (2003). A new parameterization of
hydrous mantle melting. Geochem. Geophys. Geosyst. 4(9), 1073,
doi:10.1029/2002GC000433.
"""

from __future__ import annotations

import warnings

import numpy as np

from geomelt import constants as C
from geomelt.errors import OutsideCalibrationWarning

__all__ = [
    "CALIBRATION_MAX_PRESSURE_GPA",
    "cpx_exhaustion_melt_fraction",
    "cpx_exhaustion_temperature_c",
    "cpx_reaction_coefficient",
    "dry_melt_fraction",
    "dry_solidus_c",
    "lherzolite_liquidus_c",
    "liquidus_c",
    "melt_fraction",
    "melt_water_wt_pct",
    "solidus_depression_k",
    "water_saturation_wt_pct",
    "wet_solidus_c",
]

# Table 2 of Katz et al. (2003), read once from geomelt.constants
_A1, _A2, _A3 = (
    C.KATZ_SOLIDUS_A1_C.value,
    C.KATZ_SOLIDUS_A2_C_GPA.value,
    C.KATZ_SOLIDUS_A3_C_GPA2.value,
)
_B1, _B2, _B3 = (
    C.KATZ_LHERZOLITE_LIQUIDUS_B1_C.value,
    C.KATZ_LHERZOLITE_LIQUIDUS_B2_C_GPA.value,
    C.KATZ_LHERZOLITE_LIQUIDUS_B3_C_GPA2.value,
)
_C1, _C2, _C3 = (
    C.KATZ_LIQUIDUS_C1_C.value,
    C.KATZ_LIQUIDUS_C2_C_GPA.value,
    C.KATZ_LIQUIDUS_C3_C_GPA2.value,
)
_R1, _R2 = C.KATZ_CPX_REACTION_R1.value, C.KATZ_CPX_REACTION_R2_GPA.value
_BETA1, _BETA2 = C.KATZ_BETA1.value, C.KATZ_BETA2.value
_K, _GAMMA = C.KATZ_WATER_SOLIDUS_K.value, C.KATZ_WATER_SOLIDUS_GAMMA.value
_CHI1, _CHI2, _LAMBDA = (
    C.KATZ_WATER_SATURATION_CHI1.value,
    C.KATZ_WATER_SATURATION_CHI2.value,
    C.KATZ_WATER_SATURATION_LAMBDA.value,
)

CALIBRATION_MAX_PRESSURE_GPA = -_A2 / (2.0 * _A3)
"""Pressure of the maximum of the dry solidus (eq. 4), 13.03 GPa: the upper end of the
range where the parameterization is used."""

_CPX = C.CPX_MASS_FRACTION.value
_D_H2O = C.WATER_PARTITION_COEFFICIENT.value

BISECTION_ITERATIONS = 24
"""Bisection steps for hydrous melt fraction: the bracket [0, 1] shrinks to 2^-24, so F
is within 3e-8 of the root (the requirement is 1e-6)."""


# --------------------------------------------------------------------------------------
# small helpers
# --------------------------------------------------------------------------------------
def _as_float64(*values):
    """Broadcast inputs to one shape as float64 arrays."""
    return np.broadcast_arrays(*(np.asarray(v, dtype=np.float64) for v in values))


def _scalar_if_0d(values):
    """Return numpy scalars for 0-d results, as numpy ufuncs do."""
    return np.asarray(values)[()]


def _checked_pressure(pressure_gpa, stacklevel=3):
    """Pressure with NaN outside [0, 13.03] GPa; warns once if any value is outside.

    ``stacklevel=3`` makes the warning point at the caller of the public function that
    called this helper.
    """
    with np.errstate(invalid="ignore"):
        bad = (pressure_gpa < 0.0) | (pressure_gpa > CALIBRATION_MAX_PRESSURE_GPA)
    if np.any(bad):
        msg = (
            f"{int(np.count_nonzero(bad))} pressure value(s) outside 0-"
            f"{CALIBRATION_MAX_PRESSURE_GPA:.1f} GPa, the range of the Katz et al. (2003) "
            "peridotite melting parameterization (its solidus peaks at "
            f"{CALIBRATION_MAX_PRESSURE_GPA:.1f} GPa); NaN returned there"
        )
        warnings.warn(msg, OutsideCalibrationWarning, stacklevel=stacklevel)
        return np.where(bad, np.nan, pressure_gpa)
    return pressure_gpa


def _checked_water(water_wt_pct, stacklevel=3):
    """Water with NaN where negative; warns once if any value is negative."""
    with np.errstate(invalid="ignore"):
        bad = water_wt_pct < 0.0
    if np.any(bad):
        msg = (
            f"{int(np.count_nonzero(bad))} negative water content(s); water must be >= 0 "
            "wt%; NaN returned there"
        )
        warnings.warn(msg, OutsideCalibrationWarning, stacklevel=stacklevel)
        return np.where(bad, np.nan, water_wt_pct)
    return water_wt_pct


# --------------------------------------------------------------------------------------
# reference temperatures and the clinopyroxene reaction (no calibration check inside)
# --------------------------------------------------------------------------------------
def _solidus(p):
    return _A1 + _A2 * p + _A3 * p * p  # eq. 4


def _lherzolite_liquidus(p):
    return _B1 + _B2 * p + _B3 * p * p  # eq. 5


def _liquidus(p):
    return _C1 + _C2 * p + _C3 * p * p  # eq. 10


def _cpx_out_fraction(p, cpx_mass_fraction):
    return cpx_mass_fraction / (_R1 + _R2 * p)  # eqs. 6-7


def _water_saturation(p):
    # eq. 17; |p| keeps the fractional power defined for the (already flagged) negatives
    return _CHI1 * np.power(np.abs(p), _LAMBDA) + _CHI2 * p


class _DryParts:
    """Pressure-dependent parts of the dry melt fraction, computed once per pressure."""

    __slots__ = ("f_cpx", "m_cpx", "p", "t_cpx", "t_lherz", "t_liq", "t_sol", "water_sat")

    def __init__(self, p, cpx_mass_fraction):
        self.p = p
        self.m_cpx = cpx_mass_fraction
        self.t_sol = _solidus(p)
        self.t_lherz = _lherzolite_liquidus(p)
        self.t_liq = _liquidus(p)
        self.f_cpx = _cpx_out_fraction(p, cpx_mass_fraction)
        # eq. 8: temperature at which cpx is exhausted
        self.t_cpx = np.power(self.f_cpx, 1.0 / _BETA1) * (self.t_lherz - self.t_sol) + self.t_sol
        self.water_sat = _water_saturation(p)

    def fraction(self, t):
        """Dry F at temperature ``t`` (degC): eqs. 2-3 with cpx, eq. 9 after; 0 and 1 outside."""
        theta = (t - self.t_sol) / (self.t_lherz - self.t_sol)  # eq. 3 (reduced temperature)
        f_with_cpx = np.power(np.maximum(theta, 0.0), _BETA1)  # eq. 2
        phi = (t - self.t_cpx) / (self.t_liq - self.t_cpx)
        f_without_cpx = self.f_cpx + (1.0 - self.f_cpx) * np.power(
            np.clip(phi, 0.0, 1.0), _BETA2
        )  # eq. 9; phi >= 1 above the liquidus gives F = 1
        return np.where(t < self.t_cpx, f_with_cpx, f_without_cpx)

    def fraction_partials(self, t):
        """Analytic dF/dT (per K) and dF/dP at fixed T (per GPa) of the dry F at ``t``.

        Each branch is differentiated on its own side of the cpx-exhaustion kink (the
        branch of eq. 9 at the kink itself), so no difference quotient straddles it.
        """
        p = self.p
        d_sol = _A2 + 2.0 * _A3 * p  # dT_sol/dP, eq. 4
        d_lherz = _B2 + 2.0 * _B3 * p  # eq. 5
        d_liq = _C2 + 2.0 * _C3 * p  # eq. 10
        span = self.t_lherz - self.t_sol
        theta = np.maximum((t - self.t_sol) / span, 0.0)  # eq. 3
        g1 = _BETA1 * np.power(theta, _BETA1 - 1.0)
        df_dt_cpx = g1 / span
        df_dp_cpx = -g1 * (d_sol + theta * (d_lherz - d_sol)) / span
        r = _R1 + _R2 * p
        d_fcpx = -self.m_cpx * _R2 / (r * r)  # eqs. 6-7
        d_tcpx = (
            np.power(self.f_cpx, 1.0 / _BETA1 - 1.0) / _BETA1 * d_fcpx * span
            + np.power(self.f_cpx, 1.0 / _BETA1) * (d_lherz - d_sol)
            + d_sol
        )  # eq. 8
        span2 = self.t_liq - self.t_cpx
        phi = np.clip((t - self.t_cpx) / span2, 0.0, 1.0)
        g2 = (1.0 - self.f_cpx) * _BETA2 * np.power(phi, _BETA2 - 1.0)
        df_dt_opx = g2 / span2
        df_dp_opx = (
            d_fcpx * (1.0 - np.power(phi, _BETA2)) - g2 * (d_tcpx + phi * (d_liq - d_tcpx)) / span2
        )  # eq. 9
        on_cpx = t < self.t_cpx
        molten = t >= self.t_liq
        df_dt = np.where(on_cpx, df_dt_cpx, np.where(molten, 0.0, df_dt_opx))
        df_dp = np.where(on_cpx, df_dp_cpx, np.where(molten, 0.0, df_dp_opx))
        return df_dt, df_dp

    def melt_water(self, water_bulk, f, partition):
        """Water in the melt, wt% (eq. 18), capped at saturation (eq. 17)."""
        return np.minimum(water_bulk / (partition + f * (1.0 - partition)), self.water_sat)


def _depression(melt_water):
    return _K * np.power(melt_water, _GAMMA)  # eq. 16


def _hydrous_partials(parts, t, f, water_bulk, partition):
    """dF/dT (per K) and dF/dP (per GPa) of the batch melt fraction F (eq. 19) at (P, T).

    Implicit differentiation of F = F_dry(P, T + dT(X(F, P))): with X = X_bulk / (D + F(1-D))
    (eq. 18) below saturation and X = X_sat(P) (eq. 17) at saturation.
    """
    water_bulk = np.asarray(water_bulk, dtype=np.float64)
    x_free = water_bulk / (partition + f * (1.0 - partition))
    saturated = x_free >= parts.water_sat
    x = np.where(saturated, parts.water_sat, x_free)
    wet = (water_bulk > 0.0) & (x > 0.0)
    x_safe = np.where(wet, x, 1.0)
    d_dt_dx = np.where(wet, _K * _GAMMA * np.power(x_safe, _GAMMA - 1.0), 0.0)  # eq. 16
    phi_t, phi_p = parts.fraction_partials(t + np.where(wet, _depression(x_safe), 0.0))
    # unsaturated: X depends on F
    dx_df = -x_free * (1.0 - partition) / (partition + f * (1.0 - partition))
    denominator = 1.0 - phi_t * d_dt_dx * dx_df
    # saturated: X depends on P
    p_safe = np.where(parts.p > 0.0, parts.p, 1.0)
    dxsat_dp = np.where(
        parts.p > 0.0, _CHI1 * _LAMBDA * np.power(p_safe, _LAMBDA - 1.0) + _CHI2, 0.0
    )
    df_dt = np.where(saturated, phi_t, phi_t / denominator)
    df_dp = np.where(saturated, phi_p + phi_t * d_dt_dx * dxsat_dp, phi_p / denominator)
    return df_dt, df_dp


def _bisect_melt_fraction(parts, temperature_of_f, water_bulk, partition, iterations):
    """Solve F = F_dry(T(F) + dT(X(F))) for F in [0, 1] by vectorised bisection (eq. 19).

    ``temperature_of_f(f)`` gives the rock temperature (degC) that goes with a trial melt
    fraction; it is a constant for melting at fixed P and T and falls with F along an
    isentrope. The residual ``F_dry(...) - F`` then strictly decreases in F, so the
    root is unique. Exact 0 and 1 are returned where the residual at those ends says so.
    """

    def residual(f):
        t_eff = temperature_of_f(f) + _depression(parts.melt_water(water_bulk, f, partition))
        return parts.fraction(t_eff) - f

    shape = np.broadcast(parts.t_sol, water_bulk, temperature_of_f(0.0)).shape
    lo = np.zeros(shape)
    hi = np.ones(shape)
    for _ in range(iterations):
        mid = 0.5 * (lo + hi)
        positive = residual(mid) > 0.0
        lo = np.where(positive, mid, lo)
        hi = np.where(positive, hi, mid)
    f = 0.5 * (lo + hi)
    f = np.where(residual(np.zeros(shape)) <= 0.0, 0.0, f)  # below the wet solidus
    f = np.where(residual(np.ones(shape)) >= 0.0, 1.0, f)  # above the wet liquidus
    nan = np.isnan(parts.t_sol) | np.isnan(water_bulk) | np.isnan(temperature_of_f(0.5))
    return np.where(nan, np.nan, f)


# --------------------------------------------------------------------------------------
# public functions
# --------------------------------------------------------------------------------------
def dry_solidus_c(pressure_gpa):
    """Solidus of dry peridotite.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa (0 to 13.03).

    Returns
    -------
    temperature_c : ndarray
        Dry solidus temperature T_sol, degC.

    Notes
    -----
    Eq. 4 of Katz et al. (2003), :math:`T_{sol} = A_1 + A_2 P + A_3 P^2` with the
    constants of their Table 2 (A1 = 1085.7 degC, A2 = 132.9 degC/GPa, A3 = -5.1 degC/GPa^2).

    Examples
    --------
    >>> print(f"{float(dry_solidus_c(1.0)):.1f}")
    1213.5
    """
    (p,) = _as_float64(pressure_gpa)
    return _scalar_if_0d(_solidus(_checked_pressure(p)))


def lherzolite_liquidus_c(pressure_gpa):
    """Lherzolite liquidus: the temperature of complete melting if cpx never ran out.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa.

    Returns
    -------
    temperature_c : ndarray
        T_lherz, degC.

    Notes
    -----
    Eq. 5 of Katz et al. (2003), :math:`T_{lherz} = B_1 + B_2 P + B_3 P^2`.

    Examples
    --------
    >>> print(f"{float(lherzolite_liquidus_c(1.0)):.1f}")
    1551.8
    """
    (p,) = _as_float64(pressure_gpa)
    return _scalar_if_0d(_lherzolite_liquidus(_checked_pressure(p)))


def liquidus_c(pressure_gpa):
    """True (dunite) liquidus of peridotite: F = 1 at and above it.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa.

    Returns
    -------
    temperature_c : ndarray
        T_liq, degC.

    Notes
    -----
    Eq. 10 of Katz et al. (2003), :math:`T_{liq} = C_1 + C_2 P + C_3 P^2`.

    Examples
    --------
    >>> print(f"{float(liquidus_c(1.0)):.1f}")
    1823.0
    """
    (p,) = _as_float64(pressure_gpa)
    return _scalar_if_0d(_liquidus(_checked_pressure(p)))


def cpx_reaction_coefficient(pressure_gpa):
    """Mass of cpx consumed per unit mass of melt produced, R_cpx.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa.

    Returns
    -------
    coefficient : ndarray
        R_cpx = r1 + r2 P (eq. 6 of Katz et al. 2003), dimensionless.

    Examples
    --------
    >>> print(f"{float(cpx_reaction_coefficient(1.0)):.2f}")
    0.58
    """
    (p,) = _as_float64(pressure_gpa)
    return _scalar_if_0d(_R1 + _R2 * _checked_pressure(p))


def cpx_exhaustion_melt_fraction(pressure_gpa, cpx_mass_fraction=_CPX):
    """Melt fraction at which clinopyroxene is used up, F_cpx-out.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa.
    cpx_mass_fraction : float or array_like, optional
        Modal cpx mass fraction of the source M_cpx. Default ``cpx_mass_fraction`` (0.17).

    Returns
    -------
    melt_fraction : ndarray
        F_cpx-out = M_cpx / R_cpx (eq. 7 of Katz et al. 2003), dimensionless.

    Examples
    --------
    >>> print(f"{float(cpx_exhaustion_melt_fraction(1.0)):.4f}")
    0.2931
    """
    p, m = _as_float64(pressure_gpa, cpx_mass_fraction)
    return _scalar_if_0d(_cpx_out_fraction(_checked_pressure(p), m))


def cpx_exhaustion_temperature_c(pressure_gpa, cpx_mass_fraction=_CPX):
    """Temperature at which clinopyroxene is used up in dry melting, T_cpx-out.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa.
    cpx_mass_fraction : float or array_like, optional
        Modal cpx mass fraction of the source M_cpx. Default 0.17.

    Returns
    -------
    temperature_c : ndarray
        T_cpx-out = F_cpx-out^(1/beta1) (T_lherz - T_sol) + T_sol (eq. 8), degC.

    Examples
    --------
    >>> print(f"{float(cpx_exhaustion_temperature_c(1.0)):.1f}")
    1362.8
    """
    p, m = _as_float64(pressure_gpa, cpx_mass_fraction)
    return _scalar_if_0d(_DryParts(_checked_pressure(p), m).t_cpx)


def dry_melt_fraction(pressure_gpa, temperature_c, cpx_mass_fraction=_CPX):
    """Degree of melting of dry peridotite.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa (0 to 13.03; NaN and a warning outside).
    temperature_c : array_like
        Temperature, degC.
    cpx_mass_fraction : float or array_like, optional
        Modal cpx mass fraction of the source M_cpx. Default 0.17.

    Returns
    -------
    melt_fraction : ndarray
        Melt mass fraction F, 0-1: 0 at and below the solidus, 1 at and above the liquidus.

    Notes
    -----
    Katz et al. (2003): while cpx remains (F <= F_cpx-out, eqs. 2-3)

    .. math:: F = \\left(\\frac{T - T_{sol}}{T_{lherz} - T_{sol}}\\right)^{\\beta_1},

    and after cpx is exhausted (eq. 9)

    .. math:: F = F_{cpx-out} + (1 - F_{cpx-out})
              \\left(\\frac{T - T_{cpx-out}}{T_{liq} - T_{cpx-out}}\\right)^{\\beta_2}.

    The two branches meet at T_cpx-out, so F is continuous and non-decreasing in T.

    Examples
    --------
    >>> print(f"{float(dry_melt_fraction(1.0, 1300.0)):.4f}")
    0.1293
    >>> print(f"{float(dry_melt_fraction(1.0, 1400.0)):.4f}")
    0.3094
    """
    p, t, m = _as_float64(pressure_gpa, temperature_c, cpx_mass_fraction)
    return _scalar_if_0d(_DryParts(_checked_pressure(p), m).fraction(t))


def water_saturation_wt_pct(pressure_gpa):
    """Water content at which peridotite melt is saturated, X_sat.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa.

    Returns
    -------
    water_wt_pct : ndarray
        X_sat = chi1 P^lambda + chi2 P (eq. 17 of Katz et al. 2003), wt% H2O in the melt.

    Examples
    --------
    >>> print(f"{float(water_saturation_wt_pct(2.0)):.2f}")
    20.19
    """
    (p,) = _as_float64(pressure_gpa)
    return _scalar_if_0d(_water_saturation(_checked_pressure(p)))


def solidus_depression_k(melt_water_wt_pct):
    """Lowering of the peridotite solidus by water dissolved in the melt.

    Parameters
    ----------
    melt_water_wt_pct : array_like
        Water in the melt X, wt% (already capped at saturation by the caller).

    Returns
    -------
    depression_k : ndarray
        Delta T = K X^gamma (eq. 16 of Katz et al. 2003), K.

    Examples
    --------
    >>> print(f"{float(solidus_depression_k(10.0)):.1f}")
    241.8
    """
    (x,) = _as_float64(melt_water_wt_pct)
    return _scalar_if_0d(_depression(_checked_water(x)))


def melt_water_wt_pct(
    water_bulk_wt_pct, melt_fraction, pressure_gpa, water_partition_coefficient=_D_H2O
):
    """Water dissolved in the melt for batch melting, capped at saturation.

    Parameters
    ----------
    water_bulk_wt_pct : array_like
        Bulk water of the rock, wt%.
    melt_fraction : array_like
        Melt mass fraction F, 0-1.
    pressure_gpa : array_like
        Pressure, GPa (sets the saturation cap).
    water_partition_coefficient : float, optional
        Bulk solid/melt partition coefficient D. Default 0.01 (Katz et al. 2003).

    Returns
    -------
    water_wt_pct : ndarray
        X = min(X_bulk / (D + F (1 - D)), X_sat) (eqs. 17-18), wt%.

    Examples
    --------
    >>> print(f"{float(melt_water_wt_pct(0.1, 0.0, 1.0)):.1f}")
    10.0
    >>> print(f"{float(melt_water_wt_pct(0.3, 0.0, 1.0)):.1f}")
    13.0
    """
    w, f, p, d = _as_float64(
        water_bulk_wt_pct, melt_fraction, pressure_gpa, water_partition_coefficient
    )
    w = _checked_water(w)
    p = _checked_pressure(p)
    x = np.minimum(w / (d + f * (1.0 - d)), _water_saturation(p))  # eqs. 17-18
    return _scalar_if_0d(x)


def wet_solidus_c(pressure_gpa, water_bulk_wt_pct, water_partition_coefficient=_D_H2O):
    """Solidus of hydrous peridotite (the limit F -> 0 of eq. 19).

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa.
    water_bulk_wt_pct : array_like
        Bulk water of the rock, wt%.
    water_partition_coefficient : float, optional
        Bulk solid/melt partition coefficient D. Default 0.01.

    Returns
    -------
    temperature_c : ndarray
        T_sol - K min(X_bulk / D, X_sat)^gamma, degC.

    Notes
    -----
    As F -> 0 the first melt holds X_bulk / D of water (eq. 18), unless that exceeds
    saturation (eq. 17). At 3 GPa the water-saturated solidus of this parameterization
    (about 940 degC) is 120-140 K hotter than the experimental H2O-saturated solidus
    (800-820 degC; Till, Grove & Withers 2012).

    Examples
    --------
    >>> print(f"{float(wet_solidus_c(1.0, 0.1)):.1f}")
    971.7
    >>> print(f"{float(wet_solidus_c(3.0, 0.3)):.1f}")
    940.6
    """
    p, w, d = _as_float64(pressure_gpa, water_bulk_wt_pct, water_partition_coefficient)
    p = _checked_pressure(p)
    w = _checked_water(w)
    x = np.minimum(w / d, _water_saturation(p))  # eqs. 17-18 with F = 0
    return _scalar_if_0d(_solidus(p) - _depression(x))  # eqs. 4, 16


def melt_fraction(
    pressure_gpa,
    temperature_c,
    water_bulk_wt_pct=0.0,
    cpx_mass_fraction=_CPX,
    water_partition_coefficient=_D_H2O,
):
    """Degree of melting of dry or hydrous peridotite (batch melting).

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa (0 to 13.03; NaN and a warning outside).
    temperature_c : array_like
        Temperature, degC.
    water_bulk_wt_pct : array_like, optional
        Bulk water of the rock, wt%. Default 0 (dry).
    cpx_mass_fraction : float or array_like, optional
        Modal cpx mass fraction M_cpx. Default 0.17.
    water_partition_coefficient : float, optional
        Bulk solid/melt partition coefficient of water D. Default 0.01.

    Returns
    -------
    melt_fraction : ndarray
        Melt mass fraction F, 0-1.

    Notes
    -----
    Eq. 19 of Katz et al. (2003): F is the dry expression (eqs. 2-9) with T_sol,
    T_lherz, T_cpx-out and T_liq all lowered by :math:`\\Delta T = K X^\\gamma`
    (eq. 16), where the water content of the melt :math:`X = X_{bulk} / (D + F(1-D))`
    (eq. 18) is capped at :math:`X_{sat} = \\chi_1 P^\\lambda + \\chi_2 P` (eq. 17).
    Lowering every reference temperature by Delta T equals raising T by Delta T, so
    F solves :math:`F = F_{dry}(P, T + \\Delta T(X(F)))`. The right side falls as F
    rises (more melt dilutes the water), so the root is unique; it is found by
    bisection on [0, 1] with :data:`BISECTION_ITERATIONS` steps (error < 3e-8). With
    no water the dry expression is used directly.

    Examples
    --------
    >>> print(f"{float(melt_fraction(1.0, 1300.0, 0.1)):.3f}")
    0.191
    >>> print(f"{float(melt_fraction(1.0, 1300.0)):.4f}")
    0.1293
    """
    p, t, w, m, d = _as_float64(
        pressure_gpa,
        temperature_c,
        water_bulk_wt_pct,
        cpx_mass_fraction,
        water_partition_coefficient,
    )
    p = _checked_pressure(p)
    w = _checked_water(w)
    parts = _DryParts(p, m)
    if not np.any(w > 0.0):
        return _scalar_if_0d(np.where(np.isnan(w), np.nan, parts.fraction(t)))
    f = _bisect_melt_fraction(parts, lambda _f: t, w, d, BISECTION_ITERATIONS)
    return _scalar_if_0d(f)
