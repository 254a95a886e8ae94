"""Tests of crustal melting, underplating heat, the Moho flag and magma ranges."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from geomelt import constants as C
from geomelt.errors import OutsideCalibrationWarning, ParameterError
from geomelt.parameters import CrustalMeltingParameters
from geomelt.physics.crustal_melting import (
    crustal_melt_fraction,
    crustal_pressure_gpa,
    magma_melt_fraction,
    steady_state_moho_flag,
    underplating_temperature_increase_k,
    wet_granite_solidus_c,
)

# Water-saturated granite solidus, EPSL 1973 granite study (science.md section 6, values
# checked): GPa -> degC. science.md check 24: 620 degC at 1 GPa, +/- 40 degC.
WET_GRANITE_SOLIDUS_C = {0.2: 680.0, 1.0: 620.0, 2.5: 655.0, 3.5: 700.0}
WET_GRANITE_TOLERANCE_C = 40.0
# science.md check 25: biotite dehydration melting begins at 760-800 degC at 1 GPa and is
# extensive by 850 degC (Le Breton & Thompson 1988, CMP 99:226): 780 / 850 +/- 40 degC.
BIOTITE_ONSET_EXTENSIVE_C = (780.0, 850.0)
BIOTITE_TOLERANCE_C = 40.0
# Muscovite dehydration melting ~700-750 degC (Thompson 1982; Le Breton & Thompson 1988,
# from memory); hornblende ~850-950 degC (Clemens & Vielzeuf 1987, from memory).
MUSCOVITE_RANGE_C = (700.0, 750.0)
HORNBLENDE_RANGE_C = (850.0, 950.0)
# Basalt at low pressure: liquidus ~1200, solidus ~980-1000 degC (common practice,
# science.md section 7).
BASALT_LIQUIDUS_C = 1200.0
BASALT_SOLIDUS_C = 1000.0


@pytest.mark.parametrize(("pressure", "expected"), WET_GRANITE_SOLIDUS_C.items(), ids=str)
def test_wet_granite_solidus(pressure, expected):
    assert_allclose(wet_granite_solidus_c(pressure), expected, atol=1e-9, err_msg="nodes")
    assert abs(wet_granite_solidus_c(pressure) - expected) <= WET_GRANITE_TOLERANCE_C


def test_wet_granite_solidus_outside_range():
    with pytest.warns(OutsideCalibrationWarning) as record:
        t = wet_granite_solidus_c([0.05, 1.0, 4.0])
    assert len(record) == 1 and record[0].filename == __file__
    assert np.isnan(t[[0, 2]]).all() and t[1] == 620.0


def test_stage_constants_check_25():
    onset, extensive = BIOTITE_ONSET_EXTENSIVE_C
    assert abs(C.BIOTITE_MELTING_ONSET_C.value - onset) <= BIOTITE_TOLERANCE_C
    assert abs(C.BIOTITE_MELTING_EXTENSIVE_C.value - extensive) <= BIOTITE_TOLERANCE_C
    mid = 0.5 * (C.MUSCOVITE_MELTING_ONSET_C.value + C.MUSCOVITE_MELTING_END_C.value)
    assert MUSCOVITE_RANGE_C[0] <= mid <= MUSCOVITE_RANGE_C[1]
    mid = 0.5 * (C.HORNBLENDE_MELTING_ONSET_C.value + C.HORNBLENDE_MELTING_END_C.value)
    assert HORNBLENDE_RANGE_C[0] <= mid <= HORNBLENDE_RANGE_C[1]


def test_melt_fraction_ramp():
    t = np.array([500.0, 619.0, 660.0, 700.0, 750.0, 780.0, 850.0, 900.0, 950.0, 1100.0])
    f = crustal_melt_fraction(t, 1.0)
    # nodes of the default ramp (constants; linear in between)
    expected = [0.0, 0.0, 0.01, 0.02, 0.08, 0.08, 0.25, 0.325, 0.40, 0.40]
    assert_allclose(f, expected, atol=1e-12)
    # "tens of percent" once biotite melting is extensive (Le Breton & Thompson 1988)
    assert crustal_melt_fraction(850.0, 1.0) >= 0.1


def test_depth_and_pressure_agree():
    depth = np.array([10.0, 25.0, 40.0, 60.0])
    t = np.array([700.0, 760.0, 820.0, 900.0])
    p = crustal_pressure_gpa(depth)
    assert_allclose(p, 2800 * 9.81 * depth * 1e3 / 1e9, rtol=1e-12)
    assert_allclose(crustal_melt_fraction(t, depth_km=depth), crustal_melt_fraction(t, p))
    with pytest.raises(ValueError, match="exactly one"):
        crustal_melt_fraction(t)


def test_cold_shallow_crust_is_zero_and_silent():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        f = crustal_melt_fraction([20.0, 300.0], depth_km=[1.0, 2.0])
    assert np.all(f == 0.0)
    with pytest.warns(OutsideCalibrationWarning):
        hot = crustal_melt_fraction(700.0, depth_km=1.0)  # 0.03 GPa: solidus unknown
    assert np.isnan(hot)


def test_low_pressure_step_at_the_solidus():
    # at 0.1 GPa the wet solidus (720 degC) is above the muscovite onset (700 degC)
    f = crustal_melt_fraction([715.0, 720.0, 730.0], 0.1)
    assert f[0] == 0.0 and f[1] > 0.02 and f[2] >= f[1]


def test_nan_and_shapes():
    f = crustal_melt_fraction(np.array([[800.0, np.nan]]), np.array([[1.0], [np.nan]]))
    assert f.shape == (2, 2)
    assert np.isfinite(f[0, 0]) and np.isnan(f[0, 1]) and np.all(np.isnan(f[1]))


@settings(max_examples=100, deadline=None)
@given(st.floats(0.1, 3.5), st.floats(400.0, 1200.0), st.floats(0.0, 300.0))
def test_melt_fraction_monotone_in_temperature(p, t, dt):
    f0, f1 = crustal_melt_fraction([t, t + dt], p)
    assert 0.0 <= f0 <= f1 <= 1.0


def test_parameter_ordering_is_validated():
    with pytest.raises(ParameterError, match="must not decrease"):
        CrustalMeltingParameters(biotite_melting_onset_c=740.0)
    with pytest.raises(ParameterError, match="must not decrease"):
        CrustalMeltingParameters(biotite_melt_fraction=0.05)
    rock = CrustalMeltingParameters(biotite_melt_fraction=0.35, hornblende_melt_fraction=0.5)
    assert crustal_melt_fraction(850.0, 1.0, params=rock) == pytest.approx(0.35)


# --------------------------------------------------------------------------------------
# underplating
# --------------------------------------------------------------------------------------
def test_underplating_energy_balance():
    # 1 km of basalt (2900 kg m^-3, L = 4e5 J/kg, c = 1000, 1200 degC) under 10 km of crust
    # (2800 kg m^-3) at 800 degC: dT = 1*2900*(4e5 + 1000*400) / (1*2900*1000 + 10*2800*1000)
    expected = 2900 * 8e5 / (2900e3 + 28000e3)
    rise = underplating_temperature_increase_k(1.0, 800.0)
    assert_allclose(rise, expected, rtol=1e-12)
    assert_allclose(rise, 75.1, atol=0.1)
    # heat given by the magma equals heat taken by the crust
    t_final = 800.0 + rise
    given_j = 1.0 * 2900 * (4e5 + 1000 * (1200.0 - t_final))
    taken_j = 10.0 * 2800 * 1000 * rise
    assert_allclose(given_j, taken_j, rtol=1e-12)


def test_underplating_limits():
    rise = underplating_temperature_increase_k(
        [0.0, 1e4, 1.0, np.nan], [800.0, 800.0, 1300.0, 800.0]
    )
    assert rise[0] == 0.0
    assert rise[1] == pytest.approx(400.0)  # never hotter than the magma
    assert rise[2] == 0.0  # crust hotter than the magma gains nothing
    assert np.isnan(rise[3])
    h = np.linspace(0.0, 20.0, 50)
    assert np.all(np.diff(underplating_temperature_increase_k(h, 700.0)) >= 0.0)


# --------------------------------------------------------------------------------------
# Moho flag and magma crystallization
# --------------------------------------------------------------------------------------
def test_steady_state_moho_flag():
    t = np.array([1150.0, 1150.0, 950.0, np.nan, 1200.0])
    h = np.array([70.0, 35.0, 70.0, 70.0, np.nan])
    assert steady_state_moho_flag(t, h).tolist() == [True, False, False, False, False]
    assert steady_state_moho_flag(900.0, 70.0, max_temperature_c=850.0)


def test_basalt_crystallization_interval():
    assert C.BASALT_LIQUIDUS_C.value == BASALT_LIQUIDUS_C
    assert C.BASALT_SOLIDUS_C.value == BASALT_SOLIDUS_C
    assert magma_melt_fraction(1200.0) == 1.0  # fully molten near 1200 degC
    assert magma_melt_fraction(1000.0) == 0.0  # fully solid near 1000 degC
    assert magma_melt_fraction(1100.0) == pytest.approx(0.5)
    for name in ("andesite", "rhyolite", "basalt"):
        lo, hi = getattr(C, f"{name.upper()}_ERUPTION_TEMPERATURE_RANGE_C").value
        assert 600.0 <= lo < hi <= 1250.0
    assert np.isnan(magma_melt_fraction(np.nan))
