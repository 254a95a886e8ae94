#!/usr/bin/env python3
"""Write geomelt's demo region: an INVENTED region with invented names and invented data.

The region is about 4000 km x 3000 km on a custom Lambert Azimuthal Equal Area projection
whose centre (45 S, 140 W, open ocean) was chosen arbitrarily; the continent, ridges, arcs
and names below do not exist. No real data set was copied or sampled. The values are
built from published relations so that the layers are physically consistent:

- oceanic heat flow from plate age with the GDH1 plate model (Stein & Stein 1992,
  Nature 359:123), age = distance to the spreading axis / half-rate;
- oceanic crust ~7 km (White, McKenzie & O'Nions 1992, from memory; Rudnick & Gao 2003);
  continental crust ~37-41 km (Christensen & Mooney 1995, from memory); craton heat flow
  ~40 mW m-2 (Nyblade & Pollack 1993, secondary source; Rudnick, McDonough & O'Connell 1998);
- slab 100-110 km below the volcanic arc (Syracuse & Abers 2006, G3 7:Q05017; England,
  Engdahl & Thatcher 2004, GJI 156:377), arc-trench distance 205-210 km (Dickinson 1973,
  secondary source), slab deeper than 150 km below the back-arc (Taylor & Martinez 2003,
  from memory);
- orogenic crust 60-80 km (Owens & Zandt 1997, from memory); crust > 50 km is rare
  elsewhere (Mooney et al. 2004).

Usage::

    python processing_scripts/make_sample_layers.py [--out DIR] [--seed N] [--scale F]

``--scale F`` multiplies the number of cells per axis (``--scale 10`` gives a 10x finer grid
of the same region, for benchmarks). The same seed always gives the same layers. This script
is standalone: it does not import geomelt.
"""

from __future__ import annotations

import argparse
import json
import math
from dataclasses import dataclass
from pathlib import Path
from typing import NamedTuple

import geopandas as gpd
import numpy as np
import pyogrio
import rasterio
from pyproj import CRS, Transformer
from pyproj.crs import GeographicCRS, ProjectedCRS
from pyproj.crs.coordinate_operation import LambertAzimuthalEqualAreaConversion
from rasterio.crs import CRS as RasterioCRS
from rasterio.transform import Affine
from rasterio.windows import Window
from shapely.geometry import LineString, Point, box

DEFAULT_SEED = 4217
"""Seed of the committed sample layers."""

SOURCE_TAG = "invented demo data, geomelt make_sample_layers.py"

# Region: a rectangle centred on the projection origin (km).
HALF_WIDTH_KM = 2000.0
HALF_HEIGHT_KM = 1500.0
BASE_CELL_KM = 10.0
"""Reference-grid cell size at --scale 1 (400 x 300 cells)."""
BASE_SLAB_CELL_DEG = 0.15
"""Slab-grid cell size at --scale 1 (geographic, deliberately not the reference grid)."""
BLOCK_ROWS = 256
"""Rows computed and written at a time (= tile height), so memory does not grow with --scale."""

LAT_0 = -45.0
LON_0 = -140.0
CRS_NAME = "geomelt invented demo region, Lambert Azimuthal Equal Area (45 S, 140 W)"
PROJ_STRING = f"+proj=laea +lat_0={LAT_0:g} +lon_0={LON_0:g} +x_0=0 +y_0=0 +datum=WGS84 +units=m"

LAYER_FILES = {
    "crustal_thickness_km": "crustal_thickness_km.tif",
    "heat_flow_mw_m2": "heat_flow_mw_m2.tif",
    "slab_depth_km": "slab_depth_km.tif",
    "plate_boundaries": "plate_boundaries.gpkg",
    "hotspots": "hotspots.gpkg",
}


def demo_crs() -> CRS:
    """The custom LAEA CRS of the reference grid and the vector layers (WGS 84 datum)."""
    return ProjectedCRS(
        conversion=LambertAzimuthalEqualAreaConversion(LAT_0, LON_0),
        geodetic_crs=GeographicCRS(name="WGS 84"),
        name=CRS_NAME,
    )


# ----------------------------------------------------------------------------------------
# Geometry helpers (all coordinates in km in the LAEA frame)
# ----------------------------------------------------------------------------------------
def polyline_frame(vertices, x, y):
    """Distance, signed offset and along-line position of points relative to a polyline.

    Parameters
    ----------
    vertices : sequence of (x, y)
        Polyline vertices in km, in digitised order.
    x, y : ndarray
        Point coordinates in km.

    Returns
    -------
    distance_km, offset_km, along_km : ndarray
        Distance to the nearest segment; the same distance signed positive on the LEFT of
        the digitised direction; position along the line of the nearest point (negative
        before the first vertex and beyond the length after the last one).
    """
    v = np.asarray(vertices, dtype=float)
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    d = np.diff(v, axis=0)
    seg_len = np.hypot(d[:, 0], d[:, 1])
    start_along = np.concatenate([[0.0], np.cumsum(seg_len)])
    best_d2 = np.full(x.shape, np.inf)
    best_seg = np.zeros(x.shape, dtype=np.intp)
    best_t = np.zeros(x.shape)
    for i, (dx, dy) in enumerate(d):
        px, py = x - v[i, 0], y - v[i, 1]
        t = (px * dx + py * dy) / seg_len[i] ** 2
        tc = np.clip(t, 0.0, 1.0)
        d2 = (px - tc * dx) ** 2 + (py - tc * dy) ** 2
        closer = d2 < best_d2
        best_d2[closer] = d2[closer]
        best_seg[closer] = i
        best_t[closer] = t[closer]
    # Along-line position: clamped to the nearest segment, except before the first vertex
    # and after the last one, where it runs on (negative, or beyond the length).
    last = len(seg_len) - 1
    t_along = np.clip(best_t, np.where(best_seg == 0, -np.inf, 0.0),
                      np.where(best_seg == last, np.inf, 1.0))  # fmt: skip
    along = start_along[best_seg] + t_along * seg_len[best_seg]
    px, py = x - v[best_seg, 0], y - v[best_seg, 1]
    side = np.where(d[best_seg, 0] * py - d[best_seg, 1] * px >= 0.0, 1.0, -1.0)
    distance = np.sqrt(best_d2)
    return distance, side * distance, along


