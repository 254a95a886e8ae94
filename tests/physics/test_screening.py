"""Tests of screening: fuzzy memberships and operators, heat-source and mineral-system scores."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from geomelt.classes import CLASS_NODATA, MagmaType, Mechanism, Setting
from geomelt.errors import ParameterError
from geomelt.parameters import GeothermalScreeningParameters, MineralScreeningParameters
from geomelt.physics.screening import (
    HEAT_SOURCE_OUTPUTS,
    MINERAL_SYSTEMS,
    class_affinity,
    combine,
    distance_to_melt_km,
    fuzzy_and,
    fuzzy_gamma,
    fuzzy_or,
    fuzzy_product,
    fuzzy_sum,
    heat_source_factors,
    linear_membership,
    mineral_output_names,
    mineral_screening,
    mineral_system_factors,
    sigmoid_membership,
    weighted_sum,
)

unit = st.floats(0.0, 1.0, allow_nan=False)
memberships = st.lists(unit, min_size=1, max_size=6)
TOL = 1e-12  # floating-point round-off of the operators


# --- memberships -----------------------------------------------------------------------------
def test_linear_membership_shape():
    # increasing ramp 100 -> 250 degC (heat-source temperature breakpoints)
    x = [np.nan, -np.inf, 0.0, 100.0, 137.5, 175.0, 250.0, 400.0, np.inf]
    expected = [np.nan, 0.0, 0.0, 0.0, 0.25, 0.5, 1.0, 1.0, 1.0]
    assert_allclose(linear_membership(x, 100.0, 250.0), expected)
    # decreasing ramp: 1 within 50 km, 0 beyond 200 km (melt proximity)
    assert_allclose(
        linear_membership([0.0, 50.0, 125.0, 200.0, np.inf], 200.0, 50.0), [1, 1, 0.5, 0, 0]
    )
    with pytest.raises(ValueError, match="breakpoints"):
        linear_membership(1.0, 2.0, 2.0)


def test_sigmoid_membership_shape():
    # Zadeh's S-function: 0, 2t^2, 1/2, 1 - 2(1-t)^2, 1
    x = [-10.0, 0.0, 25.0, 50.0, 75.0, 100.0, 110.0, np.nan]
    assert_allclose(sigmoid_membership(x, 0.0, 100.0), [0, 0, 0.125, 0.5, 0.875, 1, 1, np.nan])
    assert_allclose(sigmoid_membership([0.0, 25.0, 100.0], 100.0, 0.0), [1.0, 0.875, 0.0])


@settings(max_examples=100, deadline=None)
@given(a=st.floats(-1e3, 1e3), b=st.floats(-1e3, 1e3), dx=st.floats(0.0, 500.0))
def test_memberships_bounded_and_monotone(a, b, dx):
    if abs(a - b) < 1e-6:
        return
    xs = np.linspace(min(a, b) - 100.0, max(a, b) + 100.0, 50)
    for fn in (linear_membership, sigmoid_membership):
        m = fn(xs, a, b)
        assert np.all((m >= 0.0) & (m <= 1.0))
        step = np.diff(m)
        assert np.all(step >= -TOL) if b > a else np.all(step <= TOL)
        assert fn(a, a, b) == 0.0 and fn(b, a, b) == 1.0


# --- operators ---------------------------------------------------------------------------------
@settings(max_examples=200, deadline=None)
@given(ms=memberships, gamma=unit)
def test_operator_identities(ms, gamma):
    ms = [np.float64(m) for m in ms]
    lo, hi = fuzzy_and(*ms), fuzzy_or(*ms)
    product, total = fuzzy_product(*ms), fuzzy_sum(*ms)
    for m in ms:
        assert lo <= m <= hi  # AND <= each input <= OR
    assert product <= lo + TOL and total >= hi - TOL
    assert fuzzy_gamma(*ms, gamma=0.0) == pytest.approx(product, abs=TOL)  # gamma 0: product
    assert fuzzy_gamma(*ms, gamma=1.0) == pytest.approx(total, abs=TOL)  # gamma 1: sum
    g = fuzzy_gamma(*ms, gamma=gamma)
    assert product - TOL <= g <= total + TOL


@settings(max_examples=200, deadline=None)
@given(
    data=st.lists(
        st.tuples(unit, st.one_of(st.just(0.0), st.floats(1e-3, 10.0))), min_size=1, max_size=6
    ),
    scale=st.floats(0.01, 100.0),
)
def test_weighted_sum_normalises_weights(data, scale):
    ms = [m for m, _ in data]
    ws = [w for _, w in data]
    if not any(w > 0 for w in ws):
        with pytest.raises(ValueError, match="weights"):
            weighted_sum(ms, ws)
        return
    value = weighted_sum(ms, ws)
    assert value == pytest.approx(weighted_sum(ms, [w * scale for w in ws]), abs=1e-12)
    used = [m for m, w in data if w > 0]
    assert min(used) - TOL <= value <= max(used) + TOL
    expected = sum(m * w for m, w in data) / sum(ws)
    assert value == pytest.approx(expected, abs=1e-12)


def test_weighted_sum_and_combine_details():
    assert weighted_sum([0.2, 0.6], [1.0, 1.0]) == pytest.approx(0.4)  # equal weights: mean
    # a factor of weight 0 is left out, so its NaN does not spread
    assert weighted_sum([0.2, np.nan], [1.0, 0.0]) == pytest.approx(0.2)
    assert np.isnan(weighted_sum([0.2, np.nan], [1.0, 1.0]))
    assert combine([0.5, 0.5], [1.0, 0.0], "gamma", 0.5) == pytest.approx(0.5)
    for bad in ([1.0], [-1.0, 2.0], [np.nan, 1.0]):
        with pytest.raises(ValueError):
            weighted_sum([0.1, 0.2], bad)
    with pytest.raises(ValueError, match="method"):
        combine([0.5], [1.0], "maximum")
    with pytest.raises(ValueError, match="gamma"):
        fuzzy_gamma(0.5, gamma=1.5)
    assert np.isnan(fuzzy_and(0.5, np.nan)) and np.isnan(fuzzy_or(0.5, np.nan))


# --- geothermal heat source ----------------------------------------------------------------------
def _heat(t, d100, d150, d200, dist, fc, params=None):
    return heat_source_factors(t, d100, d150, d200, dist, fc, params)


def test_heat_source_factor_breakpoints():
    # breakpoints of GeothermalScreeningParameters (common practice, see constants)
    out = _heat(
        [100.0, 250.0, 175.0],
        [6.0, 2.0, 4.0],
        [6.0, 1.0, 4.0],
        [np.inf, 0.0, 4.0],
        [200.0, 0.0, 125.0],
        [0.0, 0.07, 0.035],
    )
    assert list(out) == list(HEAT_SOURCE_OUTPUTS)
    for name in HEAT_SOURCE_OUTPUTS:
        assert_allclose(out[name], [0.0, 1.0, 0.5], err_msg=name)


def test_heat_source_nan_and_absent_melt():
    out = _heat([np.nan, 200.0], 1.0, 2.0, 3.0, [10.0, np.inf], 0.0)
    assert np.isnan(out["heat_source_score"][0])
    assert out["heat_source_melt_proximity_factor"][1] == 0.0  # no melt within reach
    assert np.isfinite(out["heat_source_score"][1])


cell = st.tuples(
    st.floats(0.0, 400.0),  # temperature at depth, degC
    st.floats(0.0, 10.0),  # depth of the direct-use isotherm, km
    st.floats(0.0, 10.0),  # binary
    st.floats(0.0, 12.0),  # flash
    st.floats(0.0, 400.0),  # distance to melt, km
    st.floats(0.0, 0.4),  # crustal melt fraction
)
hotter = st.tuples(
    st.floats(0.0, 200.0),  # warmer by
    st.floats(0.0, 5.0),  # isotherms shallower by
    st.floats(0.0, 5.0),
    st.floats(0.0, 5.0),
    st.floats(0.0, 300.0),  # melt nearer by
    st.floats(0.0, 0.2),  # more crustal melt
)


@settings(max_examples=200, deadline=None)
@given(base=cell, more=hotter, method=st.sampled_from(["weighted_sum", "gamma"]))
def test_heat_source_score_monotone(base, more, method):
    # a hotter cell (higher temperature at depth, shallower isotherms, nearer melt, more
    # crustal melt) never scores lower, for either combination
    params = GeothermalScreeningParameters(screening_combination=method)
    t, d1, d2, d3, dist, fc = base
    dt, s1, s2, s3, near, dfc = more
    cold = _heat(t, d1, d2, d3, dist, fc, params)
    hot = _heat(
        t + dt,
        max(d1 - s1, 0.0),
        max(d2 - s2, 0.0),
        max(d3 - s3, 0.0),
        max(dist - near, 0.0),
        fc + dfc,
        params,
    )
    for name in HEAT_SOURCE_OUTPUTS:
        assert hot[name] >= cold[name] - TOL, name
    assert 0.0 <= cold["heat_source_score"] <= 1.0


@settings(max_examples=100, deadline=None)
@given(t=st.floats(0.0, 400.0), dt=st.floats(0.0, 200.0), depth=st.floats(0.0, 10.0))
def test_heat_source_score_monotone_in_temperature_alone(t, dt, depth):
    a = _heat(t, depth, depth, depth, 100.0, 0.0)["heat_source_score"]
    b = _heat(t + dt, depth, depth, depth, 100.0, 0.0)["heat_source_score"]
    assert b >= a - TOL


def test_heat_source_parameter_checks():
    with pytest.raises(ParameterError, match="more heat"):
        GeothermalScreeningParameters(isotherm_depth_full_km=8.0)  # deeper scoring higher
    with pytest.raises(ParameterError, match="more heat"):
        GeothermalScreeningParameters(heat_source_temperature_full_c=80.0)
    with pytest.raises(ParameterError, match="differ"):
        GeothermalScreeningParameters(melt_proximity_full_km=200.0)
    zero = {
        n: 0.0 for n in GeothermalScreeningParameters.constants() if n.startswith("heat_source_w")
    }
    with pytest.raises(ParameterError, match="weights"):
        GeothermalScreeningParameters(**zero)
    # the weights are normalised: scaling all of them changes nothing
    doubled = GeothermalScreeningParameters(
        **{n: 2.0 * getattr(GeothermalScreeningParameters(), n) for n in zero}
    )
    a = _heat(180.0, 1.5, 2.5, 4.5, 80.0, 0.01)["heat_source_score"]
    b = _heat(180.0, 1.5, 2.5, 4.5, 80.0, 0.01, doubled)["heat_source_score"]
    assert a == pytest.approx(b, abs=1e-12)


def test_distance_to_melt():
    mask = np.zeros((3, 4), dtype=bool)
    mask[0, 0] = True
    d = distance_to_melt_km(mask, 10.0)
    assert (
        d[0, 0] == 0.0
        and d[0, 3] == pytest.approx(30.0)
        and d[2, 2] == pytest.approx(np.hypot(20.0, 20.0))
    )
    d = distance_to_melt_km(mask, (5.0, 10.0), valid=~np.eye(3, 4, dtype=bool))
    assert d[2, 0] == pytest.approx(10.0) and np.isnan(d[1, 1])
    assert np.all(np.isinf(distance_to_melt_km(np.zeros((2, 2), bool), 1.0)))
    with pytest.raises(ValueError):
        distance_to_melt_km(mask, 0.0)


# --- mineral systems --------------------------------------------------------------------------
_FIELDS = (
    "setting",
    "melting_mechanism",
    "magma_type",
    "wedge_melt_fraction",
    "melt_fraction_max",
    "melt_thickness_km",
    "crustal_thickness_km",
    "crustal_melt_fraction",
)
# Representative cells, values as geomelt's melting maps give them at the defaults: wedge
# melt fraction 0.123 under arcs (flux_melting), ridge column 6.7 km and F 0.22 (decompression,
# T_p 1350 degC), collision crust 66 km (sample region's Drusk Orogen) melting by biotite
# dehydration (crustal_melting).
CELLS = {
    "continental_arc": (
        Setting.CONTINENTAL_ARC,
        Mechanism.FLUX,
        MagmaType.INTERMEDIATE,
        0.123,
        0.0,
        0.0,
        45.0,
        0.02,
    ),
    "oceanic_arc": (
        Setting.OCEANIC_ARC,
        Mechanism.FLUX,
        MagmaType.INTERMEDIATE,
        0.123,
        0,
        0,
        25,
        0,
    ),
    "collision": (
        Setting.CONTINENTAL_COLLISION,
        Mechanism.CRUSTAL_HEATING,
        MagmaType.FELSIC,
        0.0,
        0.0,
        0.0,
        66.0,
        0.2,
    ),
    "ridge": (
        Setting.MID_OCEAN_RIDGE,
        Mechanism.DECOMPRESSION,
        MagmaType.MAFIC,
        0,
        0.22,
        6.7,
        7,
        0,
    ),
    "back_arc": (
        Setting.BACK_ARC,
        Mechanism.DECOMPRESSION | Mechanism.FLUX,
        MagmaType.MAFIC,
        0.03,
        0.15,
        3.0,
        8.0,
        0.0,
    ),
    "continental_hotspot": (
        Setting.CONTINENTAL_HOTSPOT,
        Mechanism.DECOMPRESSION | Mechanism.CRUSTAL_HEATING,
        MagmaType.BIMODAL,
        0.0,
        0.16,
        2.0,
        39.0,
        0.1,
    ),
}
HIGH, LOW = 0.8, 0.3  # "scores high" / "scores low" for these clear-cut cells


def _fields(names):
    return {f: np.array([float(CELLS[n][i]) for n in names]) for i, f in enumerate(_FIELDS)}


@pytest.fixture(scope="module")
def scores():
    names = list(CELLS)
    out = mineral_screening(_fields(names))
    return {n: {k: float(v[i]) for k, v in out.items()} for i, n in enumerate(names)}


def test_arcs_score_high_for_porphyry_and_epithermal_low_for_ni(scores):
    for arc in ("continental_arc", "oceanic_arc"):
        assert scores[arc]["porphyry_cu_au_mo_score"] >= HIGH
        assert scores[arc]["epithermal_au_ag_score"] >= HIGH
        assert scores[arc]["magmatic_ni_cu_pge_score"] <= LOW
    assert scores["continental_arc"]["porphyry_cu_au_mo_score"] >= max(
        scores[c]["porphyry_cu_au_mo_score"] for c in ("collision", "ridge", "back_arc")
    )


def test_collision_scores_high_for_sn_w_li(scores):
    assert scores["collision"]["granite_sn_w_li_score"] >= HIGH
    for other in ("ridge", "back_arc", "oceanic_arc"):
        assert scores[other]["granite_sn_w_li_score"] <= LOW


def test_ridge_and_back_arc_score_high_for_vms(scores):
    for cell_name in ("ridge", "back_arc"):
        assert scores[cell_name]["vms_score"] >= HIGH
    assert scores["collision"]["vms_score"] <= LOW


def test_plume_beneath_continent_scores_highest_for_ni_cu_pge(scores):
    best = max(scores, key=lambda c: scores[c]["magmatic_ni_cu_pge_score"])
    assert best == "continental_hotspot"


def test_output_names_and_factor_layers():
    out = mineral_screening(_fields(["ridge"]))
    assert list(out) == mineral_output_names()
    assert all(name.endswith(("_factor", "_score")) for name in out)
    for system in MINERAL_SYSTEMS:  # every factor weight is a parameter
        for factor in system.factors:
            assert factor.weight in MineralScreeningParameters.constants()


def test_nodata_and_nan_give_nan():
    fields = _fields(["ridge", "ridge", "ridge"])
    fields["setting"][0] = CLASS_NODATA
    fields["melt_thickness_km"][1] = np.nan
    out = mineral_screening(fields)
    vms = out["vms_score"]
    assert np.isnan(vms[0]) and np.isnan(vms[1]) and np.isfinite(vms[2])
    assert not np.isnan(out["epithermal_au_ag_melting_factor"][0])  # mechanism still valid
    fields["melting_mechanism"][2] = CLASS_NODATA
    assert np.isnan(mineral_screening(fields)["epithermal_au_ag_melting_factor"][2])


def test_melt_column_counts_only_where_decompression_melting_happens():
    fields = _fields(["ridge", "ridge"])
    fields["melting_mechanism"][1] = Mechanism.NONE  # potential melt, mantle not rising
    out = mineral_screening(fields)
    assert out["vms_melt_volume_factor"][0] == 1.0 and out["vms_melt_volume_factor"][1] == 0.0
    assert out["magmatic_ni_cu_pge_melt_fraction_factor"][1] == 0.0
    assert out["vms_score"][1] < out["vms_score"][0]


def test_class_affinity_lookup():
    table = {Setting.BACK_ARC: 0.7}
    codes = np.array([Setting.BACK_ARC, Setting.STABLE_INTERIOR, CLASS_NODATA, 0, 12], np.uint8)
    assert_allclose(class_affinity(codes, table, Setting), [0.7, 0.0, np.nan, np.nan, np.nan])
    assert_allclose(class_affinity([MagmaType.NONE, 2.5], {}, MagmaType), [0.0, np.nan])


def test_weights_normalised_and_adjustable():
    fields = _fields(["oceanic_arc", "back_arc"])
    base = MineralScreeningParameters()
    weights = {n: getattr(base, n) for n in base.constants() if n.startswith("porphyry_weight_")}
    doubled = base.replace(**{n: 2.0 * w for n, w in weights.items()})
    key = "porphyry_cu_au_mo_score"
    assert_allclose(mineral_screening(fields, doubled)[key], mineral_screening(fields)[key])
    # setting alone: the score is the setting factor
    only_setting = base.replace(**{n: 0.0 for n in weights if n != "porphyry_weight_setting"})
    out = mineral_screening(fields, only_setting)
    assert_allclose(out[key], out["porphyry_cu_au_mo_setting_factor"])
    with pytest.raises(ParameterError, match="weights"):
        base.replace(**{n: 0.0 for n in weights})


def test_zero_weight_factor_may_omit_its_input():
    fields = _fields(["collision"])
    del fields["crustal_melt_fraction"]
    params = MineralScreeningParameters(sn_w_li_weight_anatexis=0.0)
    system = next(s for s in MINERAL_SYSTEMS if s.key == "granite_sn_w_li")
    out = mineral_system_factors(system, fields, params)
    assert "anatexis" not in out and out["score"] == pytest.approx(1.0)
    with pytest.raises(KeyError):
        mineral_system_factors(system, fields)


def test_affinity_tables_can_be_replaced():
    system = dataclasses.replace(MINERAL_SYSTEMS[0], setting_affinity={Setting.BACK_ARC: 1.0})
    out = mineral_system_factors(system, _fields(["back_arc", "continental_arc"]))
    assert_allclose(out["setting"], [1.0, 0.0])


@settings(max_examples=100, deadline=None)
@given(
    setting=st.sampled_from([*Setting, CLASS_NODATA]),
    mechanism=st.integers(0, 7),
    magma=st.sampled_from(list(MagmaType)),
    wedge=unit,
    fmax=unit,
    h=st.floats(0.0, 40.0),
    crust=st.floats(0.0, 90.0),
    fc=unit,
    method=st.sampled_from(["weighted_sum", "gamma"]),
)
def test_scores_in_unit_interval(setting, mechanism, magma, wedge, fmax, h, crust, fc, method):
    fields = dict(zip(_FIELDS, (setting, mechanism, magma, wedge, fmax, h, crust, fc), strict=True))
    out = mineral_screening(fields, MineralScreeningParameters(screening_combination=method))
    for name, value in out.items():
        if setting == CLASS_NODATA and (name.endswith("_score") or "setting" in name):
            assert np.isnan(value), name
        else:
            assert 0.0 <= value <= 1.0, name
