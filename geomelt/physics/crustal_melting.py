"""Melting of continental crust (anatexis), heating by mafic underplating, magma ranges.

Crust melts in stages as it heats (Thompson 1982; Le Breton & Thompson 1988;
Clemens & Vielzeuf 1987):

1. at the **water-saturated granite solidus** (about 620-720 degC, depending on
   pressure), but deep crust holds little free water, so this makes only a few
   percent of melt;
2. by **muscovite dehydration melting** (about 700-750 degC);
3. by **biotite dehydration melting**, which starts at 760-800 degC at 1 GPa and is
   extensive by 850 degC (Le Breton & Thompson 1988), making tens of percent of melt;
4. by **hornblende dehydration melting** in amphibolites (about 850-950 degC and
   above; Clemens & Vielzeuf 1987; Rushmer 1991).

:func:`crustal_melt_fraction` turns these stages into a piecewise-linear ramp of
melt fraction against temperature, non-decreasing in T, for a generic crustal
column (a mix of metapelite, metagreywacke and amphibolite). The stage fractions
are representative experimental values recalled from the literature ("from
memory" in :mod:`geomelt.constants`); change them for a known rock type through
:class:`~geomelt.parameters.CrustalMeltingParameters`.

Heat carried into the crust by basalt that ponds at its base (underplating) is
estimated by :func:`underplating_temperature_increase_k`, an energy balance of
the kind used by Huppert & Sparks (1988). Steady-state Moho temperatures under
thickened crust are not to be trusted (orogens are far from thermal steady
state; their Moho is at about 700-1000 degC), so :func:`steady_state_moho_flag`
marks cells where the steady-state value is hotter than that.

Conventions: temperature degC, pressure GPa, depth and thickness km, melt
fraction 0-1. Inputs broadcast and NaN in gives NaN out (booleans: False).

References
----------
Clemens, J. D. & Vielzeuf, D. (1987). Constraints on melting and magma production in
the crust. Earth Planet. Sci. Lett. 86, 287-306.

Huppert, H. E. & Sparks, R. S. J. (1988). The generation of granitic magmas by
intrusion of basalt into continental crust. J. Petrol. 29, 599-624 (from memory).

Le Breton, N. & Thompson, A. B. (1988). Fluid-absent (dehydration) melting of biotite
in metapelites in the early stages of crustal anatexis. Contrib. Mineral. Petrol. 99,
226-237.

Rushmer, T. (1991). Partial melting of two amphibolites: contrasting experimental
results under fluid-absent conditions. Contrib. Mineral. Petrol. 107, 41-59 (from
memory).

Stern, C. R. & Wyllie, P. J. (1973). Water-saturated and undersaturated melting
relations of a granite to 35 kilobars. Earth Planet. Sci. Lett. 18, 163-167 (authors,
volume and pages from memory).
"""

from __future__ import annotations

import warnings

import numpy as np

from geomelt import constants as C
from geomelt import units
from geomelt.errors import OutsideCalibrationWarning
from geomelt.parameters import CrustalMeltingParameters

__all__ = [
    "DEFAULT_CRUSTAL_MELTING_PARAMETERS",
    "crustal_melt_fraction",
    "crustal_pressure_gpa",
    "magma_melt_fraction",
    "steady_state_moho_flag",
    "underplating_temperature_increase_k",
    "wet_granite_solidus_c",
]

DEFAULT_CRUSTAL_MELTING_PARAMETERS = CrustalMeltingParameters()
"""Default crustal melting parameters (module-level singleton used as a default argument)."""

_SOLIDUS_P = np.asarray(C.WET_GRANITE_SOLIDUS_PRESSURES_GPA.value, dtype=np.float64)
_SOLIDUS_T = np.asarray(C.WET_GRANITE_SOLIDUS_TEMPERATURES_C.value, dtype=np.float64)
_PA_PER_GPA = units.PA_PER_GPA


def _as_float64(*values):
    return np.broadcast_arrays(*(np.asarray(v, dtype=np.float64) for v in values))


def _scalar_if_0d(values):
    return np.asarray(values)[()]


def crustal_pressure_gpa(depth_km, crust_density_kg_m3=C.CRUST_DENSITY_KG_M3.value):
    """Lithostatic pressure in the crust, P = rho_c g z.

    Parameters
    ----------
    depth_km : array_like
        Depth below the surface, km.
    crust_density_kg_m3 : float, optional
        Mean crustal density, kg m^-3. Default 2800.

    Returns
    -------
    pressure_gpa : ndarray
        Pressure, GPa (g = 9.81 m s^-2).

    Examples
    --------
    >>> print(f"{float(crustal_pressure_gpa(36.4)):.2f}")
    1.00
    """
    (z,) = _as_float64(depth_km)
    pa = float(crust_density_kg_m3) * C.GRAVITY_M_S2.value * units.km_to_m(z)
    return _scalar_if_0d(pa / _PA_PER_GPA)