def band(s, s0, s1, edge):
    """Smooth box: ~1 for s0 < s < s1, 0.5 at the edges, ~0 beyond (tanh of width ``edge``)."""
    return 0.5 * (np.tanh((s - s0) / edge) - np.tanh((s - s1) / edge))


def lerp(base, target, weight):
    """Blend ``base`` towards ``target`` with weight in [0, 1]."""
    return base + (target - base) * weight


def sample_curve(fun, t0, t1, step):
    """Vertices ``fun(t)`` (each an (x, y) pair) for t from t0 to t1, about ``step`` apart."""
    n = max(1, math.ceil(abs(t1 - t0) / step))
    return tuple(fun(t0 + (t1 - t0) * k / n) for k in range(n + 1))


# ----------------------------------------------------------------------------------------
# The invented region
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Boundary:
    """A digitised plate boundary (km vertices; may run past the region edge)."""

    name: str
    boundary_type: str
    rate_mm_yr: float
    vertices: tuple
    upper_plate_side: str | None = None


class Belt(NamedTuple):
    """A belt parallel to a trench on its upper-plate side, and the values it blends towards."""

    s0_km: float  # near edge, distance from the trench
    s1_km: float  # far edge
    edge_km: float  # width of the tanh edges
    crust_km: float
    heat_flow_mw_m2: float


@dataclass(frozen=True)
class Subduction:
    """A subduction zone: trench line, upper-plate belts and an analytic slab.

    Distances ``s`` (km) are measured from the trench on the upper-plate side.
    """

    trench: Boundary
    forearc: Belt
    arc: Belt
    back_arc: Belt | None
    trench_depth_km: float
    dip_shallow_deg: float
    dip_deep_deg: float
    dip_change_km: float  # distance from the trench where the dip is halfway between
    dip_change_width_km: float
    max_depth_km: float  # slab is nodata deeper than this (down-dip extent)
    end_taper_km: float = 60.0

    def upper_side_distance(self, x, y):
        """Distance from the trench on the upper-plate side (negative on the other side)."""
        _, offset, along = polyline_frame(self.trench.vertices, x, y)
        s = offset if self.trench.upper_plate_side == "left" else -offset
        return s, along

    @property
    def length_km(self):
        v = np.asarray(self.trench.vertices)
        return float(np.hypot(np.diff(v[:, 0]), np.diff(v[:, 1])).sum())

    def slab_depth_profile(self, s):
        """Slab-top depth (km) at distance ``s`` (km) from the trench; dip steepens down-dip."""
        grid = np.arange(0.0, 2000.0, 0.25)
        dip = np.radians(
            self.dip_shallow_deg
            + (self.dip_deep_deg - self.dip_shallow_deg)
            * 0.5
            * (1.0 + np.tanh((grid - self.dip_change_km) / self.dip_change_width_km))
        )
        slope = np.tan(dip)
        depth = self.trench_depth_km + np.concatenate(
            [[0.0], np.cumsum(0.5 * (slope[1:] + slope[:-1]) * np.diff(grid))]
        )
        return np.interp(s, grid, depth)


def _kessik_x(y):
    """Trench of the intra-oceanic subduction zone, gently convex towards the lower plate."""
    return -700.0 + 60.0 * ((y - 825.0) / 675.0) ** 2


def _tavrel_x(y):
    """Trench of the ocean-continent subduction zone."""
    return 280.0 + 50.0 * ((y + 825.0) / 675.0) ** 2


def _margin_x(y):
    """Continent-ocean boundary (continent to the east); a model line, not a plate boundary."""
    south = _tavrel_x(y) + 60.0
    north = 250.0
    w = 0.5 * (1.0 + np.tanh((y - 50.0) / 120.0))
    return (1.0 - w) * south + w * north


FULL_SPREADING_RATE_MM_YR = 40.0
HALF_RATE_KM_MYR = FULL_SPREADING_RATE_MM_YR / 2.0  # mm/yr == km/Myr

RIDGE_SEGMENTS = (
    Boundary("Halvane Ridge, north segment", "ridge", FULL_SPREADING_RATE_MM_YR,
             ((-1555.0, 455.0), (-1555.0, 1700.0))),
    Boundary("Halvane Ridge, central segment", "ridge", FULL_SPREADING_RATE_MM_YR,
             ((-1725.0, -345.0), (-1725.0, 455.0))),
    Boundary("Halvane Ridge, south segment", "ridge", FULL_SPREADING_RATE_MM_YR,
             ((-1585.0, -1700.0), (-1585.0, -345.0))),
)  # fmt: skip
TRANSFORMS = (
    Boundary("Orrin Transform", "transform", FULL_SPREADING_RATE_MM_YR,
             ((-1725.0, 455.0), (-1555.0, 455.0))),
    Boundary("Pelk Transform", "transform", FULL_SPREADING_RATE_MM_YR,
             ((-1725.0, -345.0), (-1585.0, -345.0))),
)  # fmt: skip

