"""Registered algorithm: mineral-system affinity factors and scores per cell."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from geomelt.algorithms.base import Algorithm
from geomelt.layers import OutputLayer
from geomelt.parameters import MineralScreeningParameters
from geomelt.physics.screening import MINERAL_SYSTEMS, mineral_screening

__all__ = ["MINERAL_SCREENING"]


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
    valid = np.isfinite(arrays["crustal_thickness_km"])
    fields = {k: arrays[k] for k in MINERAL_SCREENING.inputs}
    out = mineral_screening(fields, params)
    return {k: np.where(valid, v, np.nan).astype(np.float32) for k, v in out.items()}


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
