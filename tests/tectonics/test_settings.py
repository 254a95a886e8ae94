"""The setting, mechanism and magma-type rule tables, cell by cell.

Each column of the synthetic fields is one case built to meet one rule; the
thresholds are the documented defaults of SettingParameters (sources in
geomelt.constants).
"""

from __future__ import annotations

import numpy as np
import pytest

from geomelt.classes import MagmaType, Mechanism, Setting
from geomelt.parameters import SettingParameters
from geomelt.tectonics.settings import CONDITIONS, MAGMA_RULES, SETTING_RULES, classify

NAN = np.nan
FAR = 5000.0

# Each case: expected setting and the per-cell values that differ from a quiet plate interior.
CASES = {
    "stable_interior": (Setting.STABLE_INTERIOR, {}),
    "mid_ocean_ridge": (
        Setting.MID_OCEAN_RIDGE,
        {"crustal_thickness_km": 7.0, "distance_to_ridge_km": 10.0, "melt_thickness_km": 7.0},
    ),
    "transform": (
        Setting.TRANSFORM,
        {
            "crustal_thickness_km": 7.0,
            "distance_to_transform_km": 5.0,
            "distance_to_ridge_km": 60.0,
        },
    ),
    "continental_rift": (
        Setting.CONTINENTAL_RIFT,
        {"distance_to_rift_km": 20.0, "melt_thickness_km": 2.0},
    ),
    "oceanic_arc": (
        Setting.OCEANIC_ARC,
        {
            "crustal_thickness_km": 25.0,
            "slab_depth_km": 105.0,
            "distance_to_subduction_km": 180.0,
            "subduction_side": 1.0,
            "wedge_melt_fraction": 0.12,
        },
    ),
    "continental_arc": (
        Setting.CONTINENTAL_ARC,
        {
            "crustal_thickness_km": 45.0,
            "slab_depth_km": 110.0,
            "distance_to_subduction_km": 200.0,
            "subduction_side": 1.0,
            "wedge_melt_fraction": 0.12,
            "crustal_melt_fraction": 0.3,
        },
    ),
    "forearc": (
        Setting.FOREARC,
        {
            "crustal_thickness_km": 15.0,
            "slab_depth_km": 35.0,
            "distance_to_subduction_km": 60.0,
            "subduction_side": 1.0,
        },
    ),
    "back_arc": (
        Setting.BACK_ARC,
        {
            "crustal_thickness_km": 8.0,
            "slab_depth_km": 350.0,
            "distance_to_subduction_km": 400.0,
            "subduction_side": 1.0,
            "melt_thickness_km": 1.5,
        },
    ),
    "collision": (
        Setting.CONTINENTAL_COLLISION,
        {
            "crustal_thickness_km": 66.0,
            "distance_to_collision_km": 100.0,
            "crustal_melt_fraction": 0.4,
        },
    ),
    "oceanic_hotspot": (
        Setting.OCEANIC_HOTSPOT,
        {
            "crustal_thickness_km": 17.0,
            "potential_temperature_c": 1550.0,
            "melt_thickness_km": 19.0,
        },
    ),
    "continental_hotspot": (
        Setting.CONTINENTAL_HOTSPOT,
        {
            "potential_temperature_c": 1500.0,
            "melt_thickness_km": 12.0,
            "crustal_melt_fraction": 0.3,
        },
    ),
    # Lower plate of a subduction zone near the trench: not arc, forearc or back-arc.
    "lower_plate": (
        Setting.STABLE_INTERIOR,
        {"crustal_thickness_km": 7.0, "distance_to_subduction_km": 150.0, "subduction_side": -1.0},
    ),
    # No slab raster: distance from the trench decides (Dickinson 1973: arc 100-300 km).
    "arc_without_slab": (
        Setting.CONTINENTAL_ARC,
        {"crustal_thickness_km": 42.0, "distance_to_subduction_km": 200.0, "subduction_side": 1.0},
    ),
}


