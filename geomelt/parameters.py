"""Frozen, validated parameter sets built from :mod:`geomelt.constants`.

Each physics family has one parameter set. Its fields take their defaults,
units, valid ranges and sources from the :class:`~geomelt.constants.Constant`
records, so a default is written exactly once. Sets are immutable; use
:meth:`ParameterSet.replace` or :meth:`ParameterSet.from_mapping` to change
values, both of which validate.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from typing import Any, ClassVar

from geomelt import constants as C
from geomelt.constants import Constant
from geomelt.errors import ParameterError

__all__ = [
    "BoundaryParameters",
    "CrustalMeltingParameters",
    "FluxMeltingParameters",
    "GeothermalScreeningParameters",
    "MantleMeltingParameters",
    "MineralScreeningParameters",
    "ParameterSet",
    "ProductivityParameters",
    "SettingParameters",
    "ThermalParameters",
    "param",
]


def param(const: Constant) -> Any:
    """Dataclass field whose default and metadata come from ``const``."""
    return dataclasses.field(default=const.value, metadata={"constant": const})


def _toml(value: Any) -> str:
    """A default as it is written in the TOML file (lists in brackets)."""
    return repr(list(value)) if isinstance(value, tuple) else repr(value)


def _check_number(name: str, value: Any, const: Constant) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        msg = (
            f"parameter {name!r} must be a number in {const.unit or 'no unit'}, "
            f"got {value!r} ({type(value).__name__}); e.g. {name} = {_toml(const.value)}"
        )
        raise ParameterError(msg)
    value = float(value)
    if not math.isfinite(value):
        msg = f"parameter {name!r} must be finite, got {value!r}"
        raise ParameterError(msg)
    lo, hi = const.minimum, const.maximum
    if (lo is not None and value < lo) or (hi is not None and value > hi):
        msg = (
            f"parameter {name!r} = {value:g} {const.unit} is outside its valid range "
            f"[{lo:g}, {hi:g}] {const.unit}; the default is {const.value!r} ({const.source})"
        )
        raise ParameterError(msg)
    return value


@dataclasses.dataclass(frozen=True)
class ParameterSet:
    """Base class of validated parameter sets (subclasses are frozen dataclasses)."""

    title: ClassVar[str] = "parameters"

    def __post_init__(self) -> None:
        for f in dataclasses.fields(self):
            const: Constant = f.metadata["constant"]
            value = getattr(self, f.name)
            if const.choices is not None:
                if value not in const.choices:
                    msg = (
                        f"parameter {f.name!r} = {value!r} is not one of {', '.join(const.choices)}"
                    )
                    raise ParameterError(msg)
                continue
            if isinstance(const.value, tuple):
                if isinstance(value, (int, float)) and not isinstance(value, bool):
                    value = (value,)
                if not isinstance(value, (list, tuple)):
                    msg = (
                        f"parameter {f.name!r} must be a list of numbers in {const.unit}, "
                        f"got {value!r}; e.g. {f.name} = {list(const.value)!r}"
                    )
                    raise ParameterError(msg)
                checked = tuple(sorted({_check_number(f.name, v, const) for v in value}))
                object.__setattr__(self, f.name, checked)
                continue
            object.__setattr__(self, f.name, _check_number(f.name, value, const))

    @classmethod
    def constants(cls) -> dict[str, Constant]:
        """The :class:`Constant` behind each field, by field name."""
        return {f.name: f.metadata["constant"] for f in dataclasses.fields(cls)}

    @classmethod
    def from_mapping(cls, values: Mapping[str, Any]) -> ParameterSet:
        """Build from a mapping, taking only this set's keys (others are ignored)."""
        names = {f.name for f in dataclasses.fields(cls)}
        return cls(**{k: v for k, v in values.items() if k in names})

    def replace(self, **changes: Any) -> ParameterSet:
        """Copy with some values changed (validated)."""
        return dataclasses.replace(self, **changes)

    def as_dict(self) -> dict[str, Any]:
        """Plain ``{name: value}`` mapping (tuples become lists)."""
        out = {}
        for f in dataclasses.fields(self):
            v = getattr(self, f.name)
            out[f.name] = list(v) if isinstance(v, tuple) else v
        return out


