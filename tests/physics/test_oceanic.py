"""Tests of half-space cooling, GDH1 and the oceanic geotherm."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy import special

from geomelt import constants
from geomelt.parameters import ThermalParameters
from geomelt.physics.oceanic import (
    OceanicGeotherm,
    boundary_layer_thickness_km,
    gdh1_age_from_heat_flow_ma,
    gdh1_depth_m,
    gdh1_heat_flow_mw_m2,
    half_space_heat_flow_mw_m2,
    half_space_temperature_c,
    oceanic_geotherm_temperature_c,
    oceanic_heat_flow_mw_m2,
    oceanic_isotherm_depth_km,
    oceanic_lab_depth_km,
)

# --------------------------------------------------------------------------------------
# Reference values
# --------------------------------------------------------------------------------------
# GDH1 heat flow (Stein & Stein 1992, Nature 359:123), evaluated from the published fit
# (science.md section 4 checks, C). age Ma -> mW m^-2.
GDH1_HEAT_FLOW_MW_M2 = {1.0: 510.0, 25.0: 102.0, 100.0: 54.0}
GDH1_HEAT_FLOW_TOLERANCE = 0.5  # reference values rounded
GDH1_BRANCH_GAP_TOLERANCE = 0.1  # the published branches differ by 0.04 at 55 Ma

# GDH1 seafloor depth (Stein & Stein 1992; science.md section 4 checks, C). Ma -> m.
GDH1_DEPTH_M = {10.0: 3754.0, 100.0: 5498.0}
GDH1_DEPTH_TOLERANCE_M = 1.0  # reference values rounded to 1 m

# Half-space coefficient k dT / sqrt(pi kappa) with the GDH1 constants k = 3.138 W/m/K,
# dT = 1450 K, kappa = 0.804e-6 m^2/s: 509.6 mW m^-2 Ma^1/2 (science.md item 19, C),
# close to GDH1's published 510.
HALF_SPACE_COEFFICIENT = 509.6
HALF_SPACE_COEFFICIENT_TOLERANCE = 2.0

# Half-space boundary layer 2.32 sqrt(kappa t) with kappa = 1e-6 m^2/s: 41, 92, 130 km at
# 10, 50, 100 Ma (science.md section 4, C).
BOUNDARY_LAYER_KM = {10.0: 41.0, 50.0: 92.0, 100.0: 130.0}
BOUNDARY_LAYER_TOLERANCE_KM = 0.5  # rounded to 1 km

# Global mean heat flow, continents / oceans / global (Pollack, Hurter & Johnson 1993,
# Rev. Geophys. 31:267).
POLLACK_1993_MW_M2 = {"continents": 65.0, "oceans": 101.0, "global": 87.0}

PARAMS = ThermalParameters()
COLD_SURFACE = ThermalParameters(surface_temperature_c=0.0)


@pytest.mark.parametrize("age", list(GDH1_HEAT_FLOW_MW_M2), ids=lambda a: f"{a:g}Ma")
def test_gdh1_heat_flow(age):
    assert_allclose(
        gdh1_heat_flow_mw_m2(age), GDH1_HEAT_FLOW_MW_M2[age], atol=GDH1_HEAT_FLOW_TOLERANCE
    )


def test_gdh1_heat_flow_branches_meet_at_55_ma():
    young = gdh1_heat_flow_mw_m2(55.0)
    old = gdh1_heat_flow_mw_m2(np.nextafter(55.0, 60.0))
    assert abs(young - old) <= GDH1_BRANCH_GAP_TOLERANCE


@pytest.mark.parametrize("age", list(GDH1_DEPTH_M), ids=lambda a: f"{a:g}Ma")
def test_gdh1_depth(age):
    assert_allclose(gdh1_depth_m(age), GDH1_DEPTH_M[age], atol=GDH1_DEPTH_TOLERANCE_M)


def test_gdh1_depth_branches_meet_at_20_ma():
    young = gdh1_depth_m(np.nextafter(20.0, 0.0))
    old = gdh1_depth_m(20.0)
    assert abs(young - old) <= 1.0  # the published fits are 0.4 m apart at 20 Ma


def test_half_space_coefficient_reproduces_gdh1():
    coefficient = half_space_heat_flow_mw_m2(1.0, 3.138, 1450.0, 0.804e-6)
    assert_allclose(coefficient, HALF_SPACE_COEFFICIENT, atol=HALF_SPACE_COEFFICIENT_TOLERANCE)
    # q scales as t^-1/2
    assert_allclose(
        half_space_heat_flow_mw_m2(4.0, 3.138, 1450.0, 0.804e-6), coefficient / 2.0, rtol=1e-12
    )


@pytest.mark.parametrize("age", list(BOUNDARY_LAYER_KM), ids=lambda a: f"{a:g}Ma")
def test_boundary_layer_thickness(age):
    assert_allclose(
        boundary_layer_thickness_km(age, 1.0e-6, 1.16),
        BOUNDARY_LAYER_KM[age],
        atol=BOUNDARY_LAYER_TOLERANCE_KM,
    )


def test_global_mean_heat_flow_constants():
    assert constants.GLOBAL_MEAN_HEAT_FLOW_MW_M2 == POLLACK_1993_MW_M2


def test_global_mean_oceanic_heat_flow_gives_plausible_age():
    # (510 / 101)^2 = 25.5 Ma; the mean age of the ocean floor is tens of Ma
    age = gdh1_age_from_heat_flow_ma(POLLACK_1993_MW_M2["oceans"])
    assert 10.0 <= age <= 80.0
    assert_allclose(age, (510.0 / 101.0) ** 2, rtol=1e-12)


# --------------------------------------------------------------------------------------
# GDH1 inversion
# --------------------------------------------------------------------------------------
@settings(max_examples=100, deadline=None)
@given(age=st.floats(0.01, 199.0))
def test_gdh1_age_round_trip(age):
    recovered = gdh1_age_from_heat_flow_ma(gdh1_heat_flow_mw_m2(age), max_age_ma=200.0)
    # the published branches do not meet exactly at 55 Ma: ages in (55, 55.07) map to 55
    assert_allclose(recovered, age, rtol=1e-9, atol=0.08)


def test_gdh1_age_limits():
    max_age = 180.0
    ages = gdh1_age_from_heat_flow_ma(
        np.array([np.nan, 0.0, -10.0, 30.0, 48.0, 48.001, 1.0e4]), max_age_ma=max_age
    )
    assert np.all(np.isnan(ages[:3]))
    assert_allclose(ages[3:6], max_age)  # at, below or just above the 48 mW m^-2 asymptote
    assert 0.0 < ages[6] < 0.01
    # default cap from the parameter set
    assert gdh1_age_from_heat_flow_ma(40.0) == PARAMS.oceanic_max_age_ma


def test_gdh1_heat_flow_decreases_with_age():
    ages = np.linspace(0.1, 300.0, 3000)
    steps = np.diff(gdh1_heat_flow_mw_m2(ages))
    crosses_switch = (ages[:-1] <= 55.0) & (ages[1:] > 55.0)
    assert np.all(steps[~crosses_switch] < 0.0)
    # the published branches step up by 0.04 mW m^-2 at 55 Ma
    assert np.all(steps[crosses_switch] < 0.05)


# --------------------------------------------------------------------------------------
# Half-space temperature
# --------------------------------------------------------------------------------------
def test_half_space_limits():
    t0, tm, kappa = 0.0, 1400.0, 1.0e-6
    assert_allclose(half_space_temperature_c(0.0, 50.0, t0, tm, kappa), t0)
    assert_allclose(half_space_temperature_c(1.0e4, 50.0, t0, tm, kappa), tm, rtol=1e-12)
    # zero age: interior temperature right below the surface
    assert_allclose(half_space_temperature_c([0.0, 1.0], 0.0, t0, tm, kappa), [t0, tm])
    # the boundary-layer base is where erf reaches erf(1.16) = 0.90
    depth = boundary_layer_thickness_km(50.0, kappa, 1.16)
    assert_allclose(
        half_space_temperature_c(depth, 50.0, t0, tm, kappa), tm * special.erf(1.16), rtol=1e-12
    )
    assert_allclose(special.erf(1.16), 0.90, atol=0.002)


def test_half_space_surface_gradient_matches_heat_flow():
    # Fourier's law at the surface: q0 = k dT/dz (one-sided difference, h = 1e-4 km)
    k, t0, tm, kappa, age, h = 3.0, 0.0, 1350.0, 0.8e-6, 30.0, 1.0e-4
    gradient_k_km = (half_space_temperature_c(h, age, t0, tm, kappa) - t0) / h
    # mW m^-2 = (W m^-1 K^-1) (K km^-1)
    assert_allclose(
        k * gradient_k_km, half_space_heat_flow_mw_m2(age, k, tm - t0, kappa), rtol=1e-5
    )


def test_invalid_age_gives_nan():
    for func in (
        lambda a: half_space_temperature_c(10.0, a),
        lambda a: gdh1_heat_flow_mw_m2(a),
        lambda a: gdh1_depth_m(a),
        lambda a: boundary_layer_thickness_km(a),
        lambda a: oceanic_geotherm_temperature_c(10.0, a),
        lambda a: oceanic_lab_depth_km(a),
        lambda a: oceanic_isotherm_depth_km(300.0, a),
        lambda a: oceanic_heat_flow_mw_m2(7.0, a, 100.0),
    ):
        assert np.all(np.isnan(func(np.array([np.nan, -1.0]))))


# --------------------------------------------------------------------------------------
# Oceanic geotherm with an adiabatic interior
# --------------------------------------------------------------------------------------
def test_oceanic_geotherm_without_adiabat_is_half_space():
    p = ThermalParameters(adiabat_gradient_k_km=0.2)  # smallest allowed G
    z = np.linspace(0.0, 150.0, 31)
    # remove the adiabatic part by hand: T - T0 = (T_p - T0 + G z) erf
    erf = (oceanic_geotherm_temperature_c(z, 40.0, p) - p.surface_temperature_c) / (
        p.mantle_potential_temperature_c - p.surface_temperature_c + p.adiabat_gradient_k_km * z
    )
    half_space = half_space_temperature_c(
        z,
        40.0,
        p.surface_temperature_c,
        p.mantle_potential_temperature_c,
        p.mantle_thermal_diffusivity_m2_s,
    )
    expected_erf = (half_space - p.surface_temperature_c) / (
        p.mantle_potential_temperature_c - p.surface_temperature_c
    )
    assert_allclose(erf, expected_erf, rtol=1e-12, atol=1e-15)


def test_oceanic_geotherm_reaches_adiabat_at_depth():
    z = np.array([400.0, 600.0])
    adiabat = PARAMS.mantle_potential_temperature_c + PARAMS.adiabat_gradient_k_km * z
    assert_allclose(oceanic_geotherm_temperature_c(z, 30.0, PARAMS), adiabat, rtol=1e-9)


def test_oceanic_lab_is_capped_by_gdh1_plate():
    young, old = oceanic_lab_depth_km(np.array([10.0, 200.0]), PARAMS)
    assert_allclose(
        young,
        boundary_layer_thickness_km(
            10.0, PARAMS.mantle_thermal_diffusivity_m2_s, PARAMS.boundary_layer_erf_argument
        ),
    )
    assert old == PARAMS.gdh1_plate_thickness_km


def test_oceanic_heat_flow_matches_observed_surface_value():
    q0 = np.array([60.0, 101.0, 250.0])
    age = gdh1_age_from_heat_flow_ma(q0)
    assert_allclose(oceanic_heat_flow_mw_m2(0.0, age, q0, PARAMS), q0, rtol=1e-12)
    # heat flow decreases through the cooled lid
    assert np.all(oceanic_heat_flow_mw_m2(7.0, age, q0, PARAMS) < q0)


@settings(max_examples=80, deadline=None)
@given(z=st.floats(0.0, 340.0), age=st.floats(0.05, 250.0))
def test_oceanic_isotherm_inverts_geotherm(z, age):
    temperature = oceanic_geotherm_temperature_c(z, age, PARAMS)
    assert_allclose(oceanic_isotherm_depth_km(temperature, age, PARAMS), z, atol=1e-6)


def test_oceanic_isotherm_limits():
    t0 = PARAMS.surface_temperature_c
    assert_allclose(oceanic_isotherm_depth_km([t0 - 1.0, t0], 20.0, PARAMS), 0.0)
    deepest = oceanic_geotherm_temperature_c(PARAMS.lab_max_depth_km, 20.0, PARAMS)
    assert np.isnan(oceanic_isotherm_depth_km(deepest + 1.0, 20.0, PARAMS))
    # zero age: the adiabat reaches the surface
    assert_allclose(oceanic_isotherm_depth_km([600.0, 1395.0], 0.0, PARAMS), [0.0, 100.0])


def test_oceanic_geotherm_object_matches_functions():
    ages = np.array([[1.0, 20.0], [80.0, 150.0]])
    geo = OceanicGeotherm(ages, COLD_SURFACE)
    assert geo.shape == (2, 2)
    assert_allclose(
        geo.temperature_c(12.0), oceanic_geotherm_temperature_c(12.0, ages, COLD_SURFACE)
    )
    assert_allclose(
        geo.isotherm_depth_km(500.0), oceanic_isotherm_depth_km(500.0, ages, COLD_SURFACE)
    )
    assert_allclose(geo.lab_depth_km, oceanic_lab_depth_km(ages, COLD_SURFACE))


@pytest.mark.parametrize("shape", [(), (4,), (2, 3)], ids=["0-d", "1-d", "2-d"])
def test_oceanic_shapes(shape):
    age = np.full(shape, 30.0)
    for out in (
        half_space_temperature_c(np.full(shape, 10.0), age),
        gdh1_heat_flow_mw_m2(age),
        gdh1_depth_m(age),
        gdh1_age_from_heat_flow_ma(np.full(shape, 90.0)),
        oceanic_geotherm_temperature_c(10.0, age),
        oceanic_isotherm_depth_km(400.0, age),
        oceanic_lab_depth_km(age),
        oceanic_heat_flow_mw_m2(7.0, age, 90.0),
    ):
        assert np.shape(out) == shape
