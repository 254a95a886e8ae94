"""Tests of the thermal-state entry point used by the pipeline."""

from __future__ import annotations

import importlib
import warnings

import numpy as np
import pytest
from numpy.testing import assert_allclose

from geomelt.errors import OutsideCalibrationWarning
from geomelt.parameters import ThermalParameters
from geomelt.physics.geotherm import (
    conductive_heat_flow_mw_m2,
    conductive_temperature_c,
    geotherm_temperature_c,
    isotherm_depth_km,
    lab_depth_km,
)
from geomelt.physics.oceanic import (
    gdh1_age_from_heat_flow_ma,
    oceanic_geotherm_temperature_c,
    oceanic_heat_flow_mw_m2,
    oceanic_isotherm_depth_km,
    oceanic_lab_depth_km,
)
from geomelt.physics.thermal_state import THERMAL_STATE_OUTPUTS, thermal_state

# the package re-exports the function under the module's name; get the module itself
thermal_state_module = importlib.import_module("geomelt.physics.thermal_state")

FLOAT32_RTOL = 2e-7  # outputs are float32 (24-bit mantissa)
FLOAT32_ATOL = 1e-5  # for values near zero

# Global mean oceanic heat flow (Pollack, Hurter & Johnson 1993, Rev. Geophys. 31:267).
GLOBAL_MEAN_OCEANIC_HEAT_FLOW_MW_M2 = 101.0

PARAMS = ThermalParameters()


def _cells():
    """A continental and an oceanic grid of heat flow and crustal thickness."""
    crust = np.array([[40.0, 7.0, 55.0], [25.0, 6.0, 35.0]])
    heat_flow = np.array([[60.0, 101.0, 45.0], [90.0, 250.0, 70.0]])
    return crust, heat_flow


@pytest.mark.parametrize("shape", [(), (7,), (3, 5)], ids=["0-d", "1-d", "2-d"])
def test_keys_dtypes_and_shapes(shape):
    params = ThermalParameters(
        temperature_depths_km=(2.0, 15.0), isotherms_c=(100.0, 200.0, 300.0, 800.0)
    )
    rng = np.random.default_rng(3)
    crust = rng.uniform(5.0, 60.0, shape)
    heat_flow = rng.uniform(40.0, 120.0, shape)
    out = thermal_state(crust, heat_flow, params)
    assert set(out) == set(THERMAL_STATE_OUTPUTS)
    for name, values in out.items():
        expected_dtype = bool if name == "is_oceanic" else np.float32
        assert values.dtype == expected_dtype, name
    assert out["temperature_at_depths_c"].shape == (2, *shape)
    assert out["isotherm_depths_km"].shape == (4, *shape)
    for name in THERMAL_STATE_OUTPUTS[:5]:
        assert out[name].shape == shape, name


def test_float32_rasters_are_computed_in_float64():
    crust = np.array([[35.0, 7.5], [52.0, 9.0]], dtype=np.float32)
    heat_flow = np.array([[58.0, 120.0], [41.0, 95.0]], dtype=np.float32)
    single = thermal_state(crust, heat_flow, PARAMS)
    double = thermal_state(crust.astype(np.float64), heat_flow.astype(np.float64), PARAMS)
    for name in THERMAL_STATE_OUTPUTS:
        np.testing.assert_array_equal(single[name], double[name], err_msg=name)


def test_inputs_broadcast():
    out = thermal_state(np.array([30.0, 40.0, 50.0]), 65.0)
    assert out["moho_temperature_c"].shape == (3,)
    assert np.all(np.diff(out["moho_temperature_c"]) > 0.0)


def test_continental_cells_match_geotherm_functions():
    crust, heat_flow = _cells()
    out = thermal_state(crust, heat_flow, PARAMS)
    land = crust >= PARAMS.oceanic_crust_max_thickness_km
    assert np.array_equal(out["is_oceanic"], ~land)
    c, q = crust[land], heat_flow[land]
    tol = {"rtol": FLOAT32_RTOL, "atol": FLOAT32_ATOL}
    assert_allclose(out["moho_temperature_c"][land], conductive_temperature_c(c, q, c), **tol)
    assert_allclose(out["moho_heat_flow_mw_m2"][land], conductive_heat_flow_mw_m2(c, q, c), **tol)
    assert_allclose(out["lab_depth_km"][land], lab_depth_km(q, c), **tol)
    assert np.all(np.isnan(out["plate_age_ma"][land]))
    for i, depth in enumerate(PARAMS.temperature_depths_km):
        expected = geotherm_temperature_c(depth, q, c)
        assert_allclose(out["temperature_at_depths_c"][i][land], expected, **tol)
    for i, temperature in enumerate(PARAMS.isotherms_c):
        expected = isotherm_depth_km(temperature, q, c)
        assert_allclose(out["isotherm_depths_km"][i][land], expected, **tol)