KESSIK = Subduction(
    trench=Boundary(
        "Kessik Trench", "subduction", 70.0,
        sample_curve(lambda y: (_kessik_x(y), y), 150.0, 1700.0, 50.0),
        upper_plate_side="right",  # digitised south to north; the arc lies to the east
    ),
    forearc=Belt(15.0, 150.0, 20.0, crust_km=15.0, heat_flow_mw_m2=38.0),
    arc=Belt(150.0, 255.0, 20.0, crust_km=25.0, heat_flow_mw_m2=90.0),
    back_arc=Belt(300.0, 460.0, 25.0, crust_km=8.0, heat_flow_mw_m2=118.0),
    trench_depth_km=7.0,
    dip_shallow_deg=18.0,
    dip_deep_deg=60.0,
    dip_change_km=190.0,
    dip_change_width_km=70.0,
    max_depth_km=600.0,
)  # fmt: skip
TAVREL = Subduction(
    trench=Boundary(
        "Tavrel Trench", "subduction", 60.0,
        sample_curve(lambda y: (_tavrel_x(y), y), -150.0, -1700.0, 50.0),
        upper_plate_side="left",  # digitised north to south; the arc lies to the east
    ),
    forearc=Belt(15.0, 150.0, 20.0, crust_km=30.0, heat_flow_mw_m2=40.0),
    arc=Belt(160.0, 260.0, 20.0, crust_km=45.0, heat_flow_mw_m2=90.0),
    back_arc=None,
    trench_depth_km=7.0,
    dip_shallow_deg=20.0,
    dip_deep_deg=45.0,
    dip_change_km=175.0,
    dip_change_width_km=70.0,
    max_depth_km=300.0,  # the slab model stops where (invented) seismicity stops
)  # fmt: skip
SUBDUCTION_ZONES = (KESSIK, TAVREL)

DRUSK = Boundary(
    "Drusk Suture", "collision", 30.0, ((450.0, 880.0), (2300.0, 1010.0)),
    upper_plate_side="left",  # digitised west to east; the overriding block is to the north
)  # fmt: skip
DRUSK_BELT = (-90.0, 130.0, 35.0, 66.0, 72.0)  # offset range north of the suture, edge, crust, q
VESKAR = Boundary("Veskar Rift", "rift", 5.0, ((1105.0, -250.0), (1065.0, 600.0)))
VESKAR_AXIS = (28.0, 60.0, 108.0, 70.0)  # crust at axis, crust sigma, q at axis, q sigma

CRATON = (1455.0, -905.0, 420.0, 330.0, 60.0, 40.0, 40.0)  # cx, cy, a, b, edge, crust, q


@dataclass(frozen=True)
class Hotspot:
    name: str
    x: float
    y: float
    excess_temperature_k: float
    radius_km: float


NEMMET = Hotspot("Nemmet hotspot", -850.0, -1000.0, 200.0, 250.0)
QUARN = Hotspot("Quarn hotspot", 1555.0, 455.0, 150.0, 300.0)
HOTSPOTS = (NEMMET, QUARN)

OCEAN_CRUST_KM = 7.0
CONTINENT_CRUST_KM = 37.0
CONTINENT_HEAT_FLOW = 60.0
MARGIN_WIDTH_KM = 50.0
NEMMET_CRUST_EXCESS_KM, NEMMET_CRUST_SIGMA_KM = 10.0, 100.0
NEMMET_HEAT_EXCESS, NEMMET_HEAT_SIGMA_KM = 25.0, 150.0
QUARN_HEAT_FLOW, QUARN_PLATEAU_KM, QUARN_UNDERPLATE_KM = 105.0, 230.0, 2.0
CRUST_NOISE_KM = 0.3
HEAT_NOISE_FRACTION = 0.03


def boundaries():
    """All plate boundaries of the region (ridges, transforms, trenches, suture, rift)."""
    return (*RIDGE_SEGMENTS, *TRANSFORMS, KESSIK.trench, TAVREL.trench, DRUSK, VESKAR)


# ----------------------------------------------------------------------------------------
# Fields
# ----------------------------------------------------------------------------------------
def gdh1_heat_flow_mw_m2(age_ma):
    """GDH1 oceanic heat flow (Stein & Stein 1992): 510 t^-1/2 to 55 Ma, then 48 + 96 e^-0.0278t."""
    age = np.asarray(age_ma, dtype=float)
    young = 510.0 / np.sqrt(np.maximum(age, 1e-6))
    old = 48.0 + 96.0 * np.exp(-0.0278 * age)
    return np.where(age <= 55.0, young, old)


def seafloor_age_ma(x, y):
    """Age from distance to the nearest spreading segment at the half-rate.

    Floored smoothly at 1 Ma (sqrt(t^2 + 1)) so the axial heat flow stays finite at 510
    mW m-2 (a choice for a 10 km grid, not a published value); capped at 180 Ma.
    """
    dist = np.min([polyline_frame(b.vertices, x, y)[0] for b in RIDGE_SEGMENTS], axis=0)
    age = dist / HALF_RATE_KM_MYR
    return np.minimum(np.sqrt(age**2 + 1.0), 180.0)


class SmoothNoise:
    """Seeded smooth random fields: sums of plane waves, unit variance, defined in km.

    Being a function of position (not of cell index), the noise is the same at every
    ``--scale``; only its sampling changes.
    """

    N_MODES = 48
    WAVELENGTH_KM = (40.0, 800.0)

    def __init__(self, seed, n_fields=2):
        rng = np.random.default_rng(seed)
        self.modes = []
        for _ in range(n_fields):
            lam = np.exp(rng.uniform(*np.log(self.WAVELENGTH_KM), self.N_MODES))
            direction = rng.uniform(0.0, 2.0 * np.pi, self.N_MODES)
            phase = rng.uniform(0.0, 2.0 * np.pi, self.N_MODES)
            k = 2.0 * np.pi / lam
            self.modes.append((k * np.cos(direction), k * np.sin(direction), phase))

    def on_grid(self, index, x_km, y_km):
        """Field ``index`` on the grid of cell centres ``x_km`` (columns) x ``y_km`` (rows).

        cos(kx x + ky y + phase) is expanded into products of 1-D cosines and sines, so the
        2-D work is exact multiply-adds (identical on every machine) and fast at any scale.
        """
        kx, ky, phase = self.modes[index]
        x_km, y_km = np.asarray(x_km, dtype=float), np.asarray(y_km, dtype=float)
        out = np.zeros((y_km.size, x_km.size))
        for i in range(len(phase)):
            a, b = kx[i] * x_km, ky[i] * y_km + phase[i]
            out += np.cos(b)[:, None] * np.cos(a)[None, :]
            out -= np.sin(b)[:, None] * np.sin(a)[None, :]
        return out * math.sqrt(2.0 / len(phase))


