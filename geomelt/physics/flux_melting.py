"""Flux (water-added) melting of the mantle wedge above a subducting slab.

Slabs dehydrate as they sink; the water rises into the hot core of the mantle
wedge and lowers its solidus, so the wedge melts where dry mantle at the same
temperature would barely melt. Volcanic fronts stand above a fairly constant
slab depth, 105 km on global average (72-173 km for 500-km segments; Syracuse &
Abers 2006), or 65-130 km (England, Engdahl & Thatcher 2004). This module turns
a per-cell slab depth into a water supply to the wedge and a degree of melting:

* **No slab** (slab depth NaN): no slab water, flux melt fraction 0 (not NaN, so
  that maps of regions without slabs stay defined).
* **Forearc** (slab shallower than the sub-arc window): the wedge nose is too
  cold and the slab too shallow to melt the wedge: 0.
* **Sub-arc window** ``arc_slab_depth_km +/- arc_window_half_width_km`` (default
  80-130 km): full supply; the wedge melting region holds ``wedge_water_wt_pct``.
* **Behind the arc** (slab deeper than the window): the supply falls linearly to
  zero over ``behind_arc_taper_km`` of slab depth (default: to 200 km, the depth
  by which antigorite breakdown, the last large water source, is over; Ulmer &
  Trommsdorff 1995), so the wedge water falls back to the ambient mantle value.
  Back-arc mantle sources do hold less water away from the trench (Kelley et al.
  2006). The linear taper is a simple convention (common practice), not a
  published law.

The wedge melting region has a fixed temperature (default 1350 degC) and depth
(default 60 km, P = rho_s g z = 1.94 GPa), in the ranges of thermobarometry of
arc melts (> 1300 degC, 34-87 km beneath the Mariana arc; Kelley et al. 2010).
Its degree of melting is the batch melt fraction of Katz, Spiegelman &
Langmuir (2003) (:func:`geomelt.physics.peridotite.melt_fraction`).
:func:`wedge_melt_fraction` reports the melt fraction *added by slab water*: the
melt fraction with the supplied water minus that of ambient mantle at the same
pressure and temperature. Ambient melting at the wedge temperature (F = 0.045 at
the defaults) is not flux melting and is left out, so flux melting is exactly 0
wherever the slab supplies no water.

The experimental H2O-saturated peridotite solidus is 800-820 degC, nearly
isothermal from 3 to 6 GPa (Till, Grove & Withers 2012;
:data:`~geomelt.constants.H2O_SATURATED_PERIDOTITE_SOLIDUS_C`). The water-saturated
solidus of the Katz parameterization is 120-140 K hotter at 3 GPa (about 940
degC): the parameterization underestimates melting of water-saturated mantle
near the slab, but the wedge core where arc melts form (> 1300 degC) is far above
either solidus.

Conventions: depths in km (slab depth positive down, below sea level),
temperatures degC, water wt% (bulk, of the wedge melting region), melt fraction 0-1.

References
----------
England, P., Engdahl, R. & Thatcher, W. (2004). Systematic variation in the depths of
slabs beneath arc volcanoes. Geophys. J. Int. 156, 377-408.

Kelley, K. A., Plank, T., Grove, T. L., Stolper, E. M., Newman, S. & Hauri, E. (2006).
Mantle melting as a function of water content beneath back-arc basins. J. Geophys.
Res. 111, B09208 (authors after the first from memory).

Kelley, K. A., Plank, T., Newman, S., Stolper, E. M., Grove, T. L., Parman, S. &
Hauri, E. H. (2010). Mantle melting as a function of water content beneath the
Mariana arc. J. Petrol. 51, 1711-1738 (authors after the first, pages from memory).

Syracuse, E. M. & Abers, G. A. (2006). Global compilation of variations in slab depth
beneath arc volcanoes and implications. Geochem. Geophys. Geosyst. 7, Q05017.

Till, C. B., Grove, T. L. & Withers, A. C. (2012). The beginnings of hydrous mantle
wedge melting. Contrib. Mineral. Petrol. 163, 669-688.

Ulmer, P. & Trommsdorff, V. (1995). Serpentine stability to mantle depths and
subduction-related magmatism. Science 268, 858-861.
"""

from __future__ import annotations

import numpy as np

