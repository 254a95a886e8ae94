"""Registered algorithm: melt production rate density per cell."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from geomelt.algorithms.base import Algorithm
from geomelt.layers import OutputLayer
from geomelt.parameters import ProductivityParameters
from geomelt.physics.productivity import (
    PRODUCTION_OUTPUTS,
    melt_production,
    spreading_production_density_m3_km2_yr,
)

__all__ = ["MELT_PRODUCTIVITY"]

_TITLES = {
    "ridge_melt_production_m3_km2_yr": "Melt production at spreading ridges",
    "rift_melt_production_m3_km2_yr": "Melt production at continental rifts",
    "arc_melt_production_m3_km2_yr": "Melt production beneath arcs",
    "plume_melt_production_m3_km2_yr": "Melt production of mantle plumes",
    "melt_production_m3_km2_yr": "Total melt production rate density",
}


def _outputs(params) -> tuple[OutputLayer, ...]:
    return tuple(
        OutputLayer(
            name,
            "m3 km-2 yr-1",
            _TITLES[name],
            "Volume of mantle melt produced per year per km2 of map (screening estimate)",
        )
        for name in PRODUCTION_OUTPUTS
    )


def _compute(arrays: Mapping, params: ProductivityParameters) -> dict:
    valid = np.isfinite(arrays["crustal_thickness_km"])
    fields = {k: arrays[k] for k in MELT_PRODUCTIVITY.inputs}
    out = melt_production(fields, params)
    # Beneath a spreading axis the mantle rises to the base of the crust, so the ridge
    # term uses that column's melt thickness (McKenzie & Bickle 1988), uniform across
    # the production zone; it then integrates back to thickness x rate.
    ridge = spreading_production_density_m3_km2_yr(
        arrays["axis_melt_thickness_km"],
        arrays["distance_to_ridge_km"],
        arrays["ridge_rate_mm_yr"],
        "ridge",
        params,
    )
    out["melt_production_m3_km2_yr"] = (
        out["melt_production_m3_km2_yr"] - out["ridge_melt_production_m3_km2_yr"] + ridge
    )
    out["ridge_melt_production_m3_km2_yr"] = ridge
    return {k: np.where(valid, v, np.nan).astype(np.float32) for k, v in out.items()}


MELT_PRODUCTIVITY = Algorithm(
    id="melt_productivity",
    version="1.0",
    title="Melt productivity",
    description=(
        "Melt production rate density (m3 of melt per km2 per year) from the same melting "
        "physics and the plate rates: ridges and rifts as column melt thickness times opening "
        "rate spread over the zone that produces it; arcs as wedge melt fraction times "
        "convergence rate times the wedge layer carried through the melting region; plumes as "
        "upwelling velocity times melt fraction. Missing rates take documented defaults per "
        "boundary type."
    ),
    inputs=(
        "crustal_thickness_km",
        "melt_thickness_km",
        "axis_melt_thickness_km",
        "melt_fraction_max",
        "wedge_melt_fraction",
        "distance_to_ridge_km",
        "ridge_rate_mm_yr",
        "distance_to_rift_km",
        "rift_rate_mm_yr",
        "subduction_rate_mm_yr",
        "potential_temperature_c",
    ),
    parameters=ProductivityParameters,
    outputs=_outputs,
    compute=_compute,
    references=(
        "McKenzie, D. & Bickle, M.J. (1988) J. Petrol. 29, 625-679",
        "Crisp, J.A. (1984) Rates of magma emplacement and volcanic output. JVGR 20, 177-211",
        "Reymer, A. & Schubert, G. (1984) Phanerozoic addition rates to the continental "
        "crust and crustal growth. Tectonics 3, 63-77",
        "White, S.M., Crisp, J.A. & Spera, F.J. (2006) Long-term volumetric eruption rates "
        "and magma budgets. G3 7, Q03010",
    ),
    keywords=("melt productivity", "magma supply", "spreading rate", "convergence rate"),
)
