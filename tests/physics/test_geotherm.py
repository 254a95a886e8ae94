"""Tests of the continental conductive geotherm, the lithosphere base and isotherm depths."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.optimize import brentq

from geomelt.parameters import ThermalParameters
from geomelt.physics.geotherm import (
    ContinentalGeotherm,
    conductive_heat_flow_mw_m2,
    conductive_temperature_c,
    geotherm_temperature_c,
    isotherm_depth_km,
    lab_depth_km,
    mantle_adiabat_temperature_c,
)

# --------------------------------------------------------------------------------------
# Reference values
# --------------------------------------------------------------------------------------
# Turcotte & Schubert 2002 eq. 4-31, T(35 km) with q_m = 0.6 q0, h_r = 10 km, T0 = 0 degC and
# one conductivity k for crust and mantle. Computed from the equation (science.md section 3
# worked example, status C): (q0 mW m^-2, k W m^-1 K^-1) -> degC.
TS_EQ_4_31_T35_C = {
    (60.0, 2.5): 597.1,
    (90.0, 2.5): 895.7,
    (60.0, 3.0): 497.6,
    (90.0, 3.0): 746.4,
}
TS_EQ_4_31_TOLERANCE_C = 0.5  # the reference values are rounded to 0.1 degC

# Hasterok & Chapman (2011) partition, k_crust 2.5, k_mantle 3.0, Moho 40 km, T_p 1350 degC,
# G 0.45 K/km, T0 = 0 degC. Computed (science.md section 3, C): regression values for this
# code, not published results. q0 (mW m^-2) -> (LAB km, Moho temperature degC).
HC_RECIPE_TABLE = {
    40.0: (200.0, 461.0),
    50.0: (133.0, 588.0),
    60.0: (100.0, 714.0),
    70.0: (79.0, 841.0),
    80.0: (65.0, 968.0),
    90.0: (55.0, 1094.0),
    100.0: (47.0, 1221.0),
}
HC_RECIPE_LAB_TOLERANCE_KM = 1.0  # table rounded to 1 km
HC_RECIPE_MOHO_TOLERANCE_C = 1.0  # table rounded to 1 degC

# Single-layer Turcotte & Schubert (exponential, 0.6 q0 partition), k = 3.0 in crust and
# mantle, same adiabat and T0 = 0. Computed (science.md section 3, C). q0 -> LAB km.
TS_SINGLE_LAYER_LAB_KM = {
    40.0: 172.0,
    50.0: 134.0,
    60.0: 110.0,
    70.0: 93.0,
    80.0: 80.0,
    90.0: 70.0,
    100.0: 62.0,
}
TS_SINGLE_LAYER_TOLERANCE_KM = 1.5  # table rounded to 1 km

# Published: Precambrian xenolith geotherms fit q0 = 40 mW m^-2 with a ~200 km lithosphere
# (Hasterok & Chapman 2011, EPSL 307:59, abstract).
HC2011_CRATON_HEAT_FLOW_MW_M2 = 40.0
HC2011_CRATON_LAB_KM = 200.0
HC2011_CRATON_TOLERANCE_KM = 30.0  # "~200 km" read from a xenolith fit

# q0 = 90 mW m^-2 gives a ~55 km lithosphere in the same recipe (science.md item 17, C).
HOT_HEAT_FLOW_MW_M2 = 90.0
HOT_LAB_KM = 55.0
HOT_LAB_TOLERANCE_KM = 15.0

HC_RECIPE = ThermalParameters(surface_temperature_c=0.0)
TS_SINGLE_LAYER = ThermalParameters(
    surface_temperature_c=0.0,
    heat_flow_partition="pollack_chapman",
    crust_conductivity_w_m_k=3.0,
    mantle_conductivity_w_m_k=3.0,
)
PARTITIONS = {
    "hasterok_chapman": ThermalParameters(),
    "pollack_chapman": ThermalParameters(heat_flow_partition="pollack_chapman"),
}


def _partition_params():
    return pytest.mark.parametrize("params", list(PARTITIONS.values()), ids=list(PARTITIONS))


# --------------------------------------------------------------------------------------
# Reference values
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("heat_flow", "conductivity"),
    list(TS_EQ_4_31_T35_C),
    ids=[f"q0={q:g}-k={k:g}" for q, k in TS_EQ_4_31_T35_C],
)
def test_turcotte_schubert_eq_4_31(heat_flow, conductivity):
    params = ThermalParameters(
        surface_temperature_c=0.0,
        heat_flow_partition="pollack_chapman",
        reduced_heat_flow_fraction=0.6,
        heat_production_depth_scale_km=10.0,
        crust_conductivity_w_m_k=conductivity,
        mantle_conductivity_w_m_k=conductivity,
    )
    # Moho below 35 km so that the crustal branch is tested; with equal k the Moho
    # position does not matter, which the second call checks.
    for moho in (40.0, 20.0):
        temperature = conductive_temperature_c(35.0, heat_flow, moho, params)
        assert_allclose(
            temperature,
            TS_EQ_4_31_T35_C[(heat_flow, conductivity)],
            atol=TS_EQ_4_31_TOLERANCE_C,
            err_msg=f"T&S eq. 4-31 at 35 km, Moho {moho} km",
        )


@pytest.mark.parametrize("heat_flow", list(HC_RECIPE_TABLE), ids=lambda q: f"q0={q:g}")
def test_hasterok_chapman_recipe_table(heat_flow):
    expected_lab, expected_moho = HC_RECIPE_TABLE[heat_flow]
    assert_allclose(
        lab_depth_km(heat_flow, 40.0, HC_RECIPE),
        expected_lab,
        atol=HC_RECIPE_LAB_TOLERANCE_KM,
        err_msg="LAB, H&C partition (science.md section 3, computed)",
    )
    assert_allclose(
        conductive_temperature_c(40.0, heat_flow, 40.0, HC_RECIPE),
        expected_moho,
        atol=HC_RECIPE_MOHO_TOLERANCE_C,
        err_msg="Moho temperature, H&C partition (science.md section 3, computed)",
    )


@pytest.mark.parametrize("heat_flow", list(TS_SINGLE_LAYER_LAB_KM), ids=lambda q: f"q0={q:g}")
def test_single_layer_lab_table(heat_flow):
    assert_allclose(
        lab_depth_km(heat_flow, 40.0, TS_SINGLE_LAYER),
        TS_SINGLE_LAYER_LAB_KM[heat_flow],
        atol=TS_SINGLE_LAYER_TOLERANCE_KM,
        err_msg="LAB, single-layer T&S (science.md section 3, computed)",
    )


def test_craton_lab_matches_hasterok_chapman_2011():
    lab = lab_depth_km(HC2011_CRATON_HEAT_FLOW_MW_M2, 40.0, HC_RECIPE)
    assert abs(lab - HC2011_CRATON_LAB_KM) <= HC2011_CRATON_TOLERANCE_KM, lab


def test_hot_lithosphere_is_thin():
    lab = lab_depth_km(HOT_HEAT_FLOW_MW_M2, 40.0, HC_RECIPE)
    assert abs(lab - HOT_LAB_KM) <= HOT_LAB_TOLERANCE_KM, lab


def test_moho_heat_flow_worked_example():
    # 60 - 0.26 * 60 (upper crust) - 0.4 uW m^-3 * 24 km (lower crust) = 34.8 mW m^-2
    assert_allclose(conductive_heat_flow_mw_m2(40.0, 60.0, 40.0), 34.8, rtol=1e-12)


def test_thin_crust_truncates_upper_crust():
    # 10 km crust: only 10/16 of the upper-crust heat is produced, no lower crust
    expected = 60.0 * (1.0 - 0.26 * 10.0 / 16.0)
    assert_allclose(conductive_heat_flow_mw_m2(10.0, 60.0, 10.0), expected, rtol=1e-12)


def test_mantle_adiabat():
    assert_allclose(mantle_adiabat_temperature_c(100.0, 1350.0, 0.45), 1395.0, rtol=1e-15)
    # defaults come from the parameter set
    p = ThermalParameters()
    assert_allclose(
        mantle_adiabat_temperature_c(100.0),
        p.mantle_potential_temperature_c + 100.0 * p.adiabat_gradient_k_km,
    )


# --------------------------------------------------------------------------------------
# Closed forms and limits
# --------------------------------------------------------------------------------------
NO_HEAT_PRODUCTION = {
    "hasterok_chapman": ThermalParameters(
        upper_crust_heat_fraction=0.0,
        lower_crust_heat_production_uw_m3=0.0,
        mantle_heat_production_uw_m3=0.0,
    ),
    "pollack_chapman": ThermalParameters(
        heat_flow_partition="pollack_chapman", reduced_heat_flow_fraction=1.0
    ),
}


@pytest.mark.parametrize("params", list(NO_HEAT_PRODUCTION.values()), ids=list(NO_HEAT_PRODUCTION))
def test_no_heat_production_gives_linear_geotherm(params):
    q0, moho = 55.0, 35.0
    z = np.linspace(0.0, 200.0, 41)
    t0, kc, km = (
        params.surface_temperature_c,
        params.crust_conductivity_w_m_k,
        params.mantle_conductivity_w_m_k,
    )
    # q (mW m^-2) * z (km) / k (W m^-1 K^-1) is in K
    expected = np.where(z <= moho, t0 + q0 * z / kc, t0 + q0 * moho / kc + q0 * (z - moho) / km)
    assert_allclose(conductive_temperature_c(z, q0, moho, params), expected, rtol=1e-12)
    assert_allclose(conductive_heat_flow_mw_m2(z, q0, moho, params), q0, rtol=1e-12)


@_partition_params()
def test_surface_values(params):
    q0 = np.array([35.0, 60.0, 110.0])
    assert_allclose(conductive_heat_flow_mw_m2(0.0, q0, 38.0, params), q0, rtol=1e-12)
    assert_allclose(
        conductive_temperature_c(0.0, q0, 38.0, params), params.surface_temperature_c, atol=1e-12
    )


@_partition_params()
@pytest.mark.parametrize("moho", [8.0, 16.0, 40.0, 65.0], ids=lambda m: f"moho={m:g}")
def test_continuity_at_layer_boundaries(params, moho):
    q0 = 65.0
    eps = 1e-9
    for boundary in (min(moho, params.upper_crust_thickness_km), moho):
        above = np.array([boundary - eps])
        below = np.array([boundary + eps])
        assert_allclose(
            conductive_heat_flow_mw_m2(above, q0, moho, params),
            conductive_heat_flow_mw_m2(below, q0, moho, params),
            atol=1e-6,
            err_msg=f"heat flow jumps at {boundary} km",
        )
        assert_allclose(
            conductive_temperature_c(above, q0, moho, params),
            conductive_temperature_c(below, q0, moho, params),
            atol=1e-6,
            err_msg=f"temperature jumps at {boundary} km",
        )


@_partition_params()
def test_heat_flow_is_conductivity_times_gradient(params):
    # Fourier's law: q = k dT/dz (central differences; O(h^2) error, h = 1e-3 km)
    q0, moho, h = 70.0, 42.0, 1e-3
    z = np.array([1.0, 10.0, 20.0, 30.0, 41.0, 43.0, 80.0, 150.0])
    k = np.where(z < moho, params.crust_conductivity_w_m_k, params.mantle_conductivity_w_m_k)
    gradient = (
        conductive_temperature_c(z + h, q0, moho, params)
        - conductive_temperature_c(z - h, q0, moho, params)
    ) / (2 * h)
    assert_allclose(k * gradient, conductive_heat_flow_mw_m2(z, q0, moho, params), rtol=1e-6)


@_partition_params()
def test_lab_matches_independent_root_finder(params):
    # closed-form (layered) and Newton (exponential) against a bracketing solver
    for q0, moho in [(45.0, 45.0), (62.0, 30.0), (95.0, 25.0), (75.0, 10.0)]:
        lab = lab_depth_km(q0, moho, params)

        def gap(z, q0=q0, moho=moho):
            return conductive_temperature_c(z, q0, moho, params) - mantle_adiabat_temperature_c(
                z, params.mantle_potential_temperature_c, params.adiabat_gradient_k_km
            )

        # the first sign change on a 1 km grid brackets the first crossing
        grid = np.arange(0.0, params.lab_max_depth_km + 1.0)
        first = np.argmax(gap(grid) >= 0.0)
        expected = brentq(gap, grid[first - 1], grid[first], xtol=1e-12)
        assert_allclose(lab, expected, atol=1e-7, err_msg=f"q0={q0}, moho={moho}")


@_partition_params()
def test_geotherm_is_adiabat_below_lab_and_conductive_above(params):
    q0, moho = 70.0, 35.0
    lab = lab_depth_km(q0, moho, params)
    above = np.linspace(0.0, lab - 1e-6, 20)
    below = np.linspace(lab, 300.0, 20)
    assert_allclose(
        geotherm_temperature_c(above, q0, moho, params),
        conductive_temperature_c(above, q0, moho, params),
    )
    assert_allclose(
        geotherm_temperature_c(below, q0, moho, params),
        mantle_adiabat_temperature_c(
            below, params.mantle_potential_temperature_c, params.adiabat_gradient_k_km
        ),
    )


@_partition_params()
def test_isotherm_limits(params):
    q0, moho = 60.0, 40.0
    t0 = params.surface_temperature_c
    # at or below the surface temperature the isotherm is at the surface
    assert_allclose(isotherm_depth_km([t0 - 5.0, t0], q0, moho, params), [0.0, 0.0])
    # hotter than the geotherm at lab_max_depth_km: NaN
    deepest = geotherm_temperature_c(params.lab_max_depth_km, q0, moho, params)
    assert np.isnan(isotherm_depth_km(deepest + 1.0, q0, moho, params))
    # on the adiabat: (T - T_p) / G
    t_iso = 1450.0
    expected = (t_iso - params.mantle_potential_temperature_c) / params.adiabat_gradient_k_km
    assert_allclose(isotherm_depth_km(t_iso, q0, moho, params), expected, rtol=1e-12)


# --------------------------------------------------------------------------------------
# Properties
# --------------------------------------------------------------------------------------
HEAT_FLOW = st.floats(45.0, 120.0)
MOHO = st.floats(8.0, 70.0)
PARTITION = st.sampled_from(list(PARTITIONS))


@settings(max_examples=60, deadline=None)
@given(q_low=HEAT_FLOW, dq=st.floats(0.0, 40.0), moho=MOHO, partition=PARTITION)
def test_more_heat_flow_gives_shallower_lab(q_low, dq, moho, partition):
    params = PARTITIONS[partition]
    labs = lab_depth_km(np.array([q_low, q_low + dq]), moho, params)
    if np.isnan(labs[0]):  # colder cell: no base within lab_max_depth_km
        return
    assert labs[1] <= labs[0] + 1e-9


@settings(max_examples=60, deadline=None)
@given(q0=HEAT_FLOW, moho=MOHO, partition=PARTITION)
def test_conductive_geotherm_meets_adiabat_at_lab(q0, moho, partition):
    params = PARTITIONS[partition]
    lab = lab_depth_km(q0, moho, params)
    adiabat = mantle_adiabat_temperature_c(
        lab, params.mantle_potential_temperature_c, params.adiabat_gradient_k_km
    )
    assert_allclose(conductive_temperature_c(lab, q0, moho, params), adiabat, atol=1e-6)


@settings(max_examples=80, deadline=None)
@given(z=st.floats(0.0, 340.0), q0=HEAT_FLOW, moho=MOHO, partition=PARTITION)
def test_isotherm_depth_inverts_geotherm(z, q0, moho, partition):
    params = PARTITIONS[partition]
    temperature = geotherm_temperature_c(z, q0, moho, params)
    # the geotherm increases with depth in this range, so the inverse is unique
    assert_allclose(isotherm_depth_km(temperature, q0, moho, params), z, atol=1e-6)


@settings(max_examples=50, deadline=None)
@given(q0=HEAT_FLOW, moho=MOHO, partition=PARTITION)
def test_geotherm_increases_with_depth(q0, moho, partition):
    params = PARTITIONS[partition]
    temperature = geotherm_temperature_c(np.linspace(0.0, 340.0, 200), q0, moho, params)
    assert np.all(np.diff(temperature) > 0.0)


# --------------------------------------------------------------------------------------
# Low heat flow, invalid input, shapes
# --------------------------------------------------------------------------------------
def test_crust_producing_more_than_surface_heat_flow():
    # 10 mW m^-2 over 40 km crust: the crust would produce 0.26 * 10 + 0.4 * 24 = 12.2
    params = ThermalParameters()
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no numpy RuntimeWarning either
        geo = ContinentalGeotherm(10.0, 40.0, params)
        assert geo.crust_heat_exceeds_surface
        assert geo.moho_heat_flow_mw_m2 == 0.0
        assert np.isnan(geo.lab_depth_km)
        # isothermal from the depth where heat flow vanishes
        deep = geo.conductive_temperature_c(np.array([36.0, 40.0, 100.0, 300.0]))
        assert_allclose(deep, deep[0], rtol=0, atol=1e-12)
        assert np.all(geo.conductive_heat_flow_mw_m2(np.array([36.0, 100.0])) == 0.0)
        assert np.isnan(geo.isotherm_depth_km(deep[0] + 1.0))
    assert not ContinentalGeotherm(40.0, 40.0, params).crust_heat_exceeds_surface


FUNCTIONS_OF_DEPTH = {
    "conductive_temperature_c": conductive_temperature_c,
    "conductive_heat_flow_mw_m2": conductive_heat_flow_mw_m2,
    "geotherm_temperature_c": geotherm_temperature_c,
    "isotherm_depth_km": lambda t, q, m, p: isotherm_depth_km(t * 10.0 + 300.0, q, m, p),
}


@_partition_params()
@pytest.mark.parametrize("func", list(FUNCTIONS_OF_DEPTH.values()), ids=list(FUNCTIONS_OF_DEPTH))
def test_invalid_inputs_give_nan(params, func):
    q0 = np.array([np.nan, 60.0, 0.0, -5.0, 60.0, 60.0, np.inf])
    moho = np.array([40.0, np.nan, 40.0, 40.0, 0.0, -1.0, 40.0])
    out = func(np.full(q0.shape, 20.0), q0, moho, params)
    assert np.all(np.isnan(out)), out
    lab = lab_depth_km(q0, moho, params)
    assert np.all(np.isnan(lab)), lab
    if func is not FUNCTIONS_OF_DEPTH["isotherm_depth_km"]:
        assert np.isnan(func(-1.0, 60.0, 40.0, params)), "negative depth must give NaN"


@_partition_params()
@pytest.mark.parametrize("shape", [(), (5,), (3, 4)], ids=["0-d", "1-d", "2-d"])
def test_shape_is_preserved(params, shape):
    rng = np.random.default_rng(1)
    q0 = rng.uniform(40.0, 100.0, shape)
    moho = rng.uniform(10.0, 60.0, shape)
    for func in FUNCTIONS_OF_DEPTH.values():
        assert np.shape(func(np.full(shape, 30.0), q0, moho, params)) == shape
    assert np.shape(lab_depth_km(q0, moho, params)) == shape


@_partition_params()
def test_depths_broadcast_against_cells(params):
    q0 = np.array([45.0, 70.0, 95.0])
    depths = np.array([5.0, 50.0, 150.0])[:, None]
    out = geotherm_temperature_c(depths, q0, 35.0, params)
    assert out.shape == (3, 3)
    for j, q in enumerate(q0):
        assert_allclose(out[:, j], geotherm_temperature_c(depths[:, 0], q, 35.0, params))


def test_nan_cell_does_not_disturb_neighbours():
    q0 = np.array([60.0, np.nan, 80.0])
    for params in PARTITIONS.values():
        out = lab_depth_km(q0, 40.0, params)
        assert_allclose(out[[0, 2]], lab_depth_km(q0[[0, 2]], 40.0, params))
        assert np.isnan(out[1])