from geomelt import constants as C
from geomelt.physics.decompression import lithostatic_pressure_gpa
from geomelt.physics.peridotite import CALIBRATION_MAX_PRESSURE_GPA, melt_fraction

__all__ = [
    "slab_water_supply",
    "wedge_melt_fraction",
    "wedge_water_wt_pct",
]

_WINDOW = {
    "arc_slab_depth_km": C.ARC_SLAB_DEPTH_KM.value,
    "arc_window_half_width_km": C.ARC_WINDOW_HALF_WIDTH_KM.value,
    "behind_arc_taper_km": C.BEHIND_ARC_TAPER_KM.value,
}


def _as_float64(*values):
    return np.broadcast_arrays(*(np.asarray(v, dtype=np.float64) for v in values))


def _scalar_if_0d(values):
    return np.asarray(values)[()]


def _positive(name, value):
    value = float(value)
    if not value > 0.0:
        msg = f"{name} must be positive, got {value:g}"
        raise ValueError(msg)
    return value


def slab_water_supply(
    slab_depth_km,
    arc_slab_depth_km=C.ARC_SLAB_DEPTH_KM.value,
    arc_window_half_width_km=C.ARC_WINDOW_HALF_WIDTH_KM.value,
    behind_arc_taper_km=C.BEHIND_ARC_TAPER_KM.value,
):
    """Fraction of the full slab water supply that reaches the wedge above each cell.

    Parameters
    ----------
    slab_depth_km : array_like
        Depth of the slab top below the cell, km; NaN where there is no slab.
    arc_slab_depth_km : float, optional
        Centre of the sub-arc window, km. Default 105 km (Syracuse & Abers 2006).
    arc_window_half_width_km : float, optional
        Half-width of the window, km. Default 25 km (window 80-130 km).
    behind_arc_taper_km : float, optional
        Slab-depth range behind the window over which the supply falls linearly to 0,
        km. Default 70 km.

    Returns
    -------
    supply : ndarray
        0 with no slab or in the forearc, 1 in the window, linear from 1 to 0 behind it,
        0 beyond the taper. Never NaN.

    Raises
    ------
    ValueError
        If the half-width or the taper is not positive.

    Examples
    --------
    >>> print(slab_water_supply([50.0, 105.0, 165.0, 250.0, float("nan")]))
    [0.  1.  0.5 0.  0. ]
    """
    (d,) = _as_float64(slab_depth_km)
    half = _positive("arc_window_half_width_km", arc_window_half_width_km)
    taper = _positive("behind_arc_taper_km", behind_arc_taper_km)
    top = float(arc_slab_depth_km) - half
    bottom = float(arc_slab_depth_km) + half
    with np.errstate(invalid="ignore"):
        behind = np.clip(1.0 - (d - bottom) / taper, 0.0, 1.0)  # linear taper
        supply = np.where(d < top, 0.0, np.where(d <= bottom, 1.0, behind))
    return _scalar_if_0d(np.where(np.isnan(d), 0.0, supply))


def wedge_water_wt_pct(
    slab_depth_km,
    wedge_water_wt_pct=C.WEDGE_WATER_WT_PCT.value,
    background_water_wt_pct=C.MANTLE_WATER_WT_PCT.value,
    **window,
):
    """Bulk water of the wedge melting region above each cell.

    Parameters
    ----------
    slab_depth_km : array_like
        Slab depth, km; NaN where there is no slab.
    wedge_water_wt_pct : float, optional
        Water with the full slab supply, wt%. Default 0.3 wt%.
    background_water_wt_pct : float, optional
        Water of ambient mantle, wt%. Default ``mantle_water_wt_pct`` (0.01 wt%).
    **window
        ``arc_slab_depth_km``, ``arc_window_half_width_km``, ``behind_arc_taper_km``
        (see :func:`slab_water_supply`).

    Returns
    -------
    water_wt_pct : ndarray
        background + supply x (wedge - background), wt%.

    Examples
    --------
    >>> print(wedge_water_wt_pct([105.0, 165.0, 300.0]).round(3))
    [0.3   0.155 0.01 ]
    """
    supply = slab_water_supply(slab_depth_km, **{**_WINDOW, **window})
    background = float(background_water_wt_pct)
    return _scalar_if_0d(background + supply * (float(wedge_water_wt_pct) - background))


