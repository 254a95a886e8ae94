"""Registered algorithm: mineral-system affinity factors and scores per cell."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from geomelt.algorithms.base import Algorithm
from geomelt.layers import OutputLayer
from geomelt.parameters import GeothermalScreeningParameters, MineralScreeningParameters
from geomelt.physics.screening import (
    HEAT_SOURCE_OUTPUTS,
    MINERAL_SYSTEMS,
    heat_source_factors,
    mineral_screening,
)

__all__ = ["GEOTHERMAL_SCREENING", "MINERAL_SCREENING"]


def _inputs() -> tuple[str, ...]:
    names: list[str] = []
    for system in MINERAL_SYSTEMS:
        for factor in system.factors:
            for name in factor.inputs:
                if name not in names:
                    names.append(name)
    for name in ("setting", "magma_type"):
        if name not in names:
            names.append(name)
    return tuple(names)


def _outputs(params) -> tuple[OutputLayer, ...]:
    out = []
    for system in MINERAL_SYSTEMS:
        for factor in system.factors:
            out.append(
                OutputLayer(
                    f"{system.key}_{factor.name}_factor",
                    "1",
                    f"{system.title}: {factor.name.replace('_', ' ')} factor",
                    factor.description,
                )
            )
        out.append(
            OutputLayer(
                f"{system.key}_score",
                "1",
                f"{system.title}: affinity score",
                f"Weighted combination of the {system.title} factors (0-1): {system.association}. "
                "A screening score, not a resource estimate",
            )
        )
    return tuple(out)


def _compute(arrays: Mapping, params: MineralScreeningParameters) -> dict:
    invalid = ~np.isfinite(arrays["crustal_thickness_km"])
    fields = {k: arrays[k] for k in MINERAL_SCREENING.inputs}
    out = {}
    # One system at a time: only its float64 factors are alive, not every system's.
    for system in MINERAL_SYSTEMS:
        for name, values in mineral_screening(fields, params, (system,)).items():
            values = values.astype(np.float32)
            values[invalid] = np.nan
            out[name] = values
    return out


_REFERENCES = tuple(dict.fromkeys(ref for s in MINERAL_SYSTEMS for ref in s.references))

MINERAL_SCREENING = Algorithm(
    id="mineral_screening",
    version="1.0",
    title="Mineral-system affinity screening",
    description=(
        "Transparent factors (each its own layer) and weighted scores of the mineral systems "
        "that follow magmatic settings: porphyry Cu-Au-Mo and epithermal Au-Ag with arcs, "
        "magmatic Ni-Cu-PGE with high-degree mantle melts at plumes and rifts, granite-related "
        "Sn-W-Li with melting of thickened crust, volcanogenic massive sulfide with ridges and "
        "back-arcs. Weights and membership breakpoints are parameters."
    ),
    inputs=_inputs(),
    parameters=MineralScreeningParameters,
    outputs=_outputs,
    compute=_compute,
    references=_REFERENCES
    + (
        "An, P., Moon, W.M. & Rencz, A. (1991) Application of fuzzy set theory to integrated "
        "mineral exploration. Can. J. Explor. Geophys. 27, 1-11",
        "Bonham-Carter, G.F. (1994) Geographic Information Systems for Geoscientists. Pergamon",
    ),
    keywords=("mineral systems", "prospectivity", "screening", "fuzzy logic"),
)


# ----------------------------------------------------------------------------- geothermal
_HEAT_TITLES = {
    "heat_source_temperature_factor": (
        "Heat source: temperature factor",
        "Membership of the temperature at the screening depth: 0 at "
        "heat_source_temperature_zero_c, 1 at heat_source_temperature_full_c",
    ),
    "heat_source_direct_use_factor": (
        "Heat source: direct-use isotherm factor",
        "Membership of the direct-use isotherm depth: 1 at or above isotherm_depth_full_km, "
        "0 at or below isotherm_depth_zero_km",
    ),
    "heat_source_binary_factor": (
        "Heat source: binary-power isotherm factor",
        "Membership of the binary-power isotherm depth (same depth breakpoints)",
    ),
    "heat_source_flash_factor": (
        "Heat source: flash-steam isotherm factor",
        "Membership of the flash-steam isotherm depth (same depth breakpoints)",
    ),
    "heat_source_melt_proximity_factor": (
        "Heat source: melt proximity factor",
        "Membership of the distance to the nearest predicted melt: 1 within "
        "melt_proximity_full_km, 0 beyond melt_proximity_zero_km",
    ),
    "heat_source_crustal_melt_factor": (
        "Heat source: crustal melt factor",
        "Membership of the lower-crust melt fraction: 0 with none, 1 from "
        "heat_source_crustal_melt_full_fraction",
    ),
    "heat_source_score": (
        "Geothermal heat-source score",
        "Weighted combination of the six heat-source factors (0-1); rises with heat. A "
        "screening score, not a resource estimate",
    ),
}


def _heat_outputs(params) -> tuple[OutputLayer, ...]:
    distance = OutputLayer(
        "distance_to_melt_km",
        "km",
        "Distance to the nearest predicted melt",
        "Great-circle distance (mean-radius sphere) to the nearest cell where any melting "
        "mechanism acts; 0 on melting cells; nodata where the region has no melt",
    )
    return (distance,) + tuple(
        OutputLayer(name, "1", *_HEAT_TITLES[name]) for name in HEAT_SOURCE_OUTPUTS
    )


def _heat_compute(arrays: Mapping, params: GeothermalScreeningParameters) -> dict:
    valid = np.isfinite(arrays["crustal_thickness_km"])
    out = heat_source_factors(
        arrays["screening_temperature_c"],
        arrays["direct_use_isotherm_depth_km"],
        arrays["binary_isotherm_depth_km"],
        arrays["flash_isotherm_depth_km"],
        arrays["distance_to_melt_km"],
        arrays["crustal_melt_fraction"],
        params,
    )
    distance = np.asarray(arrays["distance_to_melt_km"], dtype=np.float32)
    out["distance_to_melt_km"] = np.where(np.isfinite(distance), distance, np.nan)
    return {k: np.where(valid, v, np.nan).astype(np.float32) for k, v in out.items()}


GEOTHERMAL_SCREENING = Algorithm(
    id="geothermal_screening",
    version="1.0",
    title="Geothermal heat-source screening",
    description=(
        "Transparent factors (each its own layer) and a weighted score of how much heat lies "
        "within drilling reach: temperature at the screening depth, depths of the direct-use, "
        "binary and flash isotherms, distance to the nearest predicted melt and crustal melt. "
        "Fuzzy memberships with user-adjustable breakpoints and weights; the score never "
        "falls as a cell gets hotter."
    ),
    inputs=(
        "crustal_thickness_km",
        "screening_temperature_c",
        "direct_use_isotherm_depth_km",
        "binary_isotherm_depth_km",
        "flash_isotherm_depth_km",
        "distance_to_melt_km",
        "crustal_melt_fraction",
    ),
    parameters=GeothermalScreeningParameters,
    outputs=_heat_outputs,
    compute=_heat_compute,
    references=(
        "Zadeh, L.A. (1965) Fuzzy sets. Information and Control 8, 338-353",
        "An, P., Moon, W.M. & Rencz, A. (1991) Application of fuzzy set theory to integrated "
        "mineral exploration. Can. J. Explor. Geophys. 27, 1-11",
        "Bonham-Carter, G.F. (1994) Geographic Information Systems for Geoscientists. Pergamon",
        "Moritz, H. (2000) Geodetic Reference System 1980. J. Geodesy 74, 128-133",
    ),
    keywords=("geothermal", "heat source", "screening", "fuzzy logic"),
)