@dataclasses.dataclass(frozen=True)
class ThermalParameters(ParameterSet):
    """Parameters of the lithosphere thermal model.

    Continental cells use a steady conductive geotherm with depth-dependent
    radiogenic heat production (Turcotte & Schubert 2002, section 4-8); the
    thermal lithosphere ends where it meets the mantle adiabat. Oceanic cells
    may use half-space cooling (Turcotte & Schubert 2002, section 4-16) with
    the plate age implied by heat flow through GDH1 (Stein & Stein 1992).
    """

    title: ClassVar[str] = "thermal state"

    surface_temperature_c: float = param(C.SURFACE_TEMPERATURE_C)
    heat_flow_partition: str = param(C.HEAT_FLOW_PARTITION)
    upper_crust_thickness_km: float = param(C.UPPER_CRUST_THICKNESS_KM)
    upper_crust_heat_fraction: float = param(C.UPPER_CRUST_HEAT_FRACTION)
    lower_crust_heat_production_uw_m3: float = param(C.LOWER_CRUST_HEAT_PRODUCTION_UW_M3)
    mantle_heat_production_uw_m3: float = param(C.MANTLE_HEAT_PRODUCTION_UW_M3)
    reduced_heat_flow_fraction: float = param(C.REDUCED_HEAT_FLOW_FRACTION)
    heat_production_depth_scale_km: float = param(C.HEAT_PRODUCTION_DEPTH_SCALE_KM)
    crust_conductivity_w_m_k: float = param(C.CRUST_CONDUCTIVITY_W_M_K)
    mantle_conductivity_w_m_k: float = param(C.MANTLE_CONDUCTIVITY_W_M_K)
    mantle_potential_temperature_c: float = param(C.MANTLE_POTENTIAL_TEMPERATURE_C)
    adiabat_gradient_k_km: float = param(C.ADIABAT_GRADIENT_K_KM)
    lab_max_depth_km: float = param(C.LAB_MAX_DEPTH_KM)
    oceanic_geotherm: str = param(C.OCEANIC_GEOTHERM)
    oceanic_crust_max_thickness_km: float = param(C.OCEANIC_CRUST_MAX_THICKNESS_KM)
    oceanic_max_age_ma: float = param(C.OCEANIC_MAX_AGE_MA)
    mantle_thermal_diffusivity_m2_s: float = param(C.MANTLE_THERMAL_DIFFUSIVITY_M2_S)
    boundary_layer_erf_argument: float = param(C.BOUNDARY_LAYER_ERF_ARGUMENT)
    gdh1_plate_thickness_km: float = param(C.GDH1_PLATE_THICKNESS_KM)
    temperature_depths_km: tuple[float, ...] = param(C.TEMPERATURE_DEPTHS_KM)
    isotherms_c: tuple[float, ...] = param(C.ISOTHERMS_C)
    screening_temperature_depth_km: float = param(C.SCREENING_TEMPERATURE_DEPTH_KM)
    direct_use_isotherm_c: float = param(C.DIRECT_USE_ISOTHERM_C)
    binary_isotherm_c: float = param(C.BINARY_ISOTHERM_C)
    flash_isotherm_c: float = param(C.FLASH_ISOTHERM_C)

    def __post_init__(self) -> None:
        super().__post_init__()
        if self.mantle_conductivity_w_m_k < self.crust_conductivity_w_m_k:
            msg = (
                "parameter 'mantle_conductivity_w_m_k' "
                f"({self.mantle_conductivity_w_m_k:g}) must not be lower than "
                f"'crust_conductivity_w_m_k' ({self.crust_conductivity_w_m_k:g}): the "
                "lithosphere-base search assumes a geotherm whose gradient never increases "
                "with depth"
            )
            raise ParameterError(msg)