def surface_fields(x, y, crust_noise=None, heat_noise=None):
    """Crustal thickness (km) and surface heat flow (mW m-2) at points (km, LAEA).

    Built by blending a base ocean/continent state towards each feature's values with
    smooth weights, in a fixed order (later features win where they overlap). The optional
    noise arrays are unit-variance fields shaped like ``x``; without them the result is
    the intended, noise-free value.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    # Ocean: ~7 km crust, GDH1 heat flow from plate age.
    crust = np.full(x.shape, OCEAN_CRUST_KM)
    heat = gdh1_heat_flow_mw_m2(seafloor_age_ma(x, y))
    # Continent, blended across the margin.
    cont = 0.5 * (1.0 + np.tanh((x - _margin_x(y)) / MARGIN_WIDTH_KM))
    crust = lerp(crust, CONTINENT_CRUST_KM, cont)
    heat = lerp(heat, CONTINENT_HEAT_FLOW, cont)
    # Craton: cold, slightly thicker crust.
    cx, cy, a, b, edge, c_crust, c_heat = CRATON
    r_ell = np.hypot((x - cx) / a, (y - cy) / b)
    w = 0.5 * (1.0 - np.tanh((r_ell - 1.0) * 0.5 * (a + b) / edge))
    crust, heat = lerp(crust, c_crust, w), lerp(heat, c_heat, w)
    # Continental rift: thinned, hot axis, tapered at both ends.
    dist, _, along = polyline_frame(VESKAR.vertices, x, y)
    length = float(np.hypot(*np.subtract(VESKAR.vertices[1], VESKAR.vertices[0])))
    taper = 0.25 * (1.0 + np.tanh(along / 50.0)) * (1.0 + np.tanh((length - along) / 50.0))
    r_crust, r_crust_sigma, r_heat, r_heat_sigma = VESKAR_AXIS
    crust = lerp(crust, r_crust, taper * np.exp(-0.5 * (dist / r_crust_sigma) ** 2))
    heat = lerp(heat, r_heat, taper * np.exp(-0.5 * (dist / r_heat_sigma) ** 2))
    # Collision belt: thick crust, mostly on the overriding (north) side of the suture.
    _, offset, along = polyline_frame(DRUSK.vertices, x, y)
    s0, s1, edge, b_crust, b_heat = DRUSK_BELT
    w = band(offset, s0, s1, edge) * 0.5 * (1.0 + np.tanh((along - 150.0) / 80.0))
    crust, heat = lerp(crust, b_crust, w), lerp(heat, b_heat, w)
    # Continental hotspot: broad heat-flow plateau, a little mafic underplating.
    r = np.hypot(x - QUARN.x, y - QUARN.y)
    w = np.exp(-((r / QUARN_PLATEAU_KM) ** 4))
    heat = lerp(heat, QUARN_HEAT_FLOW, w)
    crust = crust + QUARN_UNDERPLATE_KM * w
    # Subduction zones: cold forearc, hot arc, hot thin back-arc (upper plate only).
    for zone in SUBDUCTION_ZONES:
        s, along = zone.upper_side_distance(x, y)
        # belts fade out past the first trench vertex (the others lie beyond the region)
        taper = 0.5 * (1.0 + np.tanh((along - zone.end_taper_km) / zone.end_taper_km))
        for belt in (zone.forearc, zone.arc, zone.back_arc):
            if belt is None:
                continue
            w = taper * band(s, belt.s0_km, belt.s1_km, belt.edge_km)
            crust = lerp(crust, belt.crust_km, w)
            heat = lerp(heat, belt.heat_flow_mw_m2, w)
    # Oceanic hotspot: thickened crust and raised heat flow (ocean only).
    r = np.hypot(x - NEMMET.x, y - NEMMET.y)
    crust = crust + NEMMET_CRUST_EXCESS_KM * np.exp(-0.5 * (r / NEMMET_CRUST_SIGMA_KM) ** 2) * (
        1.0 - cont
    )
    heat = heat + NEMMET_HEAT_EXCESS * np.exp(-0.5 * (r / NEMMET_HEAT_SIGMA_KM) ** 2) * (1.0 - cont)
    if crust_noise is not None:
        crust = crust + CRUST_NOISE_KM * crust_noise
    if heat_noise is not None:
        heat = heat * (1.0 + HEAT_NOISE_FRACTION * heat_noise)
    return crust, heat


def slab_depth_km(x, y):
    """Depth to the top of the subducting slab (km, positive down), NaN where there is none."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    out = np.full(x.shape, np.nan)
    for zone in SUBDUCTION_ZONES:
        s, along = zone.upper_side_distance(x, y)
        depth = zone.slab_depth_profile(np.maximum(s, 0.0))
        inside = (s >= 0.0) & (along >= 0.0) & (along <= zone.length_km)
        inside &= depth <= zone.max_depth_km
        out = np.where(inside & ~(out <= depth), depth, out)  # the shallower slab wins
    return out