def wedge_melt_fraction(
    slab_depth_km,
    *,
    wedge_temperature_c=C.WEDGE_TEMPERATURE_C.value,
    wedge_melting_depth_km=C.WEDGE_MELTING_DEPTH_KM.value,
    wedge_water_wt_pct=C.WEDGE_WATER_WT_PCT.value,
    background_water_wt_pct=C.MANTLE_WATER_WT_PCT.value,
    cpx_mass_fraction=C.CPX_MASS_FRACTION.value,
    water_partition_coefficient=C.WATER_PARTITION_COEFFICIENT.value,
    **window,
):
    """Degree of melting added to the mantle wedge by slab water (flux melting).

    Parameters
    ----------
    slab_depth_km : array_like
        Depth of the slab top below each cell, km; NaN where there is no slab.
    wedge_temperature_c : float, optional
        Temperature of the wedge melting region, degC. Default 1350 degC.
    wedge_melting_depth_km : float, optional
        Depth of the wedge melting region, km (P = rho_s g z). Default 60 km (1.94 GPa).
    wedge_water_wt_pct : float, optional
        Bulk water of the melting region with the full slab supply, wt%. Default 0.3.
    background_water_wt_pct : float, optional
        Bulk water of ambient mantle, wt%. Default 0.01.
    cpx_mass_fraction, water_partition_coefficient : float, optional
        Katz et al. (2003) source parameters (0.17, 0.01).
    **window
        ``arc_slab_depth_km`` (105), ``arc_window_half_width_km`` (25),
        ``behind_arc_taper_km`` (70): see :func:`slab_water_supply`.

    Returns
    -------
    melt_fraction : ndarray
        F(P_w, T_w, X_w) - F(P_w, T_w, X_background), 0-1, where X_w is
        :func:`wedge_water_wt_pct`; 0 where the slab supplies no water (no slab,
        forearc, far behind the arc).

    Raises
    ------
    ValueError
        If a wedge parameter is not a finite scalar or is out of range.

    Notes
    -----
    Rules and sources in the module docstring. The melt fraction is the batch melt
    fraction of Katz et al. (2003, eqs. 16-19), evaluated only where the supply is
    positive. At the defaults the wedge under the arc holds 0.3 wt% water and melts
    to F = 0.168, against 0.045 for ambient mantle (0.01 wt%), so the flux melt
    fraction is 0.123: about 0.4 of melt per wt% of added water, inside the 0.3-0.8
    per wt% found for back-arc basins (Kelley et al. 2006).

    Examples
    --------
    >>> print(wedge_melt_fraction([float("nan"), 60.0, 105.0, 165.0, 250.0]).round(3))
    [0.    0.    0.123 0.08  0.   ]
    """
    (d,) = _as_float64(slab_depth_km)
    values = {
        "wedge_temperature_c": wedge_temperature_c,
        "wedge_melting_depth_km": wedge_melting_depth_km,
        "wedge_water_wt_pct": wedge_water_wt_pct,
        "background_water_wt_pct": background_water_wt_pct,
    }
    for name, value in values.items():
        if np.ndim(value) != 0 or not np.isfinite(value) or value < 0.0:
            msg = f"{name} must be a finite non-negative number, got {value!r}"
            raise ValueError(msg)
    pressure = float(lithostatic_pressure_gpa(float(wedge_melting_depth_km)))
    if pressure > CALIBRATION_MAX_PRESSURE_GPA:
        msg = (
            f"wedge_melting_depth_km = {float(wedge_melting_depth_km):g} km is deeper than the "
            f"{CALIBRATION_MAX_PRESSURE_GPA:.1f} GPa limit of the Katz et al. (2003) "
            "parameterization"
        )
        raise ValueError(msg)
    supply = slab_water_supply(d, **{**_WINDOW, **window})
    wet = supply > 0.0
    out = np.zeros(d.shape)
    if np.any(wet):
        background = float(background_water_wt_pct)
        water = background + supply[wet] * (float(wedge_water_wt_pct) - background)
        kwargs = {
            "cpx_mass_fraction": cpx_mass_fraction,
            "water_partition_coefficient": water_partition_coefficient,
        }
        f = melt_fraction(pressure, float(wedge_temperature_c), water, **kwargs)
        f0 = melt_fraction(pressure, float(wedge_temperature_c), background, **kwargs)
        out[wet] = np.maximum(f - f0, 0.0)
    return _scalar_if_0d(out)
