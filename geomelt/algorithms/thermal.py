"""Registered algorithm: thermal state of the lithosphere per cell."""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping

import numpy as np

from geomelt.algorithms.base import Algorithm
from geomelt.layers import OutputLayer
from geomelt.parameters import ThermalParameters
from geomelt.physics.thermal_state import thermal_state

__all__ = ["THERMAL_STATE", "isotherm_layer_name", "temperature_layer_name"]


def _number_token(value: float) -> str:
    """``5.0 -> '5'``, ``2.5 -> '2p5'`` (no dots in file names)."""
    return f"{value:g}".replace(".", "p").replace("-", "m")


def temperature_layer_name(depth_km: float) -> str:
    """Output name of the temperature map at ``depth_km``."""
    return f"temperature_{_number_token(depth_km)}km_c"


def isotherm_layer_name(temperature_c: float) -> str:
    """Output name of the depth map of the ``temperature_c`` isotherm."""
    return f"isotherm_{_number_token(temperature_c)}c_depth_km"


def _outputs(params: ThermalParameters) -> tuple[OutputLayer, ...]:
    fixed = (
        OutputLayer(
            "moho_temperature_c",
            "degC",
            "Moho temperature",
            "Temperature at the base of the crust from the steady geotherm (conductive above "
            "the thermal lithosphere base, mantle adiabat below)",
        ),
        OutputLayer(
            "lab_depth_km",
            "km",
            "Thermal lithosphere base depth",
            "Depth where the conductive geotherm meets the mantle adiabat (continents) or the "
            "half-space thermal boundary-layer base (oceanic cells); nodata where deeper than "
            "the search limit",
            calibration=(
                "lithosphere base deeper than lab_max_depth_km, or crust producing more heat "
                "than the surface heat flow carries (Hasterok & Chapman 2011 partition)"
            ),
        ),
        OutputLayer(
            "moho_heat_flow_mw_m2",
            "mW m-2",
            "Heat flow at the Moho",
            "Conductive heat flow entering the crust from below",
        ),
        OutputLayer(
            "oceanic_plate_age_ma",
            "Ma",
            "Plate age implied by heat flow (oceanic cells)",
            "Age of oceanic lithosphere whose GDH1 heat flow equals the observed heat flow; "
            "nodata for continental cells",
        ),
    )
    temps = tuple(
        OutputLayer(
            temperature_layer_name(d),
            "degC",
            f"Temperature at {d:g} km depth",
            f"Steady-state temperature {d:g} km below the surface",
        )
        for d in params.temperature_depths_km
    )
    isos = tuple(
        OutputLayer(
            isotherm_layer_name(t),
            "km",
            f"Depth of the {t:g} degC isotherm",
            f"Shallowest depth where the geotherm reaches {t:g} degC",
        )
        for t in params.isotherms_c
    )
    geothermal = (
        OutputLayer(
            "screening_temperature_c",
            "degC",
            f"Temperature at the geothermal screening depth ({params.screening_temperature_depth_km:g} km)",
            "Steady-state temperature at screening_temperature_depth_km below the surface, the "
            "depth scored by the geothermal temperature factor",
        ),
        OutputLayer(
            "direct_use_isotherm_depth_km",
            "km",
            f"Depth of the direct-use isotherm ({params.direct_use_isotherm_c:g} degC)",
            "Shallowest depth of the direct_use_isotherm_c isotherm (district heating, "
            "industrial heat; common practice)",
        ),
        OutputLayer(
            "binary_isotherm_depth_km",
            "km",
            f"Depth of the binary-power isotherm ({params.binary_isotherm_c:g} degC)",
            "Shallowest depth of the binary_isotherm_c isotherm (binary-cycle power; common "
            "practice)",
        ),
        OutputLayer(
            "flash_isotherm_depth_km",
            "km",
            f"Depth of the flash-steam isotherm ({params.flash_isotherm_c:g} degC)",
            "Shallowest depth of the flash_isotherm_c isotherm (flash-steam power; common "
            "practice)",
        ),
    )
    return fixed + temps + isos + geothermal


def _compute(arrays: Mapping[str, np.ndarray], params: ThermalParameters) -> dict:
    # the geothermal screening depth and isotherms ride along with the mapped ones
    depths = (*params.temperature_depths_km, params.screening_temperature_depth_km)
    isotherms = (
        *params.isotherms_c,
        params.direct_use_isotherm_c,
        params.binary_isotherm_c,
        params.flash_isotherm_c,
    )
    full = dataclasses.replace(params, temperature_depths_km=depths, isotherms_c=isotherms)
    state = thermal_state(arrays["crustal_thickness_km"], arrays["heat_flow_mw_m2"], full)
    out = {
        "moho_temperature_c": state["moho_temperature_c"],
        "lab_depth_km": state["lab_depth_km"],
        "moho_heat_flow_mw_m2": state["moho_heat_flow_mw_m2"],
        "oceanic_plate_age_ma": state["plate_age_ma"],
    }
    # the parameter set may sort and merge the tuples: look each value up by position
    depth_at = {d: i for i, d in enumerate(full.temperature_depths_km)}
    isotherm_at = {t: i for i, t in enumerate(full.isotherms_c)}
    for d in params.temperature_depths_km:
        out[temperature_layer_name(d)] = state["temperature_at_depths_c"][depth_at[d]]
    for t in params.isotherms_c:
        out[isotherm_layer_name(t)] = state["isotherm_depths_km"][isotherm_at[t]]
    depth = params.screening_temperature_depth_km
    out["screening_temperature_c"] = state["temperature_at_depths_c"][depth_at[depth]]
    for name, t in (
        ("direct_use_isotherm_depth_km", params.direct_use_isotherm_c),
        ("binary_isotherm_depth_km", params.binary_isotherm_c),
        ("flash_isotherm_depth_km", params.flash_isotherm_c),
    ):
        out[name] = state["isotherm_depths_km"][isotherm_at[t]]
    return out


THERMAL_STATE = Algorithm(
    id="thermal_state",
    version="1.0",
    title="Lithosphere thermal state",
    description=(
        "Steady-state geotherm per cell from surface heat flow and crustal thickness: "
        "continental conduction with radiogenic heat production decreasing with depth, "
        "surface heat flow split into crustal and mantle parts, a mantle adiabat from the "
        "potential temperature below the thermal lithosphere, and half-space cooling for "
        "oceanic cells. Gives Moho temperature, thermal lithosphere base, temperatures at "
        "chosen depths and depths of chosen isotherms, and the temperature at the geothermal "
        "screening depth and the depths of the direct-use, binary and flash isotherms."
    ),
    inputs=("crustal_thickness_km", "heat_flow_mw_m2"),
    parameters=ThermalParameters,
    outputs=_outputs,
    compute=_compute,
    references=(
        "Turcotte, D.L. & Schubert, G. (2002) Geodynamics, 2nd ed., sections 4-8 and 4-16",
        "Hasterok, D. & Chapman, D.S. (2011) Heat production and geotherms for the continental "
        "lithosphere. EPSL 307, 59-70",
        "Pollack, H.N. & Chapman, D.S. (1977) On the regional variation of heat flow, geotherms "
        "and lithospheric thickness. Tectonophysics 38, 279-296",
        "Stein, C.A. & Stein, S. (1992) A model for the global variation in oceanic depth and "
        "heat flow with lithospheric age. Nature 359, 123-129",
        "Herzberg, C., Condie, K. & Korenaga, J. (2010) Thermal history of the Earth and its "
        "petrological expression. EPSL 292, 79-88",
    ),
    keywords=("geotherm", "heat flow", "lithosphere", "Moho temperature"),
)