# ----------------------------------------------------------------------------------------
# Features: representative points with the intended (noise-free) values
# ----------------------------------------------------------------------------------------
FEATURES = (
    ("Halvane Ridge", "mid_ocean_ridge", -1555.0, 1005.0,
     "spreading axis, 40 mm/yr full rate; heat flow at its maximum"),
    ("Orrin Transform", "transform", -1645.0, 455.0,
     "active transform between the north and central ridge segments"),
    ("Ambrel Basin", "ocean_basin", -105.0, -655.0, "old ocean floor, ~74 Ma"),
    ("Nemmet Rise", "oceanic_hotspot", -850.0, -1000.0,
     "oceanic hotspot; crust thickened, heat flow raised"),
    ("Kessik forearc", "forearc", -615.0, 825.0, "cold forearc between trench and arc"),
    ("Kessik Arc", "oceanic_arc", -495.0, 825.0, "intra-oceanic volcanic arc"),
    ("Miruun Basin", "back_arc", -325.0, 825.0, "back-arc basin behind the Kessik Arc"),
    ("Tavrel forearc", "forearc", 375.0, -805.0, "cold forearc of the continental margin"),
    ("Tavrel Cordillera", "continental_arc", 495.0, -805.0, "continental volcanic arc"),
    ("Drusk Orogen", "continental_collision", 1205.0, 955.0,
     "continent-continent collision belt"),
    ("Veskar Rift", "continental_rift", 1085.0, 175.0, "continental rift axis, 5 mm/yr"),
    ("Quarn Plateau", "continental_hotspot", 1555.0, 455.0,
     "continental hotspot, broad heat-flow high"),
    ("Ystrel Craton", "stable_interior", 1455.0, -905.0, "stable Archean-like craton"),
    ("Gorrand Platform", "stable_interior", 1555.0, -155.0, "ordinary continental interior"),
    ("Threnn Block", "stable_interior", 1405.0, 1355.0,
     "ordinary continent north of the Drusk Orogen"),
)  # fmt: skip
SLAB_KINDS = ("forearc", "oceanic_arc", "back_arc", "continental_arc")


def feature_records():
    """Feature dictionaries with intended crust, heat flow and (where relevant) slab depth."""
    records = []
    for label, (name, kind, xk, yk, note) in zip("abcdefghijklmnopq", FEATURES, strict=False):
        crust, heat = surface_fields(np.array([xk]), np.array([yk]))
        rec = {
            "id": label,
            "name": name,
            "kind": kind,
            "x": xk * 1000.0,
            "y": yk * 1000.0,
            "crustal_thickness_km": round(float(crust[0]), 1),
            "heat_flow_mw_m2": round(float(heat[0]), 1),
            "description": note,
        }
        if kind in SLAB_KINDS:
            rec["slab_depth_km"] = round(float(slab_depth_km(np.array([xk]), np.array([yk]))[0]), 1)
        records.append(rec)
    return records


# ----------------------------------------------------------------------------------------
# Writers
# ----------------------------------------------------------------------------------------
def _grid(scale):
    ncols, nrows = round(400 * scale), round(300 * scale)
    if ncols < 1 or nrows < 1:
        raise SystemExit(f"--scale {scale} gives an empty grid")
    res_x, res_y = 2 * HALF_WIDTH_KM / ncols, 2 * HALF_HEIGHT_KM / nrows
    if abs(res_x - res_y) > 1e-9 * res_x:
        raise SystemExit(f"--scale {scale} does not give square cells ({res_x} x {res_y} km)")
    return ncols, nrows, res_x


def _raster_profile(width, height, crs, transform):
    return {
        "driver": "GTiff",
        "width": width,
        "height": height,
        "count": 1,
        "dtype": "float32",
        "crs": crs,
        "transform": transform,
        "nodata": np.nan,
        "tiled": True,
        "blockxsize": 256,
        "blockysize": 256,
        "compress": "deflate",
        "predictor": 3,
    }


def _describe(dst, name, unit, long_name, seed, scale, **band_tags):
    dst.set_band_description(1, name)
    dst.set_band_unit(1, unit)
    dst.update_tags(1, long_name=long_name, **band_tags)
    dst.update_tags(
        source=SOURCE_TAG,
        seed=str(seed),
        scale=str(scale),
        licence="CC0-1.0",
        note="invented region with invented names; location of the projection centre is arbitrary",
    )


def write_reference_rasters(out, seed, scale):
    """Crustal thickness and heat flow on the LAEA reference grid, block by block."""
    ncols, nrows, cell = _grid(scale)
    transform = Affine(
        cell * 1000.0, 0.0, -HALF_WIDTH_KM * 1000.0, 0.0, -cell * 1000.0, HALF_HEIGHT_KM * 1000.0
    )
    crs = RasterioCRS.from_wkt(demo_crs().to_wkt())
    prof = _raster_profile(ncols, nrows, crs, transform)
    noise = SmoothNoise(seed)
    xc = -HALF_WIDTH_KM + cell * (np.arange(ncols) + 0.5)
    with (
        rasterio.open(out / LAYER_FILES["crustal_thickness_km"], "w", **prof) as d_crust,
        rasterio.open(out / LAYER_FILES["heat_flow_mw_m2"], "w", **prof) as d_heat,
    ):
        for row0 in range(0, nrows, BLOCK_ROWS):
            rows = min(BLOCK_ROWS, nrows - row0)
            yc = HALF_HEIGHT_KM - cell * (np.arange(row0, row0 + rows) + 0.5)
            xx, yy = np.meshgrid(xc, yc)
            crust, heat = surface_fields(xx, yy, noise.on_grid(0, xc, yc), noise.on_grid(1, xc, yc))
            win = Window(0, row0, ncols, rows)
            d_crust.write(crust.astype("float32"), 1, window=win)
            d_heat.write(heat.astype("float32"), 1, window=win)
        _describe(
            d_crust, "crustal_thickness_km", "km", "Crustal thickness", seed, scale, positive="down"
        )
        _describe(
            d_heat,
            "heat_flow_mw_m2",
            "mW m-2",
            "Surface heat flow",
            seed,
            scale,
            positive="out of the ground",
        )


