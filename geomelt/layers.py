"""Catalogue of geomelt's input layers and the output layer record.

Input names carry their unit (design.md section 2). Every algorithm refers to
inputs by these names, the configuration's ``[inputs]`` table uses them, and
the CLI's ``--input NAME=PATH`` takes them.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = [
    "GRID_LAYERS",
    "INPUT_LAYERS",
    "NEIGHBOURHOOD_LAYERS",
    "InputLayer",
    "NeighbourhoodLayer",
    "OutputLayer",
]


@dataclass(frozen=True)
class InputLayer:
    """An input layer: name, kind, unit and the values expected in it.

    ``plausible_range`` is the range of values that real data of this kind
    takes; values outside it usually mean wrong units (metres instead of km,
    W m-2 instead of mW m-2) and are reported.
    """

    name: str
    kind: str  # "raster", "lines" or "points"
    unit: str
    description: str
    required: bool
    plausible_range: tuple[float, float] | None = None
    resampling: str = "bilinear"
    sparse: bool = False
    """True when nodata means "absent here" (a slab exists only in places)."""


INPUT_LAYERS: dict[str, InputLayer] = {
    layer.name: layer
    for layer in (
        InputLayer(
            "crustal_thickness_km",
            "raster",
            "km",
            "Crustal thickness (depth of the Moho below the surface), positive",
            True,
            (3.0, 90.0),
        ),
        InputLayer(
            "heat_flow_mw_m2", "raster", "mW m-2", "Surface heat flow", True, (10.0, 1000.0)
        ),
        InputLayer(
            "slab_depth_km",
            "raster",
            "km",
            "Depth of the top of a subducting slab below sea level, positive down; nodata "
            "where there is no slab",
            False,
            (0.0, 700.0),
            sparse=True,
        ),
        InputLayer(
            "plate_boundaries",
            "lines",
            "",
            "Plate-boundary lines with boundary_type (ridge, rift, subduction, collision, "
            "transform), optional rate_mm_yr and upper_plate_side (left/right)",
            True,
        ),
        InputLayer(
            "hotspots",
            "points",
            "",
            "Hotspot centres with optional excess_temperature_k and radius_km",
            False,
        ),
    )
}


GRID_LAYERS: dict[str, str] = {
    "cell_lon_deg": "Cell-centre longitude on WGS84, degrees (from the reference grid)",
    "cell_lat_deg": "Cell-centre latitude on WGS84, degrees (from the reference grid)",
    "cell_area_km2": "True area of the cell on the ellipsoid, km2 (from the reference grid)",
}
"""Per-cell layers the pipeline derives from the reference grid itself."""


@dataclass(frozen=True)
class NeighbourhoodLayer:
    """A per-cell layer that depends on the whole grid, not on the cell alone.

    The pipeline computes it between its two passes over the windows: the first pass
    produces ``sources`` everywhere, then the layer is built from them, and the
    algorithms that read it run in the second pass.
    """

    name: str
    unit: str
    description: str
    sources: tuple[str, ...]


NEIGHBOURHOOD_LAYERS: dict[str, NeighbourhoodLayer] = {
    layer.name: layer
    for layer in (
        NeighbourhoodLayer(
            "distance_to_melt_km",
            "km",
            "Distance to the nearest cell with predicted melt (any melting mechanism), km, on "
            "the sphere of the Earth's mean radius; 0 on melting cells, inf where the region "
            "has no melt",
            ("melting_mechanism",),
        ),
    )
}
"""Layers that need the whole grid (computed by the pipeline between its passes)."""


@dataclass(frozen=True)
class OutputLayer:
    """An output raster an algorithm produces: one GeoTIFF ``<name>.tif``.

    ``name`` carries the unit (``lab_depth_km``); ``unit`` is the unit text
    GDAL shows; ``long_name`` is a readable title.
    """

    name: str
    unit: str
    long_name: str
    description: str
    dtype: str = "float32"
    nodata: float = float("nan")
    categorical: bool = False
    scheme: str | None = None
    """Name of the :mod:`geomelt.classes` scheme of a categorical output."""
    flag_message: str | None = None
    """For 0/1 flag outputs: warning reported with the count of flagged cells."""
    written: bool = True
    """False for arrays other algorithms read but no GeoTIFF is written for."""
    calibration: str | None = None
    """Where the method leaves a cell without a value although its inputs are valid: the
    calibrated range it would leave (such cells are counted and reported, never clipped)."""
