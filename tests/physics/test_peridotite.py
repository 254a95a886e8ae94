"""Tests of the Katz, Spiegelman & Langmuir (2003) peridotite melting parameterization."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from geomelt.errors import OutsideCalibrationWarning
from geomelt.physics import peridotite as pd_mod
from geomelt.physics.peridotite import (
    CALIBRATION_MAX_PRESSURE_GPA,
    cpx_exhaustion_melt_fraction,
    cpx_exhaustion_temperature_c,
    cpx_reaction_coefficient,
    dry_melt_fraction,
    dry_solidus_c,
    lherzolite_liquidus_c,
    liquidus_c,
    melt_fraction,
    melt_water_wt_pct,
    solidus_depression_k,
    water_saturation_wt_pct,
    wet_solidus_c,
)

# --------------------------------------------------------------------------------------
# Reference values. All are computed from the equations and Table 2 constants of Katz et
# al. (2003), G3 4(9):1073 (science.md section 1c, status C); M_cpx = 0.17 unless stated.
# --------------------------------------------------------------------------------------
# eq. 4: T_sol = 1085.7 + 132.9 P - 5.1 P^2 (science.md check 1)
DRY_SOLIDUS_C = {0.0: 1085.7, 1.0: 1213.5, 2.0: 1331.1, 3.0: 1438.5}
EXACT_C = 0.05  # check 1-2 tolerance: the values are exact sums rounded to 0.1 degC
# eqs. 5 and 10 at 1 GPa (check 2)
LHERZOLITE_LIQUIDUS_1GPA_C = 1551.8
LIQUIDUS_1GPA_C = 1823.0
# eq. 7, F_cpx-out = M_cpx / (0.5 + 0.08 P) at P = 0, 1, 3 GPa (check 3, +/- 1e-4)
CPX_OUT_FRACTION = {0.0: 0.340, 1.0: 0.2931, 3.0: 0.2297}
# eqs. 2-4: dry F at (P GPa, T degC) -> F (check 4, +/- 5e-4: rounded to 4 decimals)
DRY_F = {(1.0, 1300.0): 0.1293, (0.0, 1200.0): 0.1591}
# eqs. 7-9 at 1 GPa, 1400 degC with M_cpx 0.17 / 0.15 (check 5, +/- 1e-3)
DRY_F_1GPA_1400C = {0.17: 0.3094, 0.15: 0.2835}
CPX_OUT_TEMPERATURE_1GPA_C = 1362.8  # eq. 8 (science.md 1c arithmetic)
# eqs. 16-18, F -> 0: (X_bulk wt%, P GPa) -> solidus depression K (checks 7-8, +/- 0.5 K)
WET_SOLIDUS_DEPRESSION_K = {
    (0.1, 1.0): 241.8,  # X = 10 wt% < X_sat: same at any P >= 1 GPa
    (0.1, 2.0): 241.8,
    (0.1, 3.0): 241.8,
    (0.05, 1.0): 143.8,
    (0.3, 1.0): 294.4,  # saturated, X = X_sat = 13.00
    (0.3, 2.0): 409.5,
    (0.3, 3.0): 497.9,
}
WET_SOLIDUS_C = {(0.1, 1.0): 971.7, (0.3, 1.0): 919.1, (0.3, 2.0): 921.6, (0.3, 3.0): 940.6}
# eq. 17: X_sat at 1 / 2 / 3 GPa (check 9, +/- 0.01 wt%)
WATER_SATURATION_WT_PCT = {1.0: 13.00, 2.0: 20.19, 3.0: 26.20}
# eq. 19 by bisection: wet F at 1 GPa, 1300 degC, 0.1 wt% (check 10, +/- 0.003)
WET_F_1GPA_1300C_01WT = 0.191


# --------------------------------------------------------------------------------------
# reference temperatures and cpx
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(("pressure", "expected"), DRY_SOLIDUS_C.items(), ids=str)
def test_dry_solidus_katz_table2(pressure, expected):
    assert_allclose(dry_solidus_c(pressure), expected, atol=EXACT_C, err_msg="eq. 4")


def test_liquidi_at_1gpa():
    assert_allclose(lherzolite_liquidus_c(1.0), LHERZOLITE_LIQUIDUS_1GPA_C, atol=EXACT_C)
    assert_allclose(liquidus_c(1.0), LIQUIDUS_1GPA_C, atol=EXACT_C)


@pytest.mark.parametrize(("pressure", "expected"), CPX_OUT_FRACTION.items(), ids=str)
def test_cpx_exhaustion_fraction(pressure, expected):
    assert_allclose(cpx_exhaustion_melt_fraction(pressure), expected, atol=1e-4, err_msg="eq. 7")
    assert_allclose(cpx_reaction_coefficient(pressure), 0.5 + 0.08 * pressure, rtol=1e-12)


def test_cpx_exhaustion_temperature():
    assert_allclose(cpx_exhaustion_temperature_c(1.0), CPX_OUT_TEMPERATURE_1GPA_C, atol=0.05)


# --------------------------------------------------------------------------------------
# dry melt fraction
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(("pt", "expected"), DRY_F.items(), ids=str)
def test_dry_melt_fraction_below_cpx_out(pt, expected):
    assert_allclose(dry_melt_fraction(*pt), expected, atol=5e-4, err_msg="eqs. 2-4")
    # with cpx left, F does not depend on M_cpx
    assert_allclose(dry_melt_fraction(*pt, cpx_mass_fraction=0.12), expected, atol=5e-4)


@pytest.mark.parametrize(("mcpx", "expected"), DRY_F_1GPA_1400C.items(), ids=str)
def test_dry_melt_fraction_after_cpx_out(mcpx, expected):
    assert_allclose(
        dry_melt_fraction(1.0, 1400.0, cpx_mass_fraction=mcpx),
        expected,
        atol=1e-3,
        err_msg="eqs. 7-9",
    )


@pytest.mark.parametrize("pressure", [0.0, 1.0, 3.0, 7.0, 12.0])
def test_dry_melt_fraction_limits_and_continuity(pressure):
    # check 6: F = 0 at T_sol, 1 at T_liq, continuous at T_cpx-out (+/- 1e-9)
    t_sol, t_liq = dry_solidus_c(pressure), liquidus_c(pressure)
    t_cpx = cpx_exhaustion_temperature_c(pressure)
    f_cpx = cpx_exhaustion_melt_fraction(pressure)
    assert dry_melt_fraction(pressure, t_sol) == 0.0
    assert dry_melt_fraction(pressure, t_sol - 50.0) == 0.0
    assert_allclose(dry_melt_fraction(pressure, t_liq), 1.0, atol=1e-9)
    assert dry_melt_fraction(pressure, t_liq + 50.0) == 1.0
    below = dry_melt_fraction(pressure, t_cpx - 1e-7)
    above = dry_melt_fraction(pressure, t_cpx + 1e-7)
    assert_allclose([below, above], [f_cpx, f_cpx], atol=1e-9, err_msg="jump at cpx-out")
    t = np.linspace(t_sol - 10.0, t_liq + 10.0, 2001)
    assert np.all(np.diff(dry_melt_fraction(pressure, t)) >= 0.0)


def test_dry_melt_fraction_broadcasts_and_propagates_nan():
    p = np.array([[1.0], [2.0], [np.nan]])
    t = np.array([1300.0, 1400.0, np.nan, 1500.0])
    f = dry_melt_fraction(p, t)
    assert f.shape == (3, 4)
    assert np.all(np.isnan(f[2])) and np.all(np.isnan(f[:, 2]))
    assert np.all(np.isfinite(f[:2, [0, 1, 3]]))
    assert np.ndim(dry_melt_fraction(1.0, 1300.0)) == 0


# --------------------------------------------------------------------------------------
# water
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(("pressure", "expected"), WATER_SATURATION_WT_PCT.items(), ids=str)
def test_water_saturation(pressure, expected):
    assert_allclose(water_saturation_wt_pct(pressure), expected, atol=0.01, err_msg="eq. 17")


@pytest.mark.parametrize(("case", "expected"), WET_SOLIDUS_DEPRESSION_K.items(), ids=str)
def test_wet_solidus_depression(case, expected):
    water, pressure = case
    depression = dry_solidus_c(pressure) - wet_solidus_c(pressure, water)
    assert_allclose(depression, expected, atol=0.5, err_msg="eqs. 16-18 with F -> 0")
    x = melt_water_wt_pct(water, 0.0, pressure)
    assert_allclose(solidus_depression_k(x), expected, atol=0.5)


@pytest.mark.parametrize(("case", "expected"), WET_SOLIDUS_C.items(), ids=str)
def test_wet_solidus_temperature(case, expected):
    assert_allclose(wet_solidus_c(case[1], case[0]), expected, atol=0.5)


def test_wet_melt_fraction_check_value():
    f = melt_fraction(1.0, 1300.0, 0.1)
    assert_allclose(f, WET_F_1GPA_1300C_01WT, atol=3e-3, err_msg="eq. 19, science.md check 10")
    assert f > dry_melt_fraction(1.0, 1300.0)


def test_wet_melt_fraction_solves_eq19_to_1e6():
    # the returned F satisfies F = F_dry(P, T + K X(F)^gamma) within the required 1e-6
    rng = np.random.default_rng(7)
    p = rng.uniform(0.05, 8.0, 500)
    t = rng.uniform(900.0, 1900.0, 500)
    w = rng.uniform(0.0, 0.5, 500)
    f = melt_fraction(p, t, w)
    x = melt_water_wt_pct(w, f, p)
    fixed_point = dry_melt_fraction(p, t + solidus_depression_k(x))
    inside = (f > 0.0) & (f < 1.0)
    # the residual F_dry(...) - F changes sign within 3e-8 of the returned F
    lo = dry_melt_fraction(p, t + solidus_depression_k(melt_water_wt_pct(w, f - 1e-6, p)))
    hi = dry_melt_fraction(p, t + solidus_depression_k(melt_water_wt_pct(w, f + 1e-6, p)))
    assert np.all(lo[inside] - (f[inside] - 1e-6) >= 0.0)
    assert np.all(hi[inside] - (f[inside] + 1e-6) <= 0.0)
    assert np.all(np.abs(fixed_point - f)[inside] < 1e-3)  # sanity: same equation


def test_wet_melt_fraction_exact_limits():
    # F is exactly 0 at and below the wet solidus and exactly 1 far above the liquidus
    p = np.array([1.0, 2.0, 3.0])
    t_wet = wet_solidus_c(p, 0.1)
    assert np.all(melt_fraction(p, t_wet - 1e-6, 0.1) == 0.0)
    assert np.all(melt_fraction(p, t_wet + 1.0, 0.1) > 0.0)
    assert np.all(melt_fraction(p, liquidus_c(p) + 1.0, 0.1) == 1.0)


def test_zero_water_is_dry():
    p = np.linspace(0.0, 12.0, 50)
    t = np.linspace(1000.0, 2000.0, 50)
    assert_allclose(melt_fraction(p, t, 0.0), dry_melt_fraction(p, t), atol=0.0)
    assert_allclose(melt_fraction(p, t, np.zeros(50)), dry_melt_fraction(p, t), atol=0.0)


def test_hydrous_partial_derivatives_match_differences():
    # the analytic partials used by the isentropic path, against central differences away
    # from the cpx-out kink (rtol 1e-4: truncation error of the 0.01 K / 1e-5 GPa steps)
    p = np.array([1.0, 2.0, 3.0, 1.5, 4.0])
    t = np.array([1300.0, 1380.0, 1500.0, 1250.0, 1700.0])
    w = np.array([0.0, 0.05, 0.1, 0.3, 0.02])
    f = melt_fraction(p, t, w)
    parts = pd_mod._DryParts(p, 0.17)
    df_dt, df_dp = pd_mod._hydrous_partials(parts, t, f, w, 0.01)

    def solve(pp, tt):
        return pd_mod._bisect_melt_fraction(pd_mod._DryParts(pp, 0.17), lambda _f: tt, w, 0.01, 50)

    fd_t = (solve(p, t + 0.01) - solve(p, t - 0.01)) / 0.02
    fd_p = (solve(p + 1e-5, t) - solve(p - 1e-5, t)) / 2e-5
    assert_allclose(df_dt, fd_t, rtol=1e-4, atol=1e-9)
    assert_allclose(df_dp, fd_p, rtol=1e-4, atol=1e-7)


# --------------------------------------------------------------------------------------
# calibrated range
# --------------------------------------------------------------------------------------
def test_outside_calibration_gives_nan_and_one_warning():
    assert_allclose(CALIBRATION_MAX_PRESSURE_GPA, 132.9 / (2 * 5.1), rtol=1e-12)
    with pytest.warns(OutsideCalibrationWarning) as record:
        f = melt_fraction([-0.5, 1.0, 13.5, 20.0], 1400.0, 0.05)
    assert len(record) == 1, "one warning per call"
    assert record[0].filename == __file__, "stacklevel points at the caller"
    assert np.isnan(f[[0, 2, 3]]).all() and np.isfinite(f[1])
    with pytest.warns(OutsideCalibrationWarning):
        assert np.isnan(dry_solidus_c(14.0))
    with pytest.warns(OutsideCalibrationWarning):
        assert np.isnan(melt_fraction(1.0, 1400.0, -0.1))


def test_inside_calibration_is_silent():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        melt_fraction(np.linspace(0.0, CALIBRATION_MAX_PRESSURE_GPA, 20), 1500.0, 0.1)
        wet_solidus_c(np.array([0.0, 5.0, 13.0]), 0.2)


# --------------------------------------------------------------------------------------
# properties
# --------------------------------------------------------------------------------------
PRESSURE = st.floats(0.0, 13.0)
TEMPERATURE = st.floats(700.0, 2300.0)
WATER = st.floats(0.0, 1.0)


@settings(max_examples=80, deadline=None)
@given(PRESSURE, TEMPERATURE, WATER)
def test_melt_fraction_is_a_fraction(p, t, w):
    f = melt_fraction(p, t, w)
    assert 0.0 <= f <= 1.0


@settings(max_examples=80, deadline=None)
@given(PRESSURE, TEMPERATURE, st.floats(0.0, 200.0), WATER)
def test_melt_fraction_non_decreasing_in_temperature(p, t, dt, w):
    # bisection error 3e-8 on each value
    assert melt_fraction(p, t + dt, w) >= melt_fraction(p, t, w) - 1e-7


@settings(max_examples=80, deadline=None)
@given(PRESSURE, TEMPERATURE, WATER, st.floats(0.0, 0.5))
def test_melt_fraction_non_decreasing_in_water(p, t, w, dw):
    assert melt_fraction(p, t, w + dw) >= melt_fraction(p, t, w) - 1e-7


@settings(max_examples=60, deadline=None)
@given(st.floats(0.0, 13.0), st.floats(0.05, 0.25))
def test_continuity_at_cpx_exhaustion(p, mcpx):
    t_cpx = cpx_exhaustion_temperature_c(p, mcpx)
    f_cpx = cpx_exhaustion_melt_fraction(p, mcpx)
    f = dry_melt_fraction(p, np.array([t_cpx - 1e-6, t_cpx, t_cpx + 1e-6]), mcpx)
    assert_allclose(f, f_cpx, atol=1e-7)