@dataclasses.dataclass(frozen=True)
class MantleMeltingParameters(ParameterSet):
    """Parameters of decompression melting of the mantle.

    Dry and hydrous batch melting of peridotite after Katz, Spiegelman & Langmuir
    (2003) along isentropic decompression paths cut off at the base of the lid;
    column melt thickness as McKenzie & Bickle (1988). The ``melting_table_*``
    values set the precomputed table that maps use instead of integrating every cell.
    """

    title: ClassVar[str] = "mantle melting"

    mantle_potential_temperature_c: float = param(C.MANTLE_POTENTIAL_TEMPERATURE_C)
    hotspot_excess_temperature_k: float = param(C.HOTSPOT_EXCESS_TEMPERATURE_K)
    hotspot_radius_km: float = param(C.HOTSPOT_RADIUS_KM)
    mantle_water_wt_pct: float = param(C.MANTLE_WATER_WT_PCT)
    cpx_mass_fraction: float = param(C.CPX_MASS_FRACTION)
    water_partition_coefficient: float = param(C.WATER_PARTITION_COEFFICIENT)
    melt_thickness_density_scaling: str = param(C.MELT_THICKNESS_DENSITY_SCALING)
    melting_table_min_potential_temperature_c: float = param(
        C.MELTING_TABLE_MIN_POTENTIAL_TEMPERATURE_C
    )
    melting_table_max_potential_temperature_c: float = param(
        C.MELTING_TABLE_MAX_POTENTIAL_TEMPERATURE_C
    )
    melting_table_max_water_wt_pct: float = param(C.MELTING_TABLE_MAX_WATER_WT_PCT)
    melting_table_depth_step_km: float = param(C.MELTING_TABLE_DEPTH_STEP_KM)
    melting_table_max_depth_km: float = param(C.MELTING_TABLE_MAX_DEPTH_KM)

    def __post_init__(self) -> None:
        super().__post_init__()
        if self.melting_table_max_potential_temperature_c <= (
            self.melting_table_min_potential_temperature_c
        ):
            msg = (
                "parameter 'melting_table_max_potential_temperature_c' "
                f"({self.melting_table_max_potential_temperature_c:g}) must exceed "
                "'melting_table_min_potential_temperature_c' "
                f"({self.melting_table_min_potential_temperature_c:g})"
            )
            raise ParameterError(msg)
        if self.mantle_water_wt_pct > self.melting_table_max_water_wt_pct:
            msg = (
                f"parameter 'mantle_water_wt_pct' ({self.mantle_water_wt_pct:g} wt%) exceeds "
                f"'melting_table_max_water_wt_pct' ({self.melting_table_max_water_wt_pct:g}); "
                "raise the table maximum so the melting table covers it"
            )
            raise ParameterError(msg)


@dataclasses.dataclass(frozen=True)
class FluxMeltingParameters(ParameterSet):
    """Parameters of flux (water-added) melting in the mantle wedge above a slab.

    Slab water reaches the hot wedge where the slab is at sub-arc depths
    (Syracuse & Abers 2006; England, Engdahl & Thatcher 2004) and falls off behind
    the arc; the wedge melts by the hydrous parameterization of Katz, Spiegelman &
    Langmuir (2003) at a fixed wedge temperature and depth.
    """

    title: ClassVar[str] = "flux melting"

    arc_slab_depth_km: float = param(C.ARC_SLAB_DEPTH_KM)
    arc_window_half_width_km: float = param(C.ARC_WINDOW_HALF_WIDTH_KM)
    behind_arc_taper_km: float = param(C.BEHIND_ARC_TAPER_KM)
    wedge_temperature_c: float = param(C.WEDGE_TEMPERATURE_C)
    wedge_melting_depth_km: float = param(C.WEDGE_MELTING_DEPTH_KM)
    wedge_water_wt_pct: float = param(C.WEDGE_WATER_WT_PCT)
    mantle_water_wt_pct: float = param(C.MANTLE_WATER_WT_PCT)
    cpx_mass_fraction: float = param(C.CPX_MASS_FRACTION)
    water_partition_coefficient: float = param(C.WATER_PARTITION_COEFFICIENT)