def test_oceanic_cells_use_half_space_with_gdh1_age():
    crust, heat_flow = _cells()
    out = thermal_state(crust, heat_flow, PARAMS)
    sea = out["is_oceanic"]
    c, q = crust[sea], heat_flow[sea]
    age = gdh1_age_from_heat_flow_ma(q, PARAMS.oceanic_max_age_ma)
    tol = {"rtol": FLOAT32_RTOL, "atol": FLOAT32_ATOL}
    assert_allclose(out["plate_age_ma"][sea], age, **tol)
    assert_allclose(out["moho_temperature_c"][sea], oceanic_geotherm_temperature_c(c, age), **tol)
    assert_allclose(out["moho_heat_flow_mw_m2"][sea], oceanic_heat_flow_mw_m2(c, age, q), **tol)
    assert_allclose(out["lab_depth_km"][sea], oceanic_lab_depth_km(age), **tol)
    for i, depth in enumerate(PARAMS.temperature_depths_km):
        expected = oceanic_geotherm_temperature_c(depth, age)
        assert_allclose(out["temperature_at_depths_c"][i][sea], expected, **tol)
    for i, temperature in enumerate(PARAMS.isotherms_c):
        expected = oceanic_isotherm_depth_km(temperature, age)
        assert_allclose(out["isotherm_depths_km"][i][sea], expected, **tol)


def test_oceanic_cells_with_conductive_option_use_continental_model():
    params = ThermalParameters(oceanic_geotherm="conductive")
    crust, heat_flow = _cells()
    out = thermal_state(crust, heat_flow, params)
    sea = out["is_oceanic"]
    assert sea.any()
    assert np.all(np.isnan(out["plate_age_ma"]))
    assert_allclose(
        out["moho_temperature_c"][sea],
        conductive_temperature_c(crust[sea], heat_flow[sea], crust[sea], params),
        rtol=FLOAT32_RTOL,
    )


def test_global_mean_oceanic_heat_flow_gives_tens_of_ma():
    out = thermal_state(7.0, GLOBAL_MEAN_OCEANIC_HEAT_FLOW_MW_M2, PARAMS)
    assert out["is_oceanic"]
    assert 10.0 <= out["plate_age_ma"] <= 80.0
    assert 0.0 < out["lab_depth_km"] < PARAMS.gdh1_plate_thickness_km


def test_invalid_inputs_give_nan():
    crust = np.array([np.nan, 40.0, 0.0, 40.0, -3.0, 7.0, np.inf])
    heat_flow = np.array([60.0, np.nan, 60.0, 0.0, 60.0, -1.0, 60.0])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        out = thermal_state(crust, heat_flow, PARAMS)
    assert not out["is_oceanic"].any()
    for name, values in out.items():
        if name != "is_oceanic":
            assert np.all(np.isnan(values)), name


def test_result_does_not_depend_on_block_size(monkeypatch):
    rng = np.random.default_rng(7)
    crust = rng.uniform(4.0, 70.0, (37, 29))
    heat_flow = rng.uniform(30.0, 130.0, (37, 29))
    crust[3, 4] = np.nan
    reference = thermal_state(crust, heat_flow, PARAMS)
    monkeypatch.setattr(thermal_state_module, "_BLOCK_CELLS", 50)
    blocked = thermal_state(crust, heat_flow, PARAMS)
    for name in THERMAL_STATE_OUTPUTS:
        np.testing.assert_array_equal(blocked[name], reference[name], err_msg=name)


def test_mostly_oceanic_block_matches_mostly_continental_block():
    # blocks switch between computing the continental model everywhere and on a subset
    crust = np.array([7.0, 7.0, 7.0, 40.0])
    heat_flow = np.array([120.0, 90.0, 70.0, 60.0])
    mostly_oceanic = thermal_state(crust, heat_flow, PARAMS)
    mostly_continental = thermal_state(
        np.concatenate([crust, np.full(10, 40.0)]), np.concatenate([heat_flow, np.full(10, 60.0)])
    )
    for name in THERMAL_STATE_OUTPUTS:
        np.testing.assert_array_equal(
            mostly_oceanic[name], mostly_continental[name][..., :4], err_msg=name
        )


def test_low_heat_flow_warns_and_does_not_crash():
    with pytest.warns(OutsideCalibrationWarning, match="heat flow"):
        out = thermal_state(np.array([40.0, 40.0]), np.array([10.0, 60.0]), PARAMS)
    assert out["moho_heat_flow_mw_m2"][0] == 0.0
    assert np.isnan(out["lab_depth_km"][0])
    assert np.isfinite(out["lab_depth_km"][1])


def test_no_warning_for_ordinary_inputs():
    rng = np.random.default_rng(11)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        thermal_state(rng.uniform(5.0, 70.0, 500), rng.uniform(35.0, 150.0, 500), PARAMS)


def test_thickened_hot_crust_runs():
    # steady state overestimates Moho temperature under orogens (science.md section 6)
    out = thermal_state(70.0, 100.0, PARAMS)
    assert np.isfinite(out["moho_temperature_c"])
    assert out["moho_temperature_c"] > 1100.0