def _solidus(p):
    """Wet granite solidus (degC) with NaN outside the tabulated pressures."""
    t = np.interp(p, _SOLIDUS_P, _SOLIDUS_T)
    with np.errstate(invalid="ignore"):
        inside = (p >= _SOLIDUS_P[0]) & (p <= _SOLIDUS_P[-1])
    return np.where(inside, t, np.nan)


def wet_granite_solidus_c(pressure_gpa):
    """Water-saturated solidus of granite.

    Parameters
    ----------
    pressure_gpa : array_like
        Pressure, GPa (0.1-3.5; NaN and an
        :class:`~geomelt.errors.OutsideCalibrationWarning` outside).

    Returns
    -------
    temperature_c : ndarray
        Solidus temperature, degC.

    Notes
    -----
    Linear between the experimental points 680 degC at 0.2 GPa, 620 at 1.0, 655 at 2.5
    and 700 at 3.5 GPa (the 1973 EPSL study of granite melting to 35 kbar, Stern &
    Wyllie, authors from memory), with 720 degC at 0.1 GPa from the haplogranite minimum
    (Tuttle & Bowen 1958, from memory). The solidus has its minimum near 1 GPa.

    Examples
    --------
    >>> print(wet_granite_solidus_c([0.2, 1.0, 2.5, 3.5]))
    [680. 620. 655. 700.]
    """
    (p,) = _as_float64(pressure_gpa)
    t = _solidus(p)
    outside = np.isnan(t) & ~np.isnan(p)
    if np.any(outside):
        msg = (
            f"{int(np.count_nonzero(outside))} pressure value(s) outside "
            f"{_SOLIDUS_P[0]:g}-{_SOLIDUS_P[-1]:g} GPa, the range of the wet granite "
            "solidus; NaN returned there"
        )
        warnings.warn(msg, OutsideCalibrationWarning, stacklevel=2)
    return _scalar_if_0d(t)