@dataclasses.dataclass(frozen=True)
class CrustalMeltingParameters(ParameterSet):
    """Parameters of crustal melting (anatexis) and of heating by mafic underplating.

    Melt fraction rises piecewise-linearly with temperature: a little melt at the
    water-saturated granite solidus, then muscovite, biotite (Le Breton & Thompson
    1988) and hornblende (Clemens & Vielzeuf 1987) dehydration melting.
    """

    title: ClassVar[str] = "crustal melting"

    crust_density_kg_m3: float = param(C.CRUST_DENSITY_KG_M3)
    water_saturated_melt_fraction: float = param(C.WATER_SATURATED_MELT_FRACTION)
    muscovite_melting_onset_c: float = param(C.MUSCOVITE_MELTING_ONSET_C)
    muscovite_melting_end_c: float = param(C.MUSCOVITE_MELTING_END_C)
    muscovite_melt_fraction: float = param(C.MUSCOVITE_MELT_FRACTION)
    biotite_melting_onset_c: float = param(C.BIOTITE_MELTING_ONSET_C)
    biotite_melting_extensive_c: float = param(C.BIOTITE_MELTING_EXTENSIVE_C)
    biotite_melt_fraction: float = param(C.BIOTITE_MELT_FRACTION)
    hornblende_melting_onset_c: float = param(C.HORNBLENDE_MELTING_ONSET_C)
    hornblende_melting_end_c: float = param(C.HORNBLENDE_MELTING_END_C)
    hornblende_melt_fraction: float = param(C.HORNBLENDE_MELT_FRACTION)
    underplate_heated_thickness_km: float = param(C.UNDERPLATE_HEATED_THICKNESS_KM)
    underplate_trapped_fraction: float = param(C.UNDERPLATE_TRAPPED_FRACTION)
    wedge_melt_column_km: float = param(C.WEDGE_MELT_COLUMN_KM)
    oceanic_crust_max_thickness_km: float = param(C.OCEANIC_CRUST_MAX_THICKNESS_KM)
    orogenic_moho_max_temperature_c: float = param(C.OROGENIC_MOHO_MAX_TEMPERATURE_C)
    thick_crust_km: float = param(C.THICK_CRUST_KM)

    def __post_init__(self) -> None:
        super().__post_init__()
        stages = (
            "muscovite_melting_onset_c",
            "muscovite_melting_end_c",
            "biotite_melting_onset_c",
            "biotite_melting_extensive_c",
            "hornblende_melting_onset_c",
            "hornblende_melting_end_c",
        )
        fractions = (
            "water_saturated_melt_fraction",
            "muscovite_melt_fraction",
            "biotite_melt_fraction",
            "hornblende_melt_fraction",
        )
        for names, what in ((stages, "temperatures"), (fractions, "melt fractions")):
            values = [getattr(self, n) for n in names]
            if any(later < earlier for earlier, later in zip(values[:-1], values[1:], strict=True)):
                msg = (
                    f"crustal melting {what} must not decrease in the order "
                    f"{', '.join(names)}; got {', '.join(f'{v:g}' for v in values)}"
                )
                raise ParameterError(msg)


@dataclasses.dataclass(frozen=True)
class SettingParameters(ParameterSet):
    """Thresholds of the tectonic-magmatic setting, mechanism and magma-type rules.

    The rules themselves are data in :mod:`geomelt.tectonics.settings`; these are
    the numbers they compare against.
    """

    title: ClassVar[str] = "tectonic-magmatic setting"

    continental_crust_min_thickness_km: float = param(C.CONTINENTAL_CRUST_MIN_THICKNESS_KM)
    ridge_zone_half_width_km: float = param(C.RIDGE_ZONE_HALF_WIDTH_KM)
    rift_zone_half_width_km: float = param(C.RIFT_ZONE_HALF_WIDTH_KM)
    transform_zone_half_width_km: float = param(C.TRANSFORM_ZONE_HALF_WIDTH_KM)
    collision_zone_half_width_km: float = param(C.COLLISION_ZONE_HALF_WIDTH_KM)
    thick_crust_km: float = param(C.THICK_CRUST_KM)
    subduction_zone_max_distance_km: float = param(C.SUBDUCTION_ZONE_MAX_DISTANCE_KM)
    arc_min_trench_distance_km: float = param(C.ARC_MIN_TRENCH_DISTANCE_KM)
    arc_max_trench_distance_km: float = param(C.ARC_MAX_TRENCH_DISTANCE_KM)
    arc_slab_depth_km: float = param(C.ARC_SLAB_DEPTH_KM)
    arc_window_half_width_km: float = param(C.ARC_WINDOW_HALF_WIDTH_KM)
    mantle_potential_temperature_c: float = param(C.MANTLE_POTENTIAL_TEMPERATURE_C)
    hotspot_min_excess_temperature_k: float = param(C.HOTSPOT_MIN_EXCESS_TEMPERATURE_K)
    min_melt_thickness_km: float = param(C.MIN_MELT_THICKNESS_KM)
    min_wedge_melt_fraction: float = param(C.MIN_WEDGE_MELT_FRACTION)
    min_crustal_melt_fraction: float = param(C.MIN_CRUSTAL_MELT_FRACTION)


