"""Tests of flux (water-added) melting of the mantle wedge above a slab."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from geomelt import constants as C
from geomelt.parameters import FluxMeltingParameters
from geomelt.physics.decompression import lithostatic_pressure_gpa
from geomelt.physics.flux_melting import slab_water_supply, wedge_melt_fraction, wedge_water_wt_pct
from geomelt.physics.peridotite import melt_fraction, wet_solidus_c

# science.md check 22: slab depth beneath the volcanic front, global mean 105 km; 500-km
# segment means 72-173 km (Syracuse & Abers 2006, G3 7:Q05017); 65-130 km (England,
# Engdahl & Thatcher 2004, GJI 156:377). Accepted range for the default: 65-173 km.
ARC_SLAB_DEPTH_KM = 105.0
ARC_SLAB_DEPTH_RANGE_KM = (65.0, 173.0)
# science.md check 23: H2O-saturated peridotite solidus 800-820 degC, isothermal over 3-6 GPa
# (Till, Grove & Withers 2012, CMP 163:669): 810 +/- 20 degC.
H2O_SATURATED_SOLIDUS_C = (810.0, 20.0)
# science.md section 1c note (computed): the Katz parameterization's water-saturated solidus
# at 3 GPa (940.6 degC) is 120-140 K hotter than the experimental one.
KATZ_OFFSET_AT_3GPA_K = (120.0, 140.0)
# Kelley et al. 2006 (JGR 111:B09208, abstract): back-arc basins melt ~30-80 % F per wt% of
# source water.
WET_PRODUCTIVITY_PER_WT_PCT = (0.3, 0.8)


def test_default_arc_slab_depth_check_22():
    assert C.ARC_SLAB_DEPTH_KM.value == ARC_SLAB_DEPTH_KM
    lo, hi = ARC_SLAB_DEPTH_RANGE_KM
    params = FluxMeltingParameters()
    top = params.arc_slab_depth_km - params.arc_window_half_width_km
    bottom = params.arc_slab_depth_km + params.arc_window_half_width_km
    assert lo <= top < ARC_SLAB_DEPTH_KM < bottom <= hi


def test_h2o_saturated_solidus_reference_check_23():
    value, tol = H2O_SATURATED_SOLIDUS_C
    assert abs(C.H2O_SATURATED_PERIDOTITE_SOLIDUS_C.value - value) <= tol
    # Katz water-saturated solidus (water far above saturation) vs the experimental one
    offset = wet_solidus_c(3.0, 1.0) - C.H2O_SATURATED_PERIDOTITE_SOLIDUS_C.value
    lo, hi = KATZ_OFFSET_AT_3GPA_K
    assert lo <= offset <= hi


def test_supply_rules():
    # no slab, forearc, window edges, behind the arc (linear taper), beyond the taper
    depth = np.array([np.nan, 40.0, 79.9, 80.0, 105.0, 130.0, 165.0, 200.0, 400.0])
    expected = np.array([0.0, 0.0, 0.0, 1.0, 1.0, 1.0, 0.5, 0.0, 0.0])
    assert_allclose(slab_water_supply(depth), expected, atol=1e-12)
    custom = slab_water_supply(
        [90.0, 135.0],
        arc_slab_depth_km=120.0,
        arc_window_half_width_km=10.0,
        behind_arc_taper_km=20.0,
    )
    assert_allclose(custom, [0.0, 0.75])
    with pytest.raises(ValueError, match="behind_arc_taper_km"):
        slab_water_supply(100.0, behind_arc_taper_km=0.0)


def test_wedge_water():
    assert_allclose(wedge_water_wt_pct([np.nan, 105.0, 165.0]), [0.01, 0.3, 0.155])


def test_no_slab_gives_zero_not_nan():
    f = wedge_melt_fraction(np.full((3, 4), np.nan))
    assert f.shape == (3, 4) and np.all(f == 0.0)


def test_wedge_melting_under_the_arc():
    # computed from Katz et al. (2003) eq. 19 at 60 km (1.94 GPa), 1350 degC
    p = lithostatic_pressure_gpa(60.0)
    arc = melt_fraction(p, 1350.0, 0.3)
    ambient = melt_fraction(p, 1350.0, 0.01)
    assert_allclose(wedge_melt_fraction(105.0), arc - ambient, atol=1e-7)
    assert_allclose(wedge_melt_fraction(105.0), 0.123, atol=1e-3)
    # arc melting degrees of 10-25 % are typical; the wedge's total F is in that range
    assert 0.10 <= arc <= 0.25
    lo, hi = WET_PRODUCTIVITY_PER_WT_PCT
    assert lo <= (arc - ambient) / (0.3 - 0.01) <= hi


def test_forearc_and_far_backarc_do_not_melt():
    f = wedge_melt_fraction([30.0, 70.0, 250.0, 600.0])
    assert np.all(f == 0.0)


def test_behind_arc_taper_is_continuous_and_decreasing():
    depth = np.linspace(130.0, 200.0, 141)
    f = wedge_melt_fraction(depth)
    assert f[0] == pytest.approx(wedge_melt_fraction(105.0), abs=1e-7)
    assert f[-1] == 0.0
    assert np.all(np.diff(f) <= 1e-7)
    assert np.max(np.abs(np.diff(f))) < 0.01  # no jumps on a 0.5 km grid


def test_parameter_validation():
    with pytest.raises(ValueError, match="wedge_temperature_c"):
        wedge_melt_fraction(105.0, wedge_temperature_c=np.nan)
    with pytest.raises(ValueError, match="wedge_water_wt_pct"):
        wedge_melt_fraction(105.0, wedge_water_wt_pct=-0.1)
    with pytest.raises(ValueError, match="wedge_melting_depth_km"):
        wedge_melt_fraction(105.0, wedge_melting_depth_km=500.0)


@settings(max_examples=60, deadline=None)
@given(
    st.floats(0.0, 400.0) | st.just(float("nan")),
    st.floats(0.0, 1.0),
    st.floats(1200.0, 1450.0),
)
def test_flux_melt_fraction_bounds_and_monotone_in_water(depth, water, temperature):
    f = wedge_melt_fraction(depth, wedge_water_wt_pct=water, wedge_temperature_c=temperature)
    f_more = wedge_melt_fraction(
        depth, wedge_water_wt_pct=water + 0.1, wedge_temperature_c=temperature
    )
    assert 0.0 <= f <= 1.0
    assert f_more >= f - 1e-7
