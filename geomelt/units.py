"""Named unit conversions: the only place geomelt converts units.

Names in geomelt carry their unit as a suffix (``heat_flow_mw_m2``,
``depth_km``). Functions here convert between those and SI.
"""

from __future__ import annotations

SECONDS_PER_YEAR = 365.25 * 24 * 3600.0
"""Julian year in seconds (IAU convention)."""

SECONDS_PER_MYR = 1.0e6 * SECONDS_PER_YEAR
M_PER_KM = 1000.0
W_PER_MW = 1.0e-3
W_PER_UW = 1.0e-6
KELVIN_OFFSET = 273.15


def km_to_m(value_km):
    """Kilometres to metres."""
    return value_km * M_PER_KM


def m_to_km(value_m):
    """Metres to kilometres."""
    return value_m / M_PER_KM


def mw_m2_to_w_m2(value_mw_m2):
    """Heat flow in mW m^-2 to W m^-2."""
    return value_mw_m2 * W_PER_MW


def w_m2_to_mw_m2(value_w_m2):
    """Heat flow in W m^-2 to mW m^-2."""
    return value_w_m2 / W_PER_MW


def uw_m3_to_w_m3(value_uw_m3):
    """Volumetric heat production in µW m^-3 to W m^-3."""
    return value_uw_m3 * W_PER_UW


def ma_to_s(value_ma):
    """Time in Ma (million years) to seconds."""
    return value_ma * SECONDS_PER_MYR


def s_to_ma(value_s):
    """Time in seconds to Ma."""
    return value_s / SECONDS_PER_MYR


def c_to_k(value_c):
    """Temperature in °C to K."""
    return value_c + KELVIN_OFFSET


def k_to_c(value_k):
    """Temperature in K to °C."""
    return value_k - KELVIN_OFFSET


PA_PER_GPA = 1.0e9
"""Pascals per gigapascal (SI prefix giga)."""


def gpa_to_pa(value_gpa):
    """Pressure in GPa to Pa."""
    return value_gpa * PA_PER_GPA


def pa_to_gpa(value_pa):
    """Pressure in Pa to GPa."""
    return value_pa / PA_PER_GPA