@dataclasses.dataclass(frozen=True)
class BoundaryParameters(ParameterSet):
    """Parameters of the per-cell plate-boundary fields (distances, sides, rates)."""

    title: ClassVar[str] = "plate-boundary proximity"

    boundary_reach_km: float = param(C.BOUNDARY_REACH_KM)


# --------------------------------------------------------------------------------------
# Melt productivity and screening (geomelt.physics.productivity, geomelt.physics.screening)
# --------------------------------------------------------------------------------------
def _check_ramp(pset: ParameterSet, zero_name: str, full_name: str) -> None:
    """Raise unless the two breakpoints of a membership ramp differ."""
    if getattr(pset, zero_name) == getattr(pset, full_name):
        msg = (
            f"parameters {zero_name!r} and {full_name!r} must differ (both "
            f"{getattr(pset, zero_name):g}): a membership ramp needs two breakpoints"
        )
        raise ParameterError(msg)


def _check_weights(pset: ParameterSet, names: tuple[str, ...], what: str) -> None:
    """Raise if every weight of one score is 0."""
    if all(getattr(pset, n) == 0.0 for n in names):
        msg = f"the {what} weights ({', '.join(names)}) must not all be 0"
        raise ParameterError(msg)


@dataclasses.dataclass(frozen=True)
class ProductivityParameters(ParameterSet):
    """Parameters of melt productivity: plate rates, production zones and plume upwelling.

    Ridge and rift production per km of boundary is column melt thickness times the full
    opening rate (McKenzie & Bickle 1988); arc production is wedge melt fraction times
    convergence rate times the thickness of wedge carried through the melting region;
    plume production is upwelling velocity times melt fraction.
    """

    title: ClassVar[str] = "melt productivity"

    ridge_default_rate_mm_yr: float = param(C.RIDGE_DEFAULT_RATE_MM_YR)
    rift_default_rate_mm_yr: float = param(C.RIFT_DEFAULT_RATE_MM_YR)
    subduction_default_rate_mm_yr: float = param(C.SUBDUCTION_DEFAULT_RATE_MM_YR)
    collision_default_rate_mm_yr: float = param(C.COLLISION_DEFAULT_RATE_MM_YR)
    ridge_production_half_width_km: float = param(C.RIDGE_PRODUCTION_HALF_WIDTH_KM)
    rift_production_half_width_km: float = param(C.RIFT_PRODUCTION_HALF_WIDTH_KM)
    production_zone_profile: str = param(C.PRODUCTION_ZONE_PROFILE)
    arc_wedge_flow_thickness_km: float = param(C.ARC_WEDGE_FLOW_THICKNESS_KM)
    arc_production_width_km: float = param(C.ARC_PRODUCTION_WIDTH_KM)
    plume_reference_upwelling_mm_yr: float = param(C.PLUME_REFERENCE_UPWELLING_MM_YR)
    plume_reference_excess_temperature_k: float = param(C.PLUME_REFERENCE_EXCESS_TEMPERATURE_K)
    mantle_potential_temperature_c: float = param(C.MANTLE_POTENTIAL_TEMPERATURE_C)


