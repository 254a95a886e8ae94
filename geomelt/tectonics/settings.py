"""Tectonic-magmatic setting, melting mechanism and magma type per cell, by rule tables.

The rules are data, not scattered conditions: :data:`SETTING_RULES` and
:data:`MAGMA_RULES` are ordered tables whose rows name a class, the
conditions (named :data:`CONDITIONS`) that must all hold, and the source of
the rule. The first matching row wins, which is the precedence where settings
overlap (a hotspot on a ridge is a hotspot; the ridge is kept as the
secondary setting). Every threshold is a parameter of
:class:`~geomelt.parameters.SettingParameters` with its source.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from geomelt.classes import CLASS_NODATA, MagmaType, Mechanism, Setting
from geomelt.parameters import SettingParameters

__all__ = [
    "CONDITIONS",
    "MAGMA_RULES",
    "SETTING_RULES",
    "Condition",
    "Rule",
    "classify",
    "evaluate_conditions",
]


@dataclass(frozen=True)
class Condition:
    """A named per-cell test used by the rule tables."""

    name: str
    description: str
    test: Callable[[Mapping[str, np.ndarray], SettingParameters], np.ndarray]


@dataclass(frozen=True)
class Rule:
    """One row of a rule table: the class given when every condition holds."""

    result: int
    conditions: tuple[str, ...]
    source: str


def _lt(a, b):
    with np.errstate(invalid="ignore"):
        return np.less(a, b)


def _le(a, b):
    with np.errstate(invalid="ignore"):
        return np.less_equal(a, b)


def _ge(a, b):
    with np.errstate(invalid="ignore"):
        return np.greater_equal(a, b)


def _gt(a, b):
    with np.errstate(invalid="ignore"):
        return np.greater(a, b)


def _upper_plate_zone(f, p):
    return (f["subduction_side"] == 1) & _le(
        f["distance_to_subduction_km"], p.subduction_zone_max_distance_km
    )


def _window(p):
    return (
        p.arc_slab_depth_km - p.arc_window_half_width_km,
        p.arc_slab_depth_km + p.arc_window_half_width_km,
    )


def _forearc(f, p):
    lo, _ = _window(p)
    slab, d = f["slab_depth_km"], f["distance_to_subduction_km"]
    by_slab = np.isfinite(slab) & _lt(slab, lo)
    by_distance = ~np.isfinite(slab) & _lt(d, p.arc_min_trench_distance_km)
    return _upper_plate_zone(f, p) & (by_slab | by_distance)


def _arc(f, p):
    lo, hi = _window(p)
    slab, d = f["slab_depth_km"], f["distance_to_subduction_km"]
    by_slab = _ge(slab, lo) & _le(slab, hi)
    by_distance = (
        ~np.isfinite(slab)
        & _ge(d, p.arc_min_trench_distance_km)
        & _le(d, p.arc_max_trench_distance_km)
    )
    return _upper_plate_zone(f, p) & (by_slab | by_distance)


def _back_arc(f, p):
    _, hi = _window(p)
    slab, d = f["slab_depth_km"], f["distance_to_subduction_km"]
    by_slab = _gt(slab, hi)
    by_distance = ~np.isfinite(slab) & _gt(d, p.arc_max_trench_distance_km)
    return _upper_plate_zone(f, p) & (by_slab | by_distance)


def _upwelling(f, p):
    """Where the mantle rises: spreading ridges, rifts, back-arcs and hot plumes."""
    return (
        _le(f["distance_to_ridge_km"], p.ridge_zone_half_width_km)
        | _le(f["distance_to_rift_km"], p.rift_zone_half_width_km)
        | _back_arc(f, p)
        | _ge(
            f["potential_temperature_c"] - p.mantle_potential_temperature_c,
            p.hotspot_min_excess_temperature_k,
        )
    )


def _mantle_melt(f, p):
    # The melt column is what mantle rising to the lithosphere base would make; it is
    # realised only where the mantle actually rises.
    thick = _ge(f["melt_thickness_km"], p.min_melt_thickness_km) & _gt(f["melt_thickness_km"], 0)
    return thick & _upwelling(f, p)


def _flux_melt(f, p):
    return _ge(f["wedge_melt_fraction"], p.min_wedge_melt_fraction) & _gt(
        f["wedge_melt_fraction"], 0
    )


def _crustal_melt(f, p):
    return _ge(f["crustal_melt_fraction"], p.min_crustal_melt_fraction) & _gt(
        f["crustal_melt_fraction"], 0
    )


_CONDITION_LIST = (
    Condition(
        "continental_crust",
        "crust at least continental_crust_min_thickness_km thick",
        lambda f, p: _ge(f["crustal_thickness_km"], p.continental_crust_min_thickness_km),
    ),
    Condition(
        "oceanic_crust",
        "crust thinner than continental_crust_min_thickness_km",
        lambda f, p: _lt(f["crustal_thickness_km"], p.continental_crust_min_thickness_km),
    ),
    Condition(
        "thick_crust",
        "crust at least thick_crust_km thick",
        lambda f, p: _ge(f["crustal_thickness_km"], p.thick_crust_km),
    ),
    Condition(
        "near_collision",
        "within collision_zone_half_width_km of a collision suture",
        lambda f, p: _le(f["distance_to_collision_km"], p.collision_zone_half_width_km),
    ),
    Condition(
        "subduction_forearc",
        "upper plate of a subduction zone, slab shallower than the sub-arc window (or, without "
        "slab depth, nearer the trench than arc_min_trench_distance_km)",
        _forearc,
    ),
    Condition(
        "subduction_arc",
        "upper plate, slab inside the sub-arc window (or, without slab depth, "
        "arc_min_trench_distance_km to arc_max_trench_distance_km from the trench)",
        _arc,
    ),
    Condition(
        "subduction_back_arc",
        "upper plate, slab deeper than the sub-arc window (or, without slab depth, farther "
        "than arc_max_trench_distance_km), within subduction_zone_max_distance_km",
        _back_arc,
    ),
    Condition(
        "hot_mantle",
        "mantle at least hotspot_min_excess_temperature_k hotter than ambient",
        lambda f, p: _ge(
            f["potential_temperature_c"] - p.mantle_potential_temperature_c,
            p.hotspot_min_excess_temperature_k,
        ),
    ),
    Condition(
        "near_ridge",
        "within ridge_zone_half_width_km of a spreading ridge",
        lambda f, p: _le(f["distance_to_ridge_km"], p.ridge_zone_half_width_km),
    ),
    Condition(
        "near_rift",
        "within rift_zone_half_width_km of a rift axis",
        lambda f, p: _le(f["distance_to_rift_km"], p.rift_zone_half_width_km),
    ),
    Condition(
        "near_transform",
        "within transform_zone_half_width_km of a transform fault",
        lambda f, p: _le(f["distance_to_transform_km"], p.transform_zone_half_width_km),
    ),
    Condition(
        "mantle_melt",
        "decompression or flux melting of the mantle",
        lambda f, p: _mantle_melt(f, p) | _flux_melt(f, p),
    ),
    Condition(
        "upwelling",
        "mantle rises here: near a ridge or rift, behind an arc, or in a hot plume",
        _upwelling,
    ),
    Condition(
        "decompression_melt",
        "column melt thickness >= min_melt_thickness_km where the mantle rises",
        _mantle_melt,
    ),
    Condition("flux_melt", "wedge melt fraction >= min_wedge_melt_fraction", _flux_melt),
    Condition("crustal_melt", "crustal melt fraction >= min_crustal_melt_fraction", _crustal_melt),
    Condition(
        "no_mantle_melt",
        "neither decompression nor flux melting",
        lambda f, p: ~(_mantle_melt(f, p) | _flux_melt(f, p)),
    ),
    Condition(
        "no_melt",
        "no melting by any mechanism",
        lambda f, p: ~(_mantle_melt(f, p) | _flux_melt(f, p) | _crustal_melt(f, p)),
    ),
    Condition(
        "extension_or_plume",
        "setting is continental rift or continental hotspot",
        lambda f, p: np.isin(f["setting"], (Setting.CONTINENTAL_RIFT, Setting.CONTINENTAL_HOTSPOT)),
    ),
)
CONDITIONS: dict[str, Condition] = {c.name: c for c in _CONDITION_LIST}
"""Named per-cell conditions the rule tables refer to."""

SETTING_RULES: tuple[Rule, ...] = (
    Rule(
        Setting.CONTINENTAL_COLLISION,
        ("near_collision", "thick_crust"),
        "thickened crust of collision orogens, 60-80 km (science.md section 6; Owens & Zandt "
        "1997, from memory)",
    ),
    Rule(
        Setting.FOREARC,
        ("subduction_forearc",),
        "slab too shallow and cold for melting beneath the forearc (Syracuse & Abers 2006)",
    ),
    Rule(
        Setting.OCEANIC_ARC,
        ("subduction_arc", "oceanic_crust"),
        "arc fronts stand above slab depths of 65-173 km (Syracuse & Abers 2006; England et "
        "al. 2004) on an oceanic upper plate",
    ),
    Rule(
        Setting.CONTINENTAL_ARC,
        ("subduction_arc", "continental_crust"),
        "same slab-depth window, continental upper plate (Syracuse & Abers 2006)",
    ),
    Rule(
        Setting.BACK_ARC,
        ("subduction_back_arc",),
        "upper plate behind the arc, slab >~150 km deep beneath back-arc spreading "
        "(Taylor & Martinez 2003, from memory; Sdrolias & Mueller 2006)",
    ),
    Rule(
        Setting.OCEANIC_HOTSPOT,
        ("hot_mantle", "oceanic_crust"),
        "plume excess temperature +100 to +300 K (White & McKenzie 1989; Herzberg et al. 2007) "
        "beneath oceanic lithosphere",
    ),
    Rule(
        Setting.CONTINENTAL_HOTSPOT,
        ("hot_mantle", "continental_crust"),
        "plume beneath continental lithosphere (same sources)",
    ),
    Rule(
        Setting.TRANSFORM,
        ("near_transform",),
        "transform faults offset ridge segments (common practice)",
    ),
    Rule(
        Setting.MID_OCEAN_RIDGE,
        ("near_ridge",),
        "spreading axis and young flanks (common practice)",
    ),
    Rule(
        Setting.CONTINENTAL_RIFT,
        ("near_rift",),
        "extending continental lithosphere (common practice)",
    ),
    Rule(Setting.STABLE_INTERIOR, (), "default: plate interior"),
)
"""Setting rules in precedence order (first match wins)."""

MAGMA_RULES: tuple[Rule, ...] = (
    Rule(MagmaType.NONE, ("no_melt",), "no melting predicted"),
    Rule(
        MagmaType.BIMODAL,
        ("mantle_melt", "extension_or_plume"),
        "continental rifts and hotspots erupt alkali basalt with rhyolite and few "
        "intermediate rocks (common practice; science.md section 8, from memory)",
    ),
    Rule(
        MagmaType.FELSIC,
        ("crustal_melt", "no_mantle_melt"),
        "anatexis of thickened crust gives peraluminous granite that mostly crystallises at "
        "depth (common practice; science.md section 8, from memory)",
    ),
    Rule(
        MagmaType.INTERMEDIATE,
        ("flux_melt", "continental_crust"),
        "continental arcs: andesite-dacite-rhyolite (science.md section 8, from memory)",
    ),
    Rule(
        MagmaType.INTERMEDIATE,
        ("mantle_melt", "crustal_melt", "continental_crust"),
        "mafic melt ponding under continental crust and melting it hybridises to intermediate "
        "and felsic magma (Huppert & Sparks 1988, J. Petrol. 29:599)",
    ),
    Rule(
        MagmaType.INTERMEDIATE,
        ("flux_melt", "crustal_melt"),
        "oceanic arcs with melting arc crust: basalt-andesite (science.md section 8)",
    ),
    Rule(
        MagmaType.MAFIC,
        ("mantle_melt",),
        "peridotite melting beneath thin lithosphere gives basalt (MORB, back-arc, ocean-island "
        "basalt; science.md section 8)",
    ),
    Rule(MagmaType.FELSIC, ("crustal_melt",), "crustal melt alone is granitic (common practice)"),
)
"""Magma-type rules in precedence order (first match wins)."""


def evaluate_conditions(fields: Mapping[str, np.ndarray], params: SettingParameters, names):
    """Boolean arrays of the named conditions."""
    return {n: np.asarray(CONDITIONS[n].test(fields, params), dtype=bool) for n in names}


def _apply(rules, fields, params, shape):
    names = sorted({c for r in rules for c in r.conditions})
    cond = evaluate_conditions(fields, params, names)
    first = np.full(shape, CLASS_NODATA, dtype=np.uint8)
    second = np.zeros(shape, dtype=np.uint8)
    unset = np.ones(shape, dtype=bool)
    unset_second = np.ones(shape, dtype=bool)
    for rule in rules:
        hit = np.ones(shape, dtype=bool)
        for c in rule.conditions:
            hit &= cond[c]
        take = hit & unset
        first[take] = rule.result
        if rule.conditions:  # the default row never counts as a secondary influence
            take2 = hit & ~unset & unset_second & (first != rule.result)
            second[take2] = rule.result
            unset_second &= ~take2
        unset &= ~hit
    return first, second


def classify(fields: Mapping[str, np.ndarray], params: SettingParameters) -> dict[str, np.ndarray]:
    """Setting, secondary setting, melting mechanism and magma type per cell.

    Parameters
    ----------
    fields : mapping of str to ndarray
        Per-cell arrays: ``crustal_thickness_km``, ``slab_depth_km`` (NaN: no
        slab), ``potential_temperature_c``, ``melt_thickness_km``,
        ``wedge_melt_fraction``, ``crustal_melt_fraction``,
        ``distance_to_<type>_km`` for ridge, rift, subduction, collision and
        transform (km; NaN where none within reach) and ``subduction_side``
        (+1 upper plate, -1 lower plate, 0 unknown, NaN none).
    params : SettingParameters
        Thresholds.

    Returns
    -------
    dict
        uint8 arrays ``setting`` and ``secondary_setting`` (codes of
        :class:`~geomelt.classes.Setting`; 0 = no secondary influence),
        ``melting_mechanism`` (bit flags of :class:`~geomelt.classes.Mechanism`)
        and ``magma_type`` (:class:`~geomelt.classes.MagmaType`); 255 where
        the crustal thickness is nodata.
    """
    crust = np.asarray(fields["crustal_thickness_km"], dtype=np.float64)
    shape = crust.shape
    valid = np.isfinite(crust)
    setting, secondary = _apply(SETTING_RULES, fields, params, shape)
    cond = evaluate_conditions(fields, params, ("decompression_melt", "flux_melt", "crustal_melt"))
    mechanism = (
        cond["decompression_melt"] * Mechanism.DECOMPRESSION
        + cond["flux_melt"] * Mechanism.FLUX
        + cond["crustal_melt"] * Mechanism.CRUSTAL_HEATING
    ).astype(np.uint8)
    magma, _ = _apply(MAGMA_RULES, {**fields, "setting": setting}, params, shape)
    out = {
        "setting": setting,
        "secondary_setting": secondary,
        "melting_mechanism": mechanism,
        "magma_type": magma,
    }
    for arr in out.values():
        arr[~valid] = CLASS_NODATA
    return out
