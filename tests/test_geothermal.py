"""Geothermal screening through the thermal model: hotter ground never scores lower.

The factor functions are monotone on their own (tests/physics/test_screening.py); here
the whole chain from surface heat flow through the steady geotherm (Turcotte & Schubert
2002, eq. 4-31 family; Hasterok & Chapman 2011) to the heat-source score is checked.
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from geomelt.algorithms.screening import GEOTHERMAL_SCREENING
from geomelt.algorithms.thermal import THERMAL_STATE
from geomelt.parameters import GeothermalScreeningParameters, ThermalParameters


def _score(heat_flow, crust, distance_km=300.0, crustal_melt=0.0):
    thermal = THERMAL_STATE.compute(
        {
            "crustal_thickness_km": np.array([crust], dtype=np.float64),
            "heat_flow_mw_m2": np.array([heat_flow], dtype=np.float64),
        },
        ThermalParameters(),
    )
    arrays = {
        "crustal_thickness_km": np.array([crust]),
        "distance_to_melt_km": np.array([distance_km]),
        "crustal_melt_fraction": np.array([crustal_melt]),
        **thermal,
    }
    out = GEOTHERMAL_SCREENING.compute(arrays, GeothermalScreeningParameters())
    return out, thermal


@settings(max_examples=60, deadline=None)
@given(
    q=st.floats(30.0, 180.0),
    dq=st.floats(0.5, 60.0),
    crust=st.floats(15.0, 70.0),
)
def test_higher_heat_flow_never_scores_lower(q, dq, crust):
    cold, cold_t = _score(q, crust)
    hot, hot_t = _score(q + dq, crust)
    assert hot_t["screening_temperature_c"][0] >= cold_t["screening_temperature_c"][0] - 1e-3
    for name in (
        "heat_source_temperature_factor",
        "heat_source_direct_use_factor",
        "heat_source_binary_factor",
        "heat_source_flash_factor",
        "heat_source_score",
    ):
        assert hot[name][0] >= cold[name][0] - 1e-6, name


def test_isotherm_layers_follow_the_geotherm():
    # the depth of an isotherm and the temperature at that depth must agree
    out, thermal = _score(90.0, 35.0)
    depth = float(thermal["binary_isotherm_depth_km"][0])
    params = ThermalParameters(temperature_depths_km=(depth,))
    again = THERMAL_STATE.compute(
        {
            "crustal_thickness_km": np.array([35.0]),
            "heat_flow_mw_m2": np.array([90.0]),
        },
        params,
    )
    from geomelt.algorithms.thermal import temperature_layer_name

    t = float(again[temperature_layer_name(depth)][0])
    assert abs(t - params.binary_isotherm_c) < 0.5  # degC
    assert out["heat_source_score"][0] > 0.0


def test_nearer_melt_and_crustal_melt_never_score_lower():
    far, _ = _score(70.0, 35.0, distance_km=250.0)
    near, _ = _score(70.0, 35.0, distance_km=40.0)
    molten, _ = _score(70.0, 35.0, distance_km=40.0, crustal_melt=0.05)
    assert far["heat_source_score"][0] < near["heat_source_score"][0]
    assert near["heat_source_score"][0] < molten["heat_source_score"][0]
    # no melt anywhere in the region: distance inf, factor 0, and the distance layer nodata
    none, _ = _score(70.0, 35.0, distance_km=np.inf)
    assert none["heat_source_melt_proximity_factor"][0] == 0.0
    assert np.isnan(none["distance_to_melt_km"][0])