@dataclasses.dataclass(frozen=True)
class GeothermalScreeningParameters(ParameterSet):
    """Membership breakpoints and weights of the geothermal heat-source factors and score.

    Fuzzy memberships (Zadeh 1965) combined by a weighted mean or the fuzzy gamma operator
    (An, Moon & Rencz 1991; Bonham-Carter 1994, chapter 9).
    """

    title: ClassVar[str] = "geothermal heat-source screening"

    heat_source_temperature_zero_c: float = param(C.HEAT_SOURCE_TEMPERATURE_ZERO_C)
    heat_source_temperature_full_c: float = param(C.HEAT_SOURCE_TEMPERATURE_FULL_C)
    isotherm_depth_full_km: float = param(C.ISOTHERM_DEPTH_FULL_KM)
    isotherm_depth_zero_km: float = param(C.ISOTHERM_DEPTH_ZERO_KM)
    melt_proximity_full_km: float = param(C.MELT_PROXIMITY_FULL_KM)
    melt_proximity_zero_km: float = param(C.MELT_PROXIMITY_ZERO_KM)
    heat_source_crustal_melt_full_fraction: float = param(C.HEAT_SOURCE_CRUSTAL_MELT_FULL_FRACTION)
    heat_source_weight_temperature: float = param(C.HEAT_SOURCE_WEIGHT_TEMPERATURE)
    heat_source_weight_direct_use: float = param(C.HEAT_SOURCE_WEIGHT_DIRECT_USE)
    heat_source_weight_binary: float = param(C.HEAT_SOURCE_WEIGHT_BINARY)
    heat_source_weight_flash: float = param(C.HEAT_SOURCE_WEIGHT_FLASH)
    heat_source_weight_melt_proximity: float = param(C.HEAT_SOURCE_WEIGHT_MELT_PROXIMITY)
    heat_source_weight_crustal_melt: float = param(C.HEAT_SOURCE_WEIGHT_CRUSTAL_MELT)
    screening_combination: str = param(C.SCREENING_COMBINATION)
    fuzzy_gamma: float = param(C.FUZZY_GAMMA)
    heat_source_prospect_threshold: float = param(C.HEAT_SOURCE_PROSPECT_THRESHOLD)
    prospect_min_area_km2: float = param(C.PROSPECT_MIN_AREA_KM2)

    def __post_init__(self) -> None:
        super().__post_init__()
        # the heat-source score must rise with heat: hotter at depth, shallower isotherms and
        # nearer melt never score lower
        for zero, full, increasing in (
            ("heat_source_temperature_zero_c", "heat_source_temperature_full_c", True),
            ("isotherm_depth_zero_km", "isotherm_depth_full_km", False),
            ("melt_proximity_zero_km", "melt_proximity_full_km", False),
        ):
            _check_ramp(self, zero, full)
            if (getattr(self, full) > getattr(self, zero)) != increasing:
                msg = (
                    f"parameter {full!r} ({getattr(self, full):g}) must be "
                    f"{'above' if increasing else 'below'} {zero!r} ({getattr(self, zero):g}) "
                    "so that more heat never scores lower"
                )
                raise ParameterError(msg)
        _check_weights(
            self,
            (
                "heat_source_weight_temperature",
                "heat_source_weight_direct_use",
                "heat_source_weight_binary",
                "heat_source_weight_flash",
                "heat_source_weight_melt_proximity",
                "heat_source_weight_crustal_melt",
            ),
            "heat-source",
        )


