"""Registered algorithms: decompression, flux (water-added) and crustal melting per cell."""

from __future__ import annotations

import threading
from collections.abc import Mapping
from functools import lru_cache

import numpy as np

from geomelt.algorithms.base import Algorithm
from geomelt.classes import CLASS_NODATA
from geomelt.layers import OutputLayer
from geomelt.parameters import (
    CrustalMeltingParameters,
    FluxMeltingParameters,
    MantleMeltingParameters,
)
from geomelt.physics.crustal_melting import (
    crustal_melt_fraction,
    steady_state_moho_flag,
    underplating_temperature_increase_k,
)
from geomelt.physics.decompression import MeltingTable
from geomelt.physics.flux_melting import wedge_melt_fraction
from geomelt.tectonics.hotspots import HotspotSet, hotspot_excess_temperature_k

__all__ = ["CRUSTAL_MELTING", "DECOMPRESSION_MELTING", "FLUX_MELTING", "melting_table"]

_KATZ = (
    "Katz, R.F., Spiegelman, M. & Langmuir, C.H. (2003) A new parameterization of hydrous "
    "mantle melting. Geochem. Geophys. Geosyst. 4(9), 1073"
)

# --------------------------------------------------------------------------------------
# decompression melting
# --------------------------------------------------------------------------------------
_TABLE_LOCK = threading.Lock()


@lru_cache(maxsize=4)
def _cached_table(params: MantleMeltingParameters) -> MeltingTable:
    return MeltingTable.build(params)


def melting_table(params: MantleMeltingParameters) -> MeltingTable:
    """The precomputed melting table for these parameters (built once per process)."""
    with _TABLE_LOCK:
        return _cached_table(params)


def _decompression_outputs(params) -> tuple[OutputLayer, ...]:
    return (
        OutputLayer(
            "potential_temperature_c",
            "degC",
            "Mantle potential temperature",
            "Ambient mantle potential temperature plus the excess of nearby hotspots",
        ),
        OutputLayer(
            "solidus_depth_km",
            "km",
            "Depth where decompression melting starts",
            "Depth at which the isentrope of the local potential temperature crosses the "
            "peridotite solidus (Katz et al. 2003)",
        ),
        OutputLayer(
            "melt_fraction_max",
            "1",
            "Maximum degree of mantle melting",
            "Largest melt fraction reached by mantle rising isentropically up to the base of "
            "the lithosphere (0 where the lid is deeper than the solidus)",
            calibration=(
                "potential temperature, water content or lid depth outside the melting table "
                "(Katz et al. 2003 parameterization, 0-13 GPa), or no lithosphere base"
            ),
        ),
        OutputLayer(
            "melt_thickness_km",
            "km",
            "Column melt thickness",
            "Melt a mantle column makes if it rises to the lithosphere base: integral of melt "
            "fraction over depth from the solidus to the lithosphere base (McKenzie & Bickle "
            "1988); realised where the mantle rises (ridges, rifts, back-arcs, plumes; see "
            "melting_mechanism)",
            calibration=(
                "potential temperature, water content or lid depth outside the melting table "
                "(Katz et al. 2003 parameterization, 0-13 GPa), or no lithosphere base"
            ),
        ),
        OutputLayer(
            "axis_melt_thickness_km",
            "km",
            "Melt thickness of a spreading-axis column",
            "Melt a mantle column makes if it rises to the base of the crust, as beneath a "
            "spreading axis (McKenzie & Bickle 1988); used for ridge productivity",
            written=False,
        ),
    )


def _decompression_compute(arrays: Mapping, params: MantleMeltingParameters) -> dict:
    lid = np.asarray(arrays["lab_depth_km"], dtype=np.float64)
    valid = np.isfinite(arrays["crustal_thickness_km"]) & np.isfinite(arrays["heat_flow_mw_m2"])
    tp = np.full(lid.shape, params.mantle_potential_temperature_c)
    hotspots: HotspotSet | None = arrays.get("hotspots")
    if hotspots is not None and len(hotspots):
        hs = hotspots.with_defaults(params.hotspot_excess_temperature_k, params.hotspot_radius_km)
        tp = tp + hotspot_excess_temperature_k(arrays["cell_lon_deg"], arrays["cell_lat_deg"], hs)
    table = melting_table(params)
    # A thermal lithosphere deeper than the search limit (nodata LAB on valid input) is a
    # lid too thick for any melting: look it up at the bottom of the table.
    lid = np.where(valid & ~np.isfinite(lid), table.depth_km[-1], lid)
    res = table.lookup(tp, params.mantle_water_wt_pct, lid)
    out = {"potential_temperature_c": tp.astype(np.float32)}
    for key in ("solidus_depth_km", "melt_fraction_max", "melt_thickness_km"):
        out[key] = np.where(valid, res[key], np.nan).astype(np.float32)
    out["potential_temperature_c"][~valid] = np.nan
    crust = np.asarray(arrays["crustal_thickness_km"], dtype=np.float64)
    axis = table.lookup(tp, params.mantle_water_wt_pct, np.where(valid, crust, 0.0))
    out["axis_melt_thickness_km"] = np.where(valid, axis["melt_thickness_km"], np.nan)
    return out