def slab_grid_bounds(scale):
    """West and north edges (deg), width and height (cells) and cell size (deg) of the slab grid.

    The bounds enclose every place with a slab (found on a fixed 20 km probe grid, so the
    extent is the same at every --scale), padded by 0.3 deg and snapped to 0.15 deg.
    """
    cell = BASE_SLAB_CELL_DEG / scale
    px = np.arange(-HALF_WIDTH_KM - 200.0, HALF_WIDTH_KM + 200.0, 20.0)
    py = np.arange(-HALF_HEIGHT_KM - 200.0, HALF_HEIGHT_KM + 200.0, 20.0)
    xx, yy = np.meshgrid(px, py)
    valid = np.isfinite(slab_depth_km(xx, yy))
    to_geo = Transformer.from_crs(demo_crs(), "EPSG:4326", always_xy=True)
    lon, lat = to_geo.transform(xx[valid] * 1000.0, yy[valid] * 1000.0)
    snap = BASE_SLAB_CELL_DEG
    west = math.floor((lon.min() - 0.3) / snap) * snap
    north = math.ceil((lat.max() + 0.3) / snap) * snap
    width = math.ceil((lon.max() + 0.3 - west) / cell - 1e-9)
    height = math.ceil((north - lat.min() + 0.3) / cell - 1e-9)
    return round(west, 6), round(north, 6), width, height, cell


def write_slab_raster(out, seed, scale):
    """Slab depth on a geographic EPSG:4326 grid: cell centres evaluated in the LAEA frame."""
    west, north, width, height, cell = slab_grid_bounds(scale)
    transform = Affine(cell, 0.0, west, 0.0, -cell, north)
    prof = _raster_profile(width, height, RasterioCRS.from_epsg(4326), transform)
    to_laea = Transformer.from_crs("EPSG:4326", demo_crs(), always_xy=True)
    lon = west + cell * (np.arange(width) + 0.5)
    with rasterio.open(out / LAYER_FILES["slab_depth_km"], "w", **prof) as dst:
        for row0 in range(0, height, BLOCK_ROWS):
            rows = min(BLOCK_ROWS, height - row0)
            lat = north - cell * (np.arange(row0, row0 + rows) + 0.5)
            lo, la = np.meshgrid(lon, lat)
            x, y = to_laea.transform(lo, la)
            depth = slab_depth_km(np.asarray(x) / 1000.0, np.asarray(y) / 1000.0)
            dst.write(depth.astype("float32"), 1, window=Window(0, row0, width, rows))
        _describe(
            dst,
            "slab_depth_km",
            "km",
            "Depth to the top of the subducting slab",
            seed,
            scale,
            positive="down",
            datum="below sea level",
        )


def _region_box():
    return box(
        -HALF_WIDTH_KM * 1000, -HALF_HEIGHT_KM * 1000, HALF_WIDTH_KM * 1000, HALF_HEIGHT_KM * 1000
    )


def boundary_frame():
    """Plate boundaries as a GeoDataFrame in metres, clipped to the region."""
    region = _region_box()
    rows = []
    for b in boundaries():
        line = LineString([(vx * 1000.0, vy * 1000.0) for vx, vy in b.vertices])
        clipped = line.intersection(region)
        if clipped.geom_type != "LineString":
            raise RuntimeError(f"{b.name} does not clip to a single line: {clipped.geom_type}")
        rows.append(
            {
                "name": b.name,
                "boundary_type": b.boundary_type,
                "rate_mm_yr": float(b.rate_mm_yr),
                "upper_plate_side": b.upper_plate_side,
                "geometry": clipped,
            }
        )
    return gpd.GeoDataFrame(rows, geometry="geometry", crs=demo_crs())


def hotspot_frame():
    rows = [
        {
            "name": h.name,
            "excess_temperature_k": h.excess_temperature_k,
            "radius_km": h.radius_km,
            "geometry": Point(h.x * 1000.0, h.y * 1000.0),
        }
        for h in HOTSPOTS
    ]
    return gpd.GeoDataFrame(rows, geometry="geometry", crs=demo_crs())


GPKG_TIMESTAMP = "2000-01-01T00:00:00.000Z"
"""Fixed ``last_change`` written into the GeoPackages, so that regenerating them gives
byte-identical files (common practice for reproducible builds)."""


def write_vectors(out):
    previous = pyogrio.get_gdal_config_option("OGR_CURRENT_DATE")
    pyogrio.set_gdal_config_options({"OGR_CURRENT_DATE": GPKG_TIMESTAMP})
    try:
        _write_vectors(out)
    finally:
        pyogrio.set_gdal_config_options({"OGR_CURRENT_DATE": previous})


def _write_vectors(out):
    common = {"driver": "GPKG", "engine": "pyogrio", "dataset_options": {"VERSION": "1.2"}}
    boundary_frame().to_file(
        out / LAYER_FILES["plate_boundaries"],
        layer="plate_boundaries",
        layer_options={"DESCRIPTION": "Plate boundaries of the invented geomelt demo region"},
        layer_metadata={
            "rate_mm_yr": "full spreading, convergence or extension rate, mm/yr",
            "source": SOURCE_TAG,
            "licence": "CC0-1.0",
        },
        **common,
    )
    hotspot_frame().to_file(
        out / LAYER_FILES["hotspots"],
        layer="hotspots",
        layer_options={"DESCRIPTION": "Hotspots of the invented geomelt demo region"},
        layer_metadata={
            "excess_temperature_k": "mantle potential temperature excess, K",
            "radius_km": "radius of the anomaly, km",
            "source": SOURCE_TAG,
            "licence": "CC0-1.0",
        },
        **common,
    )


REGION_TOML = """\
# geomelt run configuration for the invented demo region (see README.md)
[inputs]
crustal_thickness_km = "crustal_thickness_km.tif"
heat_flow_mw_m2 = "heat_flow_mw_m2.tif"
slab_depth_km = "slab_depth_km.tif"
plate_boundaries = "plate_boundaries.gpkg"
hotspots = "hotspots.gpkg"

[parameters]
mantle_potential_temperature_c = 1350.0
temperature_depths_km = [5.0, 10.0, 20.0]
isotherms_c = [350.0, 600.0]
"""


def _toml_value(value):
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=True)  # a JSON string is a valid TOML basic string
    return repr(float(value))