def crustal_melt_fraction(
    temperature_c,
    pressure_gpa=None,
    *,
    depth_km=None,
    params: CrustalMeltingParameters = DEFAULT_CRUSTAL_MELTING_PARAMETERS,
):
    """Melt fraction of a generic crustal column heated to ``temperature_c``.

    Parameters
    ----------
    temperature_c : array_like
        Temperature, degC.
    pressure_gpa : array_like, optional
        Pressure, GPa. Give this or ``depth_km``.
    depth_km : array_like, optional
        Depth, km; converted with :func:`crustal_pressure_gpa` and
        ``params.crust_density_kg_m3``.
    params : CrustalMeltingParameters, optional
        Stage temperatures and melt fractions (defaults from :mod:`geomelt.constants`).

    Returns
    -------
    melt_fraction : ndarray
        Melt mass fraction, 0-1, non-decreasing in temperature.

    Raises
    ------
    ValueError
        If neither or both of ``pressure_gpa`` and ``depth_km`` are given.

    Notes
    -----
    Piecewise linear in T through the nodes (defaults in brackets)

    ========================================  ==============================
    temperature                               cumulative melt fraction
    ========================================  ==============================
    wet granite solidus T_ws(P) (620-720)     0
    muscovite melting onset (700)             free-water melt (0.02)
    muscovite melting end (750)               after muscovite (0.08)
    biotite melting onset (780)               after muscovite (0.08)
    biotite melting extensive (850)           after biotite (0.25)
    hornblende melting onset (850)            after biotite (0.25)
    hornblende melting end (950) and above    after hornblende (0.40)
    ========================================  ==============================

    Stage temperatures: Le Breton & Thompson (1988) for biotite (onset 760-800 degC at
    1 GPa, extensive by 850 degC), Thompson (1982) and Le Breton & Thompson (1988) for
    muscovite, Clemens & Vielzeuf (1987) and Rushmer (1991) for hornblende; fractions
    are representative experimental values (from memory). Where the wet solidus is
    hotter than the muscovite onset (pressures below about 0.15 GPa), melting starts
    with a step at the solidus. Dehydration-melting temperatures are taken as
    independent of pressure. Below 620 degC (the lowest wet solidus) the melt fraction
    is 0 at any pressure; above it, pressures outside 0.1-3.5 GPa give NaN and an
    :class:`~geomelt.errors.OutsideCalibrationWarning`.

    Examples
    --------
    >>> print(crustal_melt_fraction([600.0, 700.0, 800.0, 850.0, 1000.0], 1.0).round(3))
    [0.    0.02  0.129 0.25  0.4  ]
    """
    if (pressure_gpa is None) == (depth_km is None):
        msg = "give exactly one of pressure_gpa and depth_km"
        raise ValueError(msg)
    if pressure_gpa is None:
        pressure_gpa = crustal_pressure_gpa(depth_km, params.crust_density_kg_m3)
    t, p = _as_float64(temperature_c, pressure_gpa)
    t_ws = _solidus(p)
    cold = t < _SOLIDUS_T.min()
    lost = np.isnan(t_ws) & ~np.isnan(p) & ~np.isnan(t) & ~cold
    if np.any(lost):
        msg = (
            f"{int(np.count_nonzero(lost))} cell(s) above {_SOLIDUS_T.min():g} degC at "
            f"pressures outside {_SOLIDUS_P[0]:g}-{_SOLIDUS_P[-1]:g} GPa, where the wet "
            "granite solidus is not known; NaN returned there"
        )
        warnings.warn(msg, OutsideCalibrationWarning, stacklevel=2)

    onset = params.muscovite_melting_onset_c
    nodes_t = (
        onset,
        params.muscovite_melting_end_c,
        params.biotite_melting_onset_c,
        params.biotite_melting_extensive_c,
        params.hornblende_melting_onset_c,
        params.hornblende_melting_end_c,
    )
    nodes_f = (
        params.water_saturated_melt_fraction,
        params.muscovite_melt_fraction,
        params.muscovite_melt_fraction,
        params.biotite_melt_fraction,
        params.biotite_melt_fraction,
        params.hornblende_melt_fraction,
    )
    dehydration = np.interp(t, nodes_t, nodes_f)  # constant beyond the end nodes
    with np.errstate(invalid="ignore", divide="ignore"):
        ramp = np.clip((t - t_ws) / (onset - t_ws), 0.0, 1.0)
        fluid_present = np.where(t_ws < onset, nodes_f[0] * ramp, 0.0)
        f = np.where(t < onset, fluid_present, np.where(t >= t_ws, dehydration, 0.0))
    f = np.where(cold & ~np.isnan(p), 0.0, f)
    return _scalar_if_0d(np.where(np.isnan(t) | np.isnan(p) | lost, np.nan, f))


def underplating_temperature_increase_k(
    underplate_thickness_km,
    host_temperature_c,
    *,
    heated_thickness_km=C.UNDERPLATE_HEATED_THICKNESS_KM.value,
    magma_temperature_c=C.BASALT_LIQUIDUS_C.value,
    latent_heat_j_kg=C.MAGMA_LATENT_HEAT_J_KG.value,
    heat_capacity_j_kg_k=C.MAGMA_HEAT_CAPACITY_J_KG_K.value,
    magma_density_kg_m3=C.BASALT_DENSITY_KG_M3.value,
    crust_density_kg_m3=C.CRUST_DENSITY_KG_M3.value,
):
    """Warming of the lower crust by basalt that ponds beneath it (underplating).

    Parameters
    ----------
    underplate_thickness_km : array_like
        Thickness of the basaltic underplate, km (e.g. the part of a column's melt
        thickness that stalls at the Moho).
    host_temperature_c : array_like
        Temperature of the lower crust before intrusion (e.g. the Moho temperature), degC.
    heated_thickness_km : float, optional
        Thickness of crust that shares the heat, km. Default 10 km.
    magma_temperature_c : float, optional
        Intrusion temperature, degC. Default: basalt liquidus, 1200 degC.
    latent_heat_j_kg : float, optional
        Latent heat of crystallization, J kg^-1. Default 4e5.
    heat_capacity_j_kg_k : float, optional
        Specific heat of magma and crust, J kg^-1 K^-1. Default 1000.
    magma_density_kg_m3, crust_density_kg_m3 : float, optional
        Densities, kg m^-3. Defaults 2900 and 2800.

    Returns
    -------
    temperature_increase_k : ndarray
        Rise of the crust's temperature, K; 0 where the crust is as hot as the magma,
        and never above ``magma_temperature_c - host_temperature_c``.

    Notes
    -----
    Energy balance of a sill of thickness h_u that crystallizes completely and
    cools to the common final temperature T_f of a crustal layer of thickness H
    (instantaneous, no losses; an upper bound on the heating of that layer, in the
    spirit of Huppert & Sparks 1988):

    .. math:: h_u \\rho_m [L + c (T_m - T_f)] = H \\rho_c c (T_f - T_c)

    so :math:`\\Delta T = T_f - T_c = h_u \\rho_m [L + c (T_m - T_c)] /
    (h_u \\rho_m c + H \\rho_c c)`, capped at T_m - T_c. One kilometre of basalt
    under 10 km of crust at 800 degC warms it by about 75 K.

    Examples
    --------
    >>> print(f"{float(underplating_temperature_increase_k(1.0, 800.0)):.0f}")
    75
    """
    h, tc = _as_float64(underplate_thickness_km, host_temperature_c)
    rho_m, rho_c = float(magma_density_kg_m3), float(crust_density_kg_m3)
    c = float(heat_capacity_j_kg_k)
    tm = float(magma_temperature_c)
    heat = h * rho_m * (float(latent_heat_j_kg) + c * (tm - tc))
    rise = heat / (h * rho_m * c + float(heated_thickness_km) * rho_c * c)
    with np.errstate(invalid="ignore"):
        rise = np.clip(rise, 0.0, np.maximum(tm - tc, 0.0))
        rise = np.where(h >= 0.0, rise, np.nan)
    return _scalar_if_0d(rise)


