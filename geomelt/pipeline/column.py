"""Ask one column why it melts: the run's algorithms on a single cell, plus profiles.

The cell values come from the run's inputs at a location (read on the
reference grid exactly as the map run reads them) or are typed in. The same
registered algorithms that make the maps compute the column's results, so a
probe always agrees with the maps; the depth profiles for the plot come from
the same physics functions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from geomelt.algorithms import Algorithm
from geomelt.layers import NEIGHBOURHOOD_LAYERS
from geomelt.parameters import ParameterSet, ThermalParameters
from geomelt.physics.crustal_melting import crustal_pressure_gpa, wet_granite_solidus_c
from geomelt.physics.decompression import lithostatic_pressure_gpa, melting_column
from geomelt.physics.geotherm import mantle_adiabat_temperature_c
from geomelt.physics.peridotite import dry_solidus_c, wet_solidus_c
from geomelt.physics.thermal_state import thermal_state

__all__ = ["ColumnProbe", "probe_column"]

PROFILE_STEP_KM = 2.0
"""Depth spacing of the printed and plotted profiles."""


@dataclass
class ColumnProbe:
    """Results and profiles of one probed column (units in the names)."""

    inputs: dict[str, float]
    results: dict[str, float]
    decisions: list[str]
    depth_km: np.ndarray
    geotherm_c: np.ndarray
    adiabat_c: np.ndarray
    dry_solidus_c: np.ndarray
    wet_solidus_c: np.ndarray
    melting_path_c: np.ndarray
    melt_fraction: np.ndarray
    granite_solidus_c: np.ndarray
    location: dict[str, Any] = field(default_factory=dict)

    def as_dict(self) -> dict[str, Any]:
        """JSON-ready dictionary (NaN as None)."""

        def clean(v):
            if isinstance(v, float) and not math.isfinite(v):
                return None
            return v

        profiles = {
            name: [clean(float(x)) for x in getattr(self, name)]
            for name in (
                "depth_km",
                "geotherm_c",
                "adiabat_c",
                "dry_solidus_c",
                "wet_solidus_c",
                "melting_path_c",
                "melt_fraction",
                "granite_solidus_c",
            )
        }
        return {
            "location": self.location,
            "inputs": {k: clean(v) for k, v in self.inputs.items()},
            "results": {k: clean(v) for k, v in self.results.items()},
            "decisions": self.decisions,
            "profiles": profiles,
        }


def _f(x) -> float:
    return float(np.asarray(x).reshape(-1)[0])


def probe_column(
    values: dict[str, float],
    algorithms: list[Algorithm],
    parameters: dict[str, ParameterSet],
    extra: dict[str, Any] | None = None,
) -> ColumnProbe:
    """Run the algorithm chain on one cell and build its depth profiles.

    Parameters
    ----------
    values : dict
        Input layer values of the cell: ``crustal_thickness_km``,
        ``heat_flow_mw_m2`` and optionally ``slab_depth_km`` (NaN: no slab).
    algorithms : list of Algorithm
        The run's algorithm chain (dependency order).
    parameters : dict
        Parameter set per algorithm id.
    extra : dict, optional
        Other per-cell inputs: vector objects (``hotspots``) and
        ``cell_lon_deg``/``cell_lat_deg``.
    """
    arrays: dict[str, Any] = {k: np.array([[v]], dtype=np.float64) for k, v in values.items()}
    for key, val in (extra or {}).items():
        arrays[key] = np.array([[val]], dtype=np.float64) if np.isscalar(val) else val
    # a single cell cannot measure layers that need the whole grid (distance to melt):
    # the algorithms reading them are left out of a column
    skipped: set[str] = set()
    kept = []
    for alg in algorithms:
        reads = set(alg.inputs) | set(alg.optional_inputs)
        if reads & (set(NEIGHBOURHOOD_LAYERS) | skipped):
            skipped |= {o.name for o in alg.output_layers(parameters[alg.id])}
            continue
        kept.append(alg)
    algorithms = kept
    for alg in algorithms:
        args = {n: arrays[n] for n in alg.inputs}
        args.update({n: arrays[n] for n in alg.optional_inputs if n in arrays})
        arrays.update(alg.compute(args, parameters[alg.id]))
    results = {
        out.name: _f(arrays[out.name])
        for alg in algorithms
        for out in alg.output_layers(parameters[alg.id])
    }

    thermal: ThermalParameters = parameters["thermal_state"]
    mantle = parameters.get("decompression_melting")
    q = values["heat_flow_mw_m2"]
    crust = values["crustal_thickness_km"]
    lab = results.get("lab_depth_km", float("nan"))
    tp = results.get("potential_temperature_c", thermal.mantle_potential_temperature_c)
    water = mantle.mantle_water_wt_pct if mantle is not None else 0.0

    sol_depth = results.get("solidus_depth_km", float("nan"))
    deepest = max(160.0, (lab if math.isfinite(lab) else 0.0) + 20.0)
    if math.isfinite(sol_depth):
        deepest = max(deepest, sol_depth + 20.0)
    deepest = min(300.0, math.ceil(deepest / PROFILE_STEP_KM) * PROFILE_STEP_KM)
    depth = np.arange(0.0, deepest + 0.5 * PROFILE_STEP_KM, PROFILE_STEP_KM)
    profile_params = thermal.replace(temperature_depths_km=tuple(depth), isotherms_c=())
    state = thermal_state(np.array([crust]), np.array([q]), profile_params)
    geotherm = state["temperature_at_depths_c"][:, 0].astype(np.float64)
    adiabat = mantle_adiabat_temperature_c(
        depth, thermal.mantle_potential_temperature_c, thermal.adiabat_gradient_k_km
    )
    pressure = lithostatic_pressure_gpa(depth)
    with np.errstate(invalid="ignore"):
        dry = np.where(depth >= crust, dry_solidus_c(pressure), np.nan)
        wet = np.where(depth >= crust, wet_solidus_c(pressure, water), np.nan)
        in_crust = (depth <= crust) & (depth > 0)
        granite = np.full(depth.shape, np.nan)
        granite[in_crust] = wet_granite_solidus_c(
            np.clip(crustal_pressure_gpa(depth[in_crust]), 0.1, 3.5)
        )
    path = np.full(depth.shape, np.nan)
    frac = np.zeros(depth.shape)
    if mantle is not None and math.isfinite(tp):
        lid = lab if math.isfinite(lab) else deepest
        col = melting_column(
            tp,
            water,
            dz_km=1.0,
            lid_depth_km=min(lid, deepest),
            cpx_mass_fraction=mantle.cpx_mass_fraction,
            water_partition_coefficient=mantle.water_partition_coefficient,
        )
        path = np.interp(depth, col.depth_km, col.temperature_c, left=np.nan, right=np.nan)
        frac = np.interp(depth, col.depth_km, np.nan_to_num(col.melt_fraction))
        path[depth < lid] = np.nan
        frac[depth < lid] = 0.0
    return ColumnProbe(
        inputs=dict(values),
        results=results,
        decisions=_decisions(values, results, parameters),
        depth_km=depth,
        geotherm_c=geotherm,
        adiabat_c=np.asarray(adiabat, dtype=np.float64),
        dry_solidus_c=dry,
        wet_solidus_c=wet,
        melting_path_c=path,
        melt_fraction=frac,
        granite_solidus_c=granite,
    )


def _decisions(values, r, parameters) -> list[str]:
    """Plain-language reasoning from the column's numbers."""
    out = []
    thermal: ThermalParameters = parameters["thermal_state"]
    crust = values["crustal_thickness_km"]
    oceanic = crust < thermal.oceanic_crust_max_thickness_km
    if oceanic and thermal.oceanic_geotherm == "half_space":
        out.append(
            f"crust {crust:.1f} km < {thermal.oceanic_crust_max_thickness_km:g} km: oceanic "
            f"lithosphere, half-space cooling for a plate age of "
            f"{r.get('oceanic_plate_age_ma', float('nan')):.1f} Ma implied by "
            f"{values['heat_flow_mw_m2']:.0f} mW/m2 (GDH1)"
        )
    else:
        out.append(
            f"crust {crust:.1f} km: conductive continental geotherm for "
            f"{values['heat_flow_mw_m2']:.0f} mW/m2 ({thermal.heat_flow_partition} partition)"
        )
    lab = r.get("lab_depth_km", float("nan"))
    out.append(
        f"thermal lithosphere base at {lab:.1f} km; Moho at {r['moho_temperature_c']:.0f} degC"
        if math.isfinite(lab)
        else f"no lithosphere base above {thermal.lab_max_depth_km:g} km: cold, thick lid"
    )
    if "potential_temperature_c" in r:
        tp = r["potential_temperature_c"]
        excess = tp - parameters["decompression_melting"].mantle_potential_temperature_c
        line = f"mantle potential temperature {tp:.0f} degC"
        if excess > 0.5:
            line += f" (+{excess:.0f} K from a nearby hotspot)"
        out.append(line)
        sol = r["solidus_depth_km"]
        if r["melt_thickness_km"] > 0.0:
            out.append(
                f"DECOMPRESSION: upwelling mantle crosses the solidus at {sol:.0f} km and melts "
                f"up to the lid at {lab:.0f} km: F max {r['melt_fraction_max']:.3f}, melt "
                f"column {r['melt_thickness_km']:.2f} km"
            )
        elif math.isfinite(sol):
            out.append(
                f"no decompression melting: the lid ({lab:.0f} km) is deeper than where the "
                f"isentrope meets the solidus ({sol:.0f} km)"
                if math.isfinite(lab)
                else "no decompression melting: the lithosphere is too thick"
            )
    if "wedge_melt_fraction" in r:
        slab = values.get("slab_depth_km", float("nan"))
        flux = parameters["flux_melting"]
        if not math.isfinite(slab):
            out.append("no slab beneath this cell: no flux melting")
        elif r["wedge_melt_fraction"] > 0.0:
            out.append(
                f"FLUX: slab at {slab:.0f} km delivers water to the wedge (sub-arc window "
                f"{flux.arc_slab_depth_km - flux.arc_window_half_width_km:g}-"
                f"{flux.arc_slab_depth_km + flux.arc_window_half_width_km:g} km): extra wedge "
                f"melt fraction {r['wedge_melt_fraction']:.3f}"
            )
        elif slab < flux.arc_slab_depth_km:
            out.append(f"slab at {slab:.0f} km is too shallow (forearc): no flux melting")
        else:
            out.append(f"slab at {slab:.0f} km is too deep: water supply exhausted")
    if "crustal_melt_fraction" in r:
        heat = r["underplate_heating_k"]
        line = f"lowermost crust at {r['moho_temperature_c'] + heat:.0f} degC"
        if heat > 0.5:
            line += f" (incl. +{heat:.0f} K from underplated mantle melt)"
        if r["crustal_melt_fraction"] > 0.0:
            out.append(f"CRUSTAL HEATING: {line}, melt fraction {r['crustal_melt_fraction']:.2f}")
        else:
            out.append(f"{line}: below the crustal solidus, or oceanic crust; no crustal melt")
        if r.get("moho_temperature_flag") == 1:
            out.append(
                "flag: this steady-state Moho temperature is hotter than thickened orogenic "
                "crust shows; the crustal melt fraction is an upper bound"
            )
    if "setting" in r:
        from geomelt.classes import MAGMA_TYPE, MELTING_MECHANISM, SECONDARY_SETTING, SETTING

        setting = SETTING.labels().get(int(r["setting"]), "nodata")
        line = f"SETTING: {setting}"
        second = int(r.get("secondary_setting", 0))
        if second not in (0, 255):
            line += f" (secondary influence: {SECONDARY_SETTING.labels()[second]})"
        mech = MELTING_MECHANISM.labels().get(int(r["melting_mechanism"]), "nodata")
        magma = MAGMA_TYPE.labels().get(int(r["magma_type"]), "nodata")
        out.append(f"{line}; mechanism: {mech}; magma type: {magma}")
    return out