def fields_for(cases):
    base = {
        "crustal_thickness_km": 38.0,
        "slab_depth_km": NAN,
        "potential_temperature_c": 1350.0,
        "melt_thickness_km": 0.0,
        "wedge_melt_fraction": 0.0,
        "crustal_melt_fraction": 0.0,
        "distance_to_ridge_km": FAR,
        "distance_to_rift_km": FAR,
        "distance_to_subduction_km": FAR,
        "distance_to_collision_km": FAR,
        "distance_to_transform_km": FAR,
        "subduction_side": NAN,
    }
    return {
        key: np.array([[c[1].get(key, default) for c in cases]], dtype=np.float64)
        for key, default in base.items()
    }


def test_each_setting_rule_cell_by_cell():
    names = list(CASES)
    out = classify(fields_for([CASES[n] for n in names]), SettingParameters())
    got = {n: Setting(int(v)).name for n, v in zip(names, out["setting"][0], strict=True)}
    want = {n: CASES[n][0].name for n in names}
    assert got == want


def test_every_setting_class_is_reachable_and_rules_are_documented():
    assert {r.result for r in SETTING_RULES} == set(Setting)
    for rule in SETTING_RULES + MAGMA_RULES:
        assert rule.source
        for name in rule.conditions:
            assert name in CONDITIONS


def test_hotspot_on_a_ridge_keeps_the_ridge_as_secondary():
    case = (
        None,
        {
            "crustal_thickness_km": 20.0,
            "potential_temperature_c": 1550.0,
            "distance_to_ridge_km": 5.0,
            "melt_thickness_km": 20.0,
        },
    )
    out = classify(fields_for([case]), SettingParameters())
    assert out["setting"][0, 0] == Setting.OCEANIC_HOTSPOT
    assert out["secondary_setting"][0, 0] == Setting.MID_OCEAN_RIDGE


@pytest.mark.parametrize(
    ("name", "mechanism", "magma"),
    [
        ("stable_interior", Mechanism.NONE, MagmaType.NONE),
        ("mid_ocean_ridge", Mechanism.DECOMPRESSION, MagmaType.MAFIC),
        ("back_arc", Mechanism.DECOMPRESSION, MagmaType.MAFIC),
        ("oceanic_arc", Mechanism.FLUX, MagmaType.MAFIC),
        ("continental_arc", Mechanism.FLUX | Mechanism.CRUSTAL_HEATING, MagmaType.INTERMEDIATE),
        ("collision", Mechanism.CRUSTAL_HEATING, MagmaType.FELSIC),
        ("continental_rift", Mechanism.DECOMPRESSION, MagmaType.BIMODAL),
        (
            "continental_hotspot",
            Mechanism.DECOMPRESSION | Mechanism.CRUSTAL_HEATING,
            MagmaType.BIMODAL,
        ),
        ("oceanic_hotspot", Mechanism.DECOMPRESSION, MagmaType.MAFIC),
    ],
    ids=lambda v: getattr(v, "name", v),
)
def test_mechanism_and_magma_type(name, mechanism, magma):
    out = classify(fields_for([CASES[name]]), SettingParameters())
    assert out["melting_mechanism"][0, 0] == mechanism
    assert out["magma_type"][0, 0] == magma


def test_nodata_crust_gives_class_nodata():
    f = fields_for([CASES["stable_interior"]])
    f["crustal_thickness_km"][:] = np.nan
    out = classify(f, SettingParameters())
    assert all(v[0, 0] == 255 for v in out.values())


def test_thresholds_move_the_boundaries():
    f = fields_for([CASES["mid_ocean_ridge"]])
    f["distance_to_ridge_km"][:] = 150.0
    assert classify(f, SettingParameters())["setting"][0, 0] == Setting.STABLE_INTERIOR
    wide = SettingParameters(ridge_zone_half_width_km=200.0)
    assert classify(f, wide)["setting"][0, 0] == Setting.MID_OCEAN_RIDGE
