"""Pure, vectorised physics of geomelt: array in, array out.

Nothing here opens files or imports GIS, CLI or cluster libraries; the pipeline
feeds arrays in and writes what comes back. Depths are km (positive down),
temperatures degC, heat flow mW m^-2, ages Ma. Inputs broadcast and NaN in gives
NaN out.
"""

from __future__ import annotations

from geomelt.physics.crustal_melting import (
    crustal_melt_fraction,
    magma_melt_fraction,
    steady_state_moho_flag,
    underplating_temperature_increase_k,
    wet_granite_solidus_c,
)
from geomelt.physics.decompression import (
    MeltingColumn,
    MeltingTable,
    lithostatic_pressure_gpa,
    melting_column,
    solid_adiabat_temperature_c,
)
from geomelt.physics.flux_melting import slab_water_supply, wedge_melt_fraction
from geomelt.physics.geotherm import (
    DEFAULT_THERMAL_PARAMETERS,
    ContinentalGeotherm,
    conductive_heat_flow_mw_m2,
    conductive_temperature_c,
    geotherm_temperature_c,
    isotherm_depth_km,
    lab_depth_km,
    mantle_adiabat_temperature_c,
)
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
from geomelt.physics.peridotite import (
    dry_melt_fraction,
    dry_solidus_c,
    liquidus_c,
    melt_fraction,
    wet_solidus_c,
)
from geomelt.physics.thermal_state import THERMAL_STATE_OUTPUTS, thermal_state

__all__ = [
    "MeltingColumn",
    "MeltingTable",
    "crustal_melt_fraction",
    "dry_melt_fraction",
    "dry_solidus_c",
    "liquidus_c",
    "lithostatic_pressure_gpa",
    "magma_melt_fraction",
    "melt_fraction",
    "melting_column",
    "slab_water_supply",
    "solid_adiabat_temperature_c",
    "steady_state_moho_flag",
    "underplating_temperature_increase_k",
    "wedge_melt_fraction",
    "wet_granite_solidus_c",
    "wet_solidus_c",
    "DEFAULT_THERMAL_PARAMETERS",
    "THERMAL_STATE_OUTPUTS",
    "ContinentalGeotherm",
    "OceanicGeotherm",
    "boundary_layer_thickness_km",
    "conductive_heat_flow_mw_m2",
    "conductive_temperature_c",
    "gdh1_age_from_heat_flow_ma",
    "gdh1_depth_m",
    "gdh1_heat_flow_mw_m2",
    "geotherm_temperature_c",
    "half_space_heat_flow_mw_m2",
    "half_space_temperature_c",
    "isotherm_depth_km",
    "lab_depth_km",
    "mantle_adiabat_temperature_c",
    "oceanic_geotherm_temperature_c",
    "oceanic_heat_flow_mw_m2",
    "oceanic_isotherm_depth_km",
    "oceanic_lab_depth_km",
    "thermal_state",
]