def steady_state_moho_flag(
    moho_temperature_c,
    crustal_thickness_km,
    *,
    max_temperature_c=C.OROGENIC_MOHO_MAX_TEMPERATURE_C.value,
    thick_crust_km=C.THICK_CRUST_KM.value,
):
    """Flag steady-state Moho temperatures that thickened crust does not show.

    Parameters
    ----------
    moho_temperature_c : array_like
        Moho temperature from a steady-state geotherm, degC.
    crustal_thickness_km : array_like
        Crustal thickness, km.
    max_temperature_c : float, optional
        Hottest credible Moho under thickened crust, degC. Default 1000 degC.
    thick_crust_km : float, optional
        Crust at least this thick counts as thickened. Default 50 km (Mooney et al. 2004:
        crust > 50 km is rare).

    Returns
    -------
    flag : ndarray of bool
        True where the crust is thickened and the steady-state Moho is hotter than
        ``max_temperature_c``; False elsewhere and where an input is NaN.

    Notes
    -----
    Thickened orogenic crust (60-80 km under Tibet) has Moho temperatures of roughly
    700-1000 degC (from memory). A steady-state geotherm with high surface heat flow
    puts such a Moho above 1100 degC because orogens have not had time to reach steady
    state; crustal melting computed from those temperatures should be shown as
    unreliable rather than trusted.

    Examples
    --------
    >>> print(steady_state_moho_flag([1150.0, 1150.0, 900.0], [70.0, 35.0, 70.0]))
    [ True False False]
    """
    t, h = _as_float64(moho_temperature_c, crustal_thickness_km)
    with np.errstate(invalid="ignore"):
        flag = (t > float(max_temperature_c)) & (h >= float(thick_crust_km))
    return _scalar_if_0d(flag)


def magma_melt_fraction(
    temperature_c,
    solidus_c=C.BASALT_SOLIDUS_C.value,
    liquidus_c=C.BASALT_LIQUIDUS_C.value,
):
    """Melt fraction of a magma crystallizing linearly between solidus and liquidus.

    Parameters
    ----------
    temperature_c : array_like
        Temperature, degC.
    solidus_c, liquidus_c : float or array_like, optional
        Solidus and liquidus, degC. Defaults: basalt at low pressure, 1000 and 1200 degC.

    Returns
    -------
    melt_fraction : ndarray
        0 at and below the solidus, 1 at and above the liquidus, linear in between.

    Notes
    -----
    A linear crystallization interval is common practice for screening; basalt is
    about 1200 degC at its liquidus and 980-1000 degC at its solidus at low pressure;
    andesite and rhyolite erupt at 800-1000 and 650-800 degC
    (:mod:`geomelt.constants`).

    Examples
    --------
    >>> print(magma_melt_fraction([950.0, 1100.0, 1250.0]))
    [0.  0.5 1. ]
    """
    t, ts, tl = _as_float64(temperature_c, solidus_c, liquidus_c)
    with np.errstate(invalid="ignore", divide="ignore"):
        f = np.clip((t - ts) / (tl - ts), 0.0, 1.0)
    return _scalar_if_0d(f)