def features_toml(records):
    lines = [
        "# Invented features of the geomelt demo region (see README.md). Nothing here is real.",
        "# x, y: representative point in metres in the CRS of crustal_thickness_km.tif, well",
        "# inside the feature. crustal_thickness_km, heat_flow_mw_m2 (and slab_depth_km where",
        "# given) are the intended values there, before the seeded low-amplitude noise.",
        f"crs_proj = {_toml_value(PROJ_STRING)}",
        f"crs_name = {_toml_value(CRS_NAME)}",
        "",
    ]
    for rec in records:
        lines.append("[[features]]")
        lines.extend(f"{key} = {_toml_value(val)}" for key, val in rec.items())
        lines.append("")
    return "\n".join(lines)


def ascii_sketch(records, cols=80, rows=30):
    """Character map of the region: background, boundary lines and feature labels."""
    cw, ch = 2 * HALF_WIDTH_KM / cols, 2 * HALF_HEIGHT_KM / rows
    xc = -HALF_WIDTH_KM + cw * (np.arange(cols) + 0.5)
    yc = HALF_HEIGHT_KM - ch * (np.arange(rows) + 0.5)
    xx, yy = np.meshgrid(xc, yc)
    crust, _ = surface_fields(xx, yy)
    grid = np.select([crust < 12.0, crust < 32.0], ["~", ":"], ".").astype("<U1")
    symbol = {"ridge": "R", "transform": "T", "subduction": "S", "collision": "C", "rift": "X"}
    for _, row in boundary_frame().iterrows():
        line = row.geometry
        for d in np.linspace(0.0, line.length, int(line.length / 10_000.0) + 2):
            p = line.interpolate(d)
            i = min(rows - 1, int((HALF_HEIGHT_KM - p.y / 1000.0) / ch))
            j = min(cols - 1, int((p.x / 1000.0 + HALF_WIDTH_KM) / cw))
            grid[i, j] = symbol[row.boundary_type]
    for rec in records:
        i = int((HALF_HEIGHT_KM - rec["y"] / 1000.0) / ch)
        j = int((rec["x"] / 1000.0 + HALF_WIDTH_KM) / cw)
        grid[i, j] = rec["id"]
    border = "+" + "-" * cols + "+"
    return "\n".join([border, *("|" + "".join(r) + "|" for r in grid), border])


