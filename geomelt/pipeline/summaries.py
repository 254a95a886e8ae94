"""Totals gathered window by window: areas and melt production per setting and per line.

A :class:`Reducer` turns one window's arrays into a few fixed-size arrays; the
pipeline adds them up over all windows (in any order, on any engine), so
memory does not grow with the grid. Totals are in physical units: areas in km²
(true ellipsoidal cell areas, :meth:`geomelt.io.rasters.RasterGrid.cell_area_km2`),
production in km³ of melt per year (rate density in m³ km⁻² yr⁻¹ times cell
area, :func:`geomelt.physics.productivity.production_total_km3_yr`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from geomelt.classes import CLASS_NODATA

__all__ = [
    "GEOTHERMAL_REACH_LAYERS",
    "PRODUCTION_BY_SETTING",
    "GeothermalReach",
    "SEGMENT_PRODUCTION",
    "SettingTotals",
    "SegmentTotals",
    "add_summaries",
]

PRODUCTION_BY_SETTING = (
    "melt_production_m3_km2_yr",
    "ridge_melt_production_m3_km2_yr",
    "rift_melt_production_m3_km2_yr",
    "arc_melt_production_m3_km2_yr",
    "plume_melt_production_m3_km2_yr",
)
"""Production layers totalled per setting (when the run makes them)."""

SEGMENT_PRODUCTION = (
    ("ridge", "ridge_melt_production_m3_km2_yr"),
    ("rift", "rift_melt_production_m3_km2_yr"),
    ("subduction", "arc_melt_production_m3_km2_yr"),
)
"""Boundary type and the production layer credited to its nearest line of that type."""

_M3_PER_KM3 = 1.0e9


@dataclass(frozen=True)
class SettingTotals:
    """Area and melt production of each setting class.

    Returns ``setting_area_km2`` (256,) and, for each production layer ``L``
    present, ``L_km3_yr`` (256,): km³ of melt per year made in cells of each
    setting code (index = code; 255 = nodata is left out).
    """

    production_layers: tuple[str, ...]

    @property
    def inputs(self) -> tuple[str, ...]:
        return ("setting", "cell_area_km2", *self.production_layers)

    def __call__(self, arrays: Mapping[str, np.ndarray]) -> dict[str, np.ndarray]:
        codes = np.asarray(arrays["setting"]).ravel().astype(np.intp)
        area = np.asarray(arrays["cell_area_km2"], dtype=np.float64).ravel()
        keep = codes != CLASS_NODATA
        out = {
            "setting_area_km2": np.bincount(codes[keep], weights=area[keep], minlength=256)[:256]
        }
        for name in self.production_layers:
            rate = np.asarray(arrays[name], dtype=np.float64).ravel()
            ok = keep & np.isfinite(rate)
            km3 = rate[ok] * area[ok] / _M3_PER_KM3
            out[f"{name}_km3_yr"] = np.bincount(codes[ok], weights=km3, minlength=256)[:256]
        return out


@dataclass(frozen=True)
class SegmentTotals:
    """Melt production credited to each plate-boundary line.

    Every cell's ridge (rift, arc) production is credited to its nearest ridge
    (rift, subduction) line, the line whose distance and rate made it. Returns
    ``segment_production_km3_yr`` (n_features,), indexed by the row of the
    plate-boundary layer.
    """

    n_features: int

    @property
    def inputs(self) -> tuple[str, ...]:
        names = ["cell_area_km2"]
        for btype, layer in SEGMENT_PRODUCTION:
            names += [f"nearest_{btype}_feature", layer]
        return tuple(names)

    def __call__(self, arrays: Mapping[str, np.ndarray]) -> dict[str, np.ndarray]:
        area = np.asarray(arrays["cell_area_km2"], dtype=np.float64).ravel()
        total = np.zeros(self.n_features)
        for btype, layer in SEGMENT_PRODUCTION:
            feature = np.asarray(arrays[f"nearest_{btype}_feature"]).ravel()
            rate = np.asarray(arrays[layer], dtype=np.float64).ravel()
            ok = (feature >= 0) & np.isfinite(rate) & (rate > 0.0)
            if ok.any():
                km3 = rate[ok] * area[ok] / _M3_PER_KM3
                total += np.bincount(feature[ok], weights=km3, minlength=self.n_features)[
                    : self.n_features
                ]
        return {"segment_production_km3_yr": total}


GEOTHERMAL_REACH_LAYERS = (
    ("direct use", "direct_use_isotherm_depth_km"),
    ("binary power", "binary_isotherm_depth_km"),
    ("flash steam", "flash_isotherm_depth_km"),
)
"""Isotherm-depth layers whose area within drilling reach is totalled per setting."""


@dataclass(frozen=True)
class GeothermalReach:
    """Area of each setting where each geothermal isotherm lies within ``reach_km``.

    Returns ``reach_area_km2:<isotherm layer>`` (256,) per layer of
    :data:`GEOTHERMAL_REACH_LAYERS`.
    """

    reach_km: float

    @property
    def inputs(self) -> tuple[str, ...]:
        return ("setting", "cell_area_km2", *(layer for _, layer in GEOTHERMAL_REACH_LAYERS))

    def __call__(self, arrays: Mapping[str, np.ndarray]) -> dict[str, np.ndarray]:
        codes = np.asarray(arrays["setting"]).ravel().astype(np.intp)
        area = np.asarray(arrays["cell_area_km2"], dtype=np.float64).ravel()
        keep = codes != CLASS_NODATA
        out = {}
        for _, layer in GEOTHERMAL_REACH_LAYERS:
            depth = np.asarray(arrays[layer], dtype=np.float64).ravel()
            with np.errstate(invalid="ignore"):
                ok = keep & (depth <= self.reach_km)
            out[f"reach_area_km2:{layer}"] = np.bincount(
                codes[ok], weights=area[ok], minlength=256
            )[:256]
        return out


def add_summaries(total: dict[str, np.ndarray], part: Mapping[str, np.ndarray]) -> None:
    """Add one window's summaries into the running ``total`` (in place)."""
    for name, values in part.items():
        if name in total:
            total[name] = total[name] + values
        else:
            total[name] = np.array(values, dtype=np.float64, copy=True)
