"""Registered algorithms: plate-boundary proximity and tectonic-magmatic setting per cell."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from geomelt.algorithms.base import Algorithm
from geomelt.classes import CLASS_NODATA
from geomelt.layers import OutputLayer
from geomelt.parameters import BoundaryParameters, SettingParameters
from geomelt.tectonics.boundaries import BOUNDARY_FIELDS, boundary_fields
from geomelt.tectonics.settings import classify

__all__ = ["BOUNDARY_PROXIMITY", "TECTONIC_SETTING"]

_WRITTEN_FIELDS = {
    "distance_to_ridge_km",
    "distance_to_rift_km",
    "distance_to_subduction_km",
    "distance_to_collision_km",
    "distance_to_transform_km",
    "subduction_side",
    "collision_side",
}
_UNITS = {"mm/yr": "mm yr-1", "": "1"}


def _boundary_outputs(params) -> tuple[OutputLayer, ...]:
    out = []
    for f in BOUNDARY_FIELDS.values():
        title = f.name.replace("_km", "").replace("_", " ")
        out.append(
            OutputLayer(
                f.name,
                _UNITS.get(f.unit, f.unit),
                title[0].upper() + title[1:],
                f.description,
                dtype=f.dtype,
                nodata=f.nodata,
                written=f.name in _WRITTEN_FIELDS,
            )
        )
    return tuple(out)


def _boundary_compute(arrays: Mapping, params: BoundaryParameters) -> dict:
    valid = np.isfinite(arrays["crustal_thickness_km"])
    lon = np.where(valid, arrays["cell_lon_deg"], np.nan)
    lat = np.where(valid, arrays["cell_lat_deg"], np.nan)
    boundaries = arrays.get("plate_boundaries")
    if boundaries is None:
        shape = valid.shape
        return {f.name: np.full(shape, f.nodata, dtype=f.dtype) for f in BOUNDARY_FIELDS.values()}
    return boundary_fields(boundaries, lon, lat, max_distance_km=params.boundary_reach_km)


BOUNDARY_PROXIMITY = Algorithm(
    id="boundary_proximity",
    version="1.0",
    title="Plate-boundary proximity",
    description=(
        "Geodesic distance (WGS84) from every cell to the nearest plate boundary of each type, "
        "the side of the nearest subduction and collision boundary (upper or lower plate) and "
        "the rate of the nearest boundary of each type. Correct for projected and geographic "
        "grids, across the antimeridian and near the poles."
    ),
    inputs=("crustal_thickness_km", "cell_lon_deg", "cell_lat_deg"),
    optional_inputs=("plate_boundaries",),
    parameters=BoundaryParameters,
    outputs=_boundary_outputs,
    compute=_boundary_compute,
    references=(
        "Karney, C.F.F. (2013) Algorithms for geodesics. J. Geodesy 87, 43-55",
        "Ballard, D.H. (1981) Strip trees: a hierarchical representation for curves. Commun. "
        "ACM 24, 310-321",
    ),
    keywords=("plate boundary", "distance", "subduction", "geodesic"),
)

_CLASS_OUTPUTS = (
    (
        "setting",
        "setting",
        "Tectonic-magmatic setting",
        "Setting of each cell from the documented rule table (geomelt.tectonics.settings)",
    ),
    (
        "secondary_setting",
        "secondary_setting",
        "Secondary tectonic-magmatic influence",
        "Second matching setting where several apply (0 = none), e.g. a ridge beneath a hotspot",
    ),
    (
        "melting_mechanism",
        "melting_mechanism",
        "Melting mechanism",
        "Which melting happens: decompression, flux (water addition), crustal heating, "
        "combinations, or none",
    ),
    (
        "magma_type",
        "magma_type",
        "Magma type",
        "Dominant magma composition expected from the mechanism and the crust",
    ),
)


def _setting_outputs(params) -> tuple[OutputLayer, ...]:
    return tuple(
        OutputLayer(
            name,
            "class",
            title,
            desc,
            dtype="uint8",
            nodata=CLASS_NODATA,
            categorical=True,
            scheme=scheme,
        )
        for name, scheme, title, desc in _CLASS_OUTPUTS
    )


def _setting_compute(arrays: Mapping, params: SettingParameters) -> dict:
    fields = dict(arrays)
    if "slab_depth_km" not in fields:
        fields["slab_depth_km"] = np.full(np.shape(arrays["crustal_thickness_km"]), np.nan)
    return classify(fields, params)


TECTONIC_SETTING = Algorithm(
    id="tectonic_setting",
    version="1.0",
    title="Tectonic-magmatic setting, melting mechanism and magma type",
    description=(
        "Assigns each cell one setting (mid-ocean ridge, continental rift, oceanic arc, "
        "continental arc, back-arc, forearc, continental collision, oceanic hotspot, "
        "continental hotspot, transform, stable interior) from ordered, cited rules over "
        "boundary distances and sides, slab depth, crust, mantle temperature and the melting "
        "results; keeps a secondary setting where several apply; derives the melting mechanism "
        "from the melting that happens and the magma type from mechanism and crust."
    ),
    inputs=(
        "crustal_thickness_km",
        "potential_temperature_c",
        "melt_thickness_km",
        "wedge_melt_fraction",
        "crustal_melt_fraction",
        "distance_to_ridge_km",
        "distance_to_rift_km",
        "distance_to_subduction_km",
        "distance_to_collision_km",
        "distance_to_transform_km",
        "subduction_side",
    ),
    optional_inputs=("slab_depth_km",),
    parameters=SettingParameters,
    outputs=_setting_outputs,
    compute=_setting_compute,
    references=(
        "Syracuse, E.M. & Abers, G.A. (2006) Global compilation of variations in slab depth "
        "beneath arc volcanoes. G3 7, Q05017",
        "England, P., Engdahl, R. & Thatcher, W. (2004) Systematic variation in the depths of "
        "slabs beneath arc volcanoes. GJI 156, 377-408",
        "Sdrolias, M. & Mueller, R.D. (2006) Controls on back-arc basin formation. G3 7, Q04016",
        "White, R.S. & McKenzie, D. (1989) Magmatism at rift zones. JGR 94, 7685-7729",
        "Huppert, H.E. & Sparks, R.S.J. (1988) The generation of granitic magmas by intrusion "
        "of basalt into continental crust. J. Petrol. 29, 599-624",
    ),
    keywords=("tectonic setting", "magma type", "melting mechanism", "classification"),
)