@dataclasses.dataclass(frozen=True)
class MineralScreeningParameters(ParameterSet):
    """Membership breakpoints and weights of the mineral-system affinity factors and scores.

    Each system's factors (setting, melting, magma type, crust) are fuzzy memberships
    (Zadeh 1965) combined by a weighted mean or the fuzzy gamma operator (An, Moon & Rencz
    1991; Bonham-Carter 1994, chapter 9). The deposit-model associations and their sources
    are in :mod:`geomelt.physics.screening`.
    """

    title: ClassVar[str] = "mineral-system screening"

    flux_melt_fraction_full: float = param(C.FLUX_MELT_FRACTION_FULL)
    high_degree_melt_fraction_zero: float = param(C.HIGH_DEGREE_MELT_FRACTION_ZERO)
    high_degree_melt_fraction_full: float = param(C.HIGH_DEGREE_MELT_FRACTION_FULL)
    mantle_melt_thickness_zero_km: float = param(C.MANTLE_MELT_THICKNESS_ZERO_KM)
    mantle_melt_thickness_full_km: float = param(C.MANTLE_MELT_THICKNESS_FULL_KM)
    continental_crust_zero_km: float = param(C.CONTINENTAL_CRUST_ZERO_KM)
    continental_crust_full_km: float = param(C.CONTINENTAL_CRUST_FULL_KM)
    thick_crust_zero_km: float = param(C.THICK_CRUST_ZERO_KM)
    thick_crust_full_km: float = param(C.THICK_CRUST_FULL_KM)
    anatexis_melt_fraction_full: float = param(C.ANATEXIS_MELT_FRACTION_FULL)
    porphyry_weight_setting: float = param(C.PORPHYRY_WEIGHT_SETTING)
    porphyry_weight_flux_melt: float = param(C.PORPHYRY_WEIGHT_FLUX_MELT)
    porphyry_weight_magma: float = param(C.PORPHYRY_WEIGHT_MAGMA)
    porphyry_weight_crust: float = param(C.PORPHYRY_WEIGHT_CRUST)
    epithermal_weight_setting: float = param(C.EPITHERMAL_WEIGHT_SETTING)
    epithermal_weight_flux_melt: float = param(C.EPITHERMAL_WEIGHT_FLUX_MELT)
    epithermal_weight_magma: float = param(C.EPITHERMAL_WEIGHT_MAGMA)
    epithermal_weight_melting: float = param(C.EPITHERMAL_WEIGHT_MELTING)
    ni_cu_pge_weight_setting: float = param(C.NI_CU_PGE_WEIGHT_SETTING)
    ni_cu_pge_weight_melt_fraction: float = param(C.NI_CU_PGE_WEIGHT_MELT_FRACTION)
    ni_cu_pge_weight_melt_volume: float = param(C.NI_CU_PGE_WEIGHT_MELT_VOLUME)
    ni_cu_pge_weight_magma: float = param(C.NI_CU_PGE_WEIGHT_MAGMA)
    ni_cu_pge_weight_crust: float = param(C.NI_CU_PGE_WEIGHT_CRUST)
    sn_w_li_weight_setting: float = param(C.SN_W_LI_WEIGHT_SETTING)
    sn_w_li_weight_anatexis: float = param(C.SN_W_LI_WEIGHT_ANATEXIS)
    sn_w_li_weight_magma: float = param(C.SN_W_LI_WEIGHT_MAGMA)
    sn_w_li_weight_thick_crust: float = param(C.SN_W_LI_WEIGHT_THICK_CRUST)
    vms_weight_setting: float = param(C.VMS_WEIGHT_SETTING)
    vms_weight_thin_crust: float = param(C.VMS_WEIGHT_THIN_CRUST)
    vms_weight_magma: float = param(C.VMS_WEIGHT_MAGMA)
    vms_weight_melt_volume: float = param(C.VMS_WEIGHT_MELT_VOLUME)
    screening_combination: str = param(C.SCREENING_COMBINATION)
    fuzzy_gamma: float = param(C.FUZZY_GAMMA)
    mineral_prospect_threshold: float = param(C.MINERAL_PROSPECT_THRESHOLD)
    prospect_min_area_km2: float = param(C.PROSPECT_MIN_AREA_KM2)

    def __post_init__(self) -> None:
        super().__post_init__()
        for zero, full in (
            ("high_degree_melt_fraction_zero", "high_degree_melt_fraction_full"),
            ("mantle_melt_thickness_zero_km", "mantle_melt_thickness_full_km"),
            ("continental_crust_zero_km", "continental_crust_full_km"),
            ("thick_crust_zero_km", "thick_crust_full_km"),
        ):
            _check_ramp(self, zero, full)
        for system in ("porphyry", "epithermal", "ni_cu_pge", "sn_w_li", "vms"):
            names = tuple(
                f.name for f in dataclasses.fields(self) if f.name.startswith(f"{system}_weight_")
            )
            _check_weights(self, names, system)