DECOMPRESSION_MELTING = Algorithm(
    id="decompression_melting",
    version="1.0",
    title="Decompression melting of the mantle",
    description=(
        "Dry or slightly hydrous peridotite melting (Katz et al. 2003) along isentropic "
        "upwelling paths from the local potential temperature (raised near hotspots), cut "
        "off at the thermal lithosphere base. Gives the depth where melting starts, the "
        "maximum melt fraction and the column melt thickness. A table over potential "
        "temperature, water and depth is built once per run and interpolated per cell."
    ),
    inputs=("crustal_thickness_km", "heat_flow_mw_m2", "lab_depth_km"),
    optional_inputs=("hotspots", "cell_lon_deg", "cell_lat_deg"),
    parameters=MantleMeltingParameters,
    outputs=_decompression_outputs,
    compute=_decompression_compute,
    references=(
        _KATZ,
        "McKenzie, D. & Bickle, M.J. (1988) The volume and composition of melt generated by "
        "extension of the lithosphere. J. Petrol. 29, 625-679",
        "White, R.S. & McKenzie, D. (1989) Magmatism at rift zones: the generation of "
        "volcanic continental margins and flood basalts. JGR 94, 7685-7729",
        "Herzberg, C. et al. (2007) Temperatures in ambient mantle and plumes. G3 8, Q02006",
        "Hirschmann, M.M. (2006) Water, melting, and the deep Earth H2O cycle. Annu. Rev. "
        "Earth Planet. Sci. 34, 629-653",
    ),
    keywords=("decompression melting", "potential temperature", "melt thickness", "hotspot"),
)

# --------------------------------------------------------------------------------------
# flux melting
# --------------------------------------------------------------------------------------


def _flux_outputs(params) -> tuple[OutputLayer, ...]:
    return (
        OutputLayer(
            "wedge_melt_fraction",
            "1",
            "Flux melt fraction of the mantle wedge",
            "Extra melt fraction of the mantle wedge caused by water released from the slab "
            "(0 without a slab, in the forearc and far behind the arc)",
        ),
    )


def _flux_compute(arrays: Mapping, params: FluxMeltingParameters) -> dict:
    valid = np.isfinite(arrays["crustal_thickness_km"])
    slab = arrays.get("slab_depth_km")
    if slab is None:
        f = np.zeros(valid.shape)
    else:
        f = wedge_melt_fraction(
            slab,
            wedge_temperature_c=params.wedge_temperature_c,
            wedge_melting_depth_km=params.wedge_melting_depth_km,
            wedge_water_wt_pct=params.wedge_water_wt_pct,
            background_water_wt_pct=params.mantle_water_wt_pct,
            cpx_mass_fraction=params.cpx_mass_fraction,
            water_partition_coefficient=params.water_partition_coefficient,
            arc_slab_depth_km=params.arc_slab_depth_km,
            arc_window_half_width_km=params.arc_window_half_width_km,
            behind_arc_taper_km=params.behind_arc_taper_km,
        )
    return {"wedge_melt_fraction": np.where(valid, f, np.nan).astype(np.float32)}


FLUX_MELTING = Algorithm(
    id="flux_melting",
    version="1.0",
    title="Flux (water-added) melting above slabs",
    description=(
        "Where the slab lies at sub-arc depth, water released from it lowers the solidus of "
        "the overlying mantle wedge; the wedge melt fraction follows the hydrous "
        "parameterization of Katz et al. (2003). Shallower slab (forearc) gives no melting; "
        "deeper slab gives a water supply tapering to the background behind the arc."
    ),
    inputs=("crustal_thickness_km",),
    optional_inputs=("slab_depth_km",),
    parameters=FluxMeltingParameters,
    outputs=_flux_outputs,
    compute=_flux_compute,
    references=(
        _KATZ,
        "Syracuse, E.M. & Abers, G.A. (2006) Global compilation of variations in slab depth "
        "beneath arc volcanoes. G3 7, Q05017",
        "England, P., Engdahl, R. & Thatcher, W. (2004) Systematic variation in the depths of "
        "slabs beneath arc volcanoes. GJI 156, 377-408",
        "Kelley, K.A. et al. (2006) Mantle melting as a function of water content beneath "
        "back-arc basins. JGR 111, B09208",
    ),
    keywords=("flux melting", "subduction", "mantle wedge", "slab"),
)

# --------------------------------------------------------------------------------------
# crustal melting
# --------------------------------------------------------------------------------------


