"""geomelt: regional screening maps of where, why and how much rock melts.

geomelt turns regional grids (crustal thickness, surface heat flow, slab
depth) and plate-boundary lines into per-cell maps of lithosphere thermal
state, melting, tectonic-magmatic setting and prospect screens, written as
GeoTIFF and GeoPackage layers for desktop GIS.

Results are model estimates from regional data for screening only: they are
not a substitute for site investigation, volcanic-hazard assessment, drilling
design or permitting.
"""

from __future__ import annotations

try:
    from importlib.metadata import PackageNotFoundError, version

    __version__ = version("geomelt")
except PackageNotFoundError:  # pragma: no cover - running from a source tree
    __version__ = "0.0.0+unknown"

CAUTION = (
    "geomelt results are regional screening estimates computed from regional data with "
    "published, simplified models. They are not a substitute for site investigation, "
    "volcanic-hazard assessment, drilling design or permitting; follow local codes and "
    "the judgement of licensed geoscientists and engineers."
)
"""Screening caution carried by the README, the CLI summary and every output."""

__all__ = ["CAUTION", "__version__"]