def readme_text(records, scale=1.0):
    west, north, width, height, cell = slab_grid_bounds(scale)
    ncols, nrows, ref_cell = _grid(scale)
    table = [
        "| id | name | kind | x (m) | y (m) | crust (km) | heat flow (mW m-2) | slab (km) |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for r in records:
        slab = f"{r['slab_depth_km']:.0f}" if "slab_depth_km" in r else ""
        table.append(
            f"| {r['id']} | {r['name']} | {r['kind']} | {r['x']:.0f} | {r['y']:.0f} | "
            f"{r['crustal_thickness_km']:.1f} | {r['heat_flow_mw_m2']:.0f} | {slab} |"
        )
    bnd = ["| name | boundary_type | rate_mm_yr | upper_plate_side |", "|---|---|---|---|"]
    for b in boundaries():
        bnd.append(
            f"| {b.name} | {b.boundary_type} | {b.rate_mm_yr:g} | {b.upper_plate_side or ''} |"
        )
    hs = ["| name | excess_temperature_k | radius_km |", "|---|---|---|"]
    hs += [f"| {h.name} | {h.excess_temperature_k:g} | {h.radius_km:g} |" for h in HOTSPOTS]
    return README_TEMPLATE.format(
        proj=PROJ_STRING,
        crs_name=CRS_NAME,
        west=west,
        north=north,
        east=west + width * cell,
        south=north - height * cell,
        ncols=ncols,
        nrows=nrows,
        ref_cell=f"{ref_cell:g}",
        slab_cell=f"{cell:g}",
        slab_w=width,
        slab_h=height,
        seed=DEFAULT_SEED,
        features="\n".join(table),
        boundaries="\n".join(bnd),
        hotspots="\n".join(hs),
        sketch=ascii_sketch(records),
    )


README_TEMPLATE = """\
# geomelt sample layers: an invented demo region

**Everything in this folder is INVENTED demo data of an INVENTED region.** The continent,
ocean, ridges, arcs, hotspots and all their names are made up; no real data set was copied,
sampled or traced. The projection centre (45 S, 140 W, open ocean) was chosen arbitrarily
and says nothing about where such geology exists. Use the layers to learn, test and
benchmark geomelt, never to interpret any real place.

The layers are built from published relations (cited in
`processing_scripts/make_sample_layers.py`), so they are physically consistent, with a
little seeded, smooth, low-amplitude noise (about 3 % in heat flow, 0.3 km in crustal
thickness) so that they look like real compilations.

## Licence

The data in this folder are dedicated to the public domain under
[CC0 1.0](https://creativecommons.org/publicdomain/zero/1.0/). The script that makes them is
part of geomelt and shares the project's MIT licence.

## Regenerate

```sh
python processing_scripts/make_sample_layers.py --out sample_layers           # or: make sample-layers
python processing_scripts/make_sample_layers.py --out bench --scale 10        # 10x finer grid (4000 x 3000)
```

Options: `--seed N` (default {seed}; the committed files use it) and `--scale F` (cells per
axis multiplied by F; the region stays the same). The same seed gives the same layers;
`tests/test_sample_layers.py` checks that the committed files match a fresh generation.

## Layers

| file | content | CRS | grid | units | nodata |
|---|---|---|---|---|---|
| `crustal_thickness_km.tif` | crustal thickness (top of the crust, land surface or seafloor, to the Moho) | demo LAEA | {ncols} x {nrows} cells of {ref_cell} km, x -2000..2000 km, y -1500..1500 km | km, positive | NaN |
| `heat_flow_mw_m2.tif` | surface heat flow | demo LAEA | same grid as above | mW m-2 | NaN |
| `slab_depth_km.tif` | depth to the top of the subducting slab, below sea level, positive down | EPSG:4326 | {slab_w} x {slab_h} cells of {slab_cell} deg, lon {west:g}..{east:g}, lat {south:g}..{north:g} | km | NaN where there is no slab |
| `plate_boundaries.gpkg` | layer `plate_boundaries`, LineString | demo LAEA | | `rate_mm_yr` in mm/yr | null `upper_plate_side` where not convergent |
| `hotspots.gpkg` | layer `hotspots`, Point | demo LAEA | | K, km | |
| `region.toml` | geomelt run configuration (paths relative to this folder) | | | | |
| `features.toml` | the invented features below, machine-readable | demo LAEA (metres) | | | |

The slab grid is deliberately on a different CRS and resolution from the reference grid,
so that geomelt has to reproject it. Its values were computed by transforming each
geographic cell centre to the LAEA frame and evaluating the slab model there. Like real
slab compilations it reaches a little beyond the region where the trenches run off its
edge.

GeoTIFFs: float32, tiled 256 x 256, deflate with floating-point predictor (3); each has a
band description (the layer name), a band unit, and tags `source`, `seed`, `scale`,
`licence`. GeoPackages are written as GeoPackage 1.2 with a fixed `last_change` date, so
that regenerating them with the same seed gives byte-identical files.

**Demo LAEA CRS** ("{crs_name}"): `{proj}`.
Equal-area, metres; the region is centred on the projection origin.

### `plate_boundaries` attributes

`name` (text), `boundary_type` (ridge, rift, subduction, collision, transform),
`rate_mm_yr` (float: full spreading, convergence or extension rate; transforms carry the
spreading rate of the ridge they offset), `upper_plate_side` (left or right of the
digitised direction, for subduction and collision; null otherwise). Lines are clipped to
the region and do not form closed plates.

{boundaries}

### `hotspots` attributes

`name` (text), `excess_temperature_k` (mantle potential-temperature excess, K),
`radius_km` (radius of the anomaly in the rasters, km).

{hotspots}

## Features

Representative points lie in the core of each feature; the values are the intended ones
there, before noise (the committed rasters agree within a few per cent). The slab column
gives the slab depth below the point for subduction-related features.

{features}

## Layout

```
{sketch}
```

Background: `~` crust thinner than 12 km (ocean floor, back-arc basin), `:` 12-32 km
(arc and forearc crust, hotspot crust, continental margins), `.` 32 km or more (continent).
Lines: `R` ridge, `T` transform, `S` trench (the slab dips towards the arc side), `C`
collision suture, `X` rift axis. Letters: the features above (`d` and `l` are the hotspot
centres). North is up; each character is 50 km wide and 100 km tall.

## How the values were built

- Ocean floor: crust 7 km (White, McKenzie & O'Nions 1992, from memory; Rudnick & Gao
  2003). Heat flow from the GDH1 plate model, q = 510 t^-1/2 up to 55 Ma and
  48 + 96 exp(-0.0278 t) beyond (Stein & Stein 1992), with age = distance to the nearest
  spreading segment / half-rate (20 km/Myr). Age is floored smoothly at 1 Ma so the axis
  stays at about 510 mW m-2 (a choice for a 10 km grid).
- Continent: crust 37 km and heat flow 60 mW m-2 (continental means 41 km, Christensen &
  Mooney 1995, from memory; 65 mW m-2, Pollack, Hurter & Johnson 1993); craton 40 km and
  40 mW m-2 (Archean 41 +/- 11 mW m-2, Rudnick, McDonough & O'Connell 1998).
- Subduction: slab top from 7 km at the trench, dip steepening from 18-20 deg to 45-60 deg,
  100-110 km below the volcanic arcs (global mean 105 km, Syracuse & Abers 2006; 65-130 km,
  England, Engdahl & Thatcher 2004), arcs 205-210 km from the trench (Dickinson 1973,
  secondary source), slab deeper than 150 km below the back-arc basin (Taylor & Martinez
  2003, from memory). The intra-oceanic slab ends at 600 km; the continental-margin slab at
  300 km. Forearcs are cold (38-40 mW m-2), arcs hot (90 mW m-2).
- Collision belt: 66 km crust (orogens 60-80 km, Owens & Zandt 1997, from memory). Rift:
  crust thinned to 28 km, heat flow 108 mW m-2 at the axis. Hotspot excess temperatures
  150-200 K (plume heads +100 to +200 K, White & McKenzie 1989).
- Smooth tanh and Gaussian blends join the features; the noise is a seeded sum of plane
  waves (wavelengths 40-800 km) defined in kilometres, so it is the same at every `--scale`.
"""


def write_all(out, seed=DEFAULT_SEED, scale=1.0):
    """Write every sample layer into ``out`` (created if needed)."""
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    for name in (*LAYER_FILES.values(), "region.toml", "features.toml", "README.md"):
        (out / name).unlink(missing_ok=True)  # start clean: a GeoPackage would keep old layers
    write_reference_rasters(out, seed, scale)
    write_slab_raster(out, seed, scale)
    write_vectors(out)
    records = feature_records()
    (out / "region.toml").write_text(REGION_TOML, encoding="utf-8")
    (out / "features.toml").write_text(features_toml(records), encoding="utf-8")
    (out / "README.md").write_text(readme_text(records, scale), encoding="utf-8")
    return out


def main(argv=None):
    parser = argparse.ArgumentParser(
        description="Write geomelt's invented demo region (rasters, boundaries, hotspots, "
        "run configuration, feature list, README)."
    )
    parser.add_argument(
        "--out", default="sample_layers", help="output folder (default: %(default)s)"
    )
    parser.add_argument(
        "--seed", type=int, default=DEFAULT_SEED, help="noise seed (default: %(default)s)"
    )
    parser.add_argument(
        "--scale",
        type=float,
        default=1.0,
        help="multiply the number of cells per axis (default: %(default)s: 400 x 300 cells of 10 km)",
    )
    args = parser.parse_args(argv)
    if not args.scale > 0:
        parser.error("--scale must be positive")
    out = write_all(args.out, args.seed, args.scale)
    total = sum(p.stat().st_size for p in out.iterdir() if p.is_file())
    print(f"wrote sample layers to {out} ({total / 1e6:.2f} MB)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