def _crustal_outputs(params) -> tuple[OutputLayer, ...]:
    return (
        OutputLayer(
            "underplate_heating_k",
            "K",
            "Lower-crust warming by underplated basalt",
            "Temperature rise of the lowermost crust from mantle melt that stalls at the Moho "
            "beneath continental crust (energy balance of sensible and latent heat)",
        ),
        OutputLayer(
            "crustal_melt_fraction",
            "1",
            "Melt fraction of the lowermost crust",
            "Melt fraction at the Moho from the water-saturated granite solidus and the "
            "muscovite, biotite and hornblende dehydration-melting reactions (0 for oceanic "
            "crust)",
            calibration="Moho pressure outside the wet granite solidus calibration (0.1-3.5 GPa)",
        ),
        OutputLayer(
            "moho_temperature_flag",
            "1",
            "Steady-state Moho temperature flag",
            "1 where the steady-state Moho temperature under thickened crust exceeds what "
            "orogenic crust shows (orogens are not in steady state), 0 elsewhere",
            dtype="uint8",
            nodata=CLASS_NODATA,
            categorical=True,
            scheme="moho_temperature_flag",
            flag_message=(
                "cell(s) have a steady-state Moho temperature above the range thickened "
                "orogenic crust shows; their crustal melt fractions are upper bounds "
                "(see moho_temperature_flag.tif)"
            ),
        ),
    )


def _crustal_compute(arrays: Mapping, params: CrustalMeltingParameters) -> dict:
    moho_t = np.asarray(arrays["moho_temperature_c"], dtype=np.float64)
    crust = np.asarray(arrays["crustal_thickness_km"], dtype=np.float64)
    valid = np.isfinite(moho_t) & np.isfinite(crust)
    continental = crust >= params.oceanic_crust_max_thickness_km
    mantle_melt = np.nan_to_num(arrays["melt_thickness_km"]) + params.wedge_melt_column_km * (
        np.nan_to_num(arrays["wedge_melt_fraction"])
    )
    underplate_km = np.where(continental, params.underplate_trapped_fraction * mantle_melt, 0.0)
    heating = underplating_temperature_increase_k(
        underplate_km,
        moho_t,
        heated_thickness_km=params.underplate_heated_thickness_km,
        crust_density_kg_m3=params.crust_density_kg_m3,
    )
    heating = np.where(valid, np.nan_to_num(heating), np.nan)
    frac = crustal_melt_fraction(moho_t + heating, depth_km=crust, params=params)
    # The solidus and dehydration reactions are those of felsic to intermediate crust;
    # thin oceanic crust is left to the mantle-melting maps.
    frac = np.where(continental, frac, 0.0)
    flag = steady_state_moho_flag(
        moho_t,
        crust,
        max_temperature_c=params.orogenic_moho_max_temperature_c,
        thick_crust_km=params.thick_crust_km,
    )
    flag = np.where(valid, np.asarray(flag, dtype=np.uint8), CLASS_NODATA).astype(np.uint8)
    return {
        "underplate_heating_k": heating.astype(np.float32),
        "crustal_melt_fraction": np.where(valid, frac, np.nan).astype(np.float32),
        "moho_temperature_flag": flag,
    }


CRUSTAL_MELTING = Algorithm(
    id="crustal_melting",
    version="1.0",
    title="Crustal melting (anatexis)",
    description=(
        "Lowermost-crust temperature (steady-state Moho temperature plus heating by mantle "
        "melt that ponds beneath continental crust) against the water-saturated granite "
        "solidus and the dehydration-melting reactions of muscovite, biotite and "
        "hornblende. Steady-state Moho temperatures hotter than orogenic crust shows are "
        "flagged, not trusted."
    ),
    inputs=(
        "crustal_thickness_km",
        "moho_temperature_c",
        "melt_thickness_km",
        "wedge_melt_fraction",
    ),
    parameters=CrustalMeltingParameters,
    outputs=_crustal_outputs,
    compute=_crustal_compute,
    references=(
        "Stern, C.R. & Wyllie, P.J. (1973) Water-saturated and undersaturated melting "
        "relations of a granite to 35 kilobars. EPSL 18, 163-167",
        "Le Breton, N. & Thompson, A.B. (1988) Fluid-absent (dehydration) melting of biotite "
        "in metapelites in the early stages of crustal anatexis. CMP 99, 226-237",
        "Clemens, J.D. & Vielzeuf, D. (1987) Constraints on melting and magma production in "
        "the crust. EPSL 86, 287-306",
        "Huppert, H.E. & Sparks, R.S.J. (1988) The generation of granitic magmas by intrusion "
        "of basalt into continental crust. J. Petrol. 29, 599-624",
    ),
    keywords=("crustal melting", "anatexis", "underplating", "granite"),
)
