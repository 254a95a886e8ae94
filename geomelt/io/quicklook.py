"""Quick-look PNG maps of class and continuous outputs (matplotlib, no display needed).

Each map has a title, the CRS name, a legend (present classes) or a colour
bar labelled with the unit, a scale bar whose length is true at the place it is
drawn, a north arrow, optional plate boundaries (lines coloured by type) and
hotspots (markers), and an optional footnote such as the screening caution.

Figures are built with :class:`matplotlib.figure.Figure` and the Agg canvas
(no pyplot state, no display), at a fixed pixel size. Arrays whose long side
exceeds :data:`MAX_IMAGE_SIDE` cells are decimated first: nearest cell for
classes, block mean for continuous fields. Files are written under a temporary
name and moved into place.
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np
from affine import Affine
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.cm import ScalarMappable
from matplotlib.collections import LineCollection, PolyCollection
from matplotlib.colors import Normalize
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Rectangle
from matplotlib.ticker import FuncFormatter

from geomelt.classes import ClassScheme
from geomelt.io.rasters import crs_label
from geomelt.io.styles import atomic_path

__all__ = [
    "BOUNDARY_COLOURS",
    "MAX_IMAGE_SIDE",
    "QuicklookInfo",
    "class_map_png",
    "continuous_map_png",
    "nice_length",
    "north_angle",
    "place_labels",
    "prospects_map_png",
]

MAX_IMAGE_SIDE = 1500
"""Arrays with a longer side (in cells) are decimated before drawing."""

BOUNDARY_COLOURS = {
    "ridge": "#d7301f",
    "rift": "#fc8d59",
    "subduction": "#111111",
    "collision": "#7a0177",
    "transform": "#0570b0",
}
"""Line colour per plate-boundary type (others are grey)."""

_OTHER_BOUNDARY = "#777777"
_HOTSPOT_STYLE = {"marker": "^", "s": 70, "facecolor": "#ffffff", "edgecolor": "#000000"}
_UNKNOWN_CLASS_RGBA = (128, 128, 128, 255)

# Map box in figure fractions; legends and colour bar go to the right of the map as
# drawn (after its aspect ratio is applied).
_MAP_RECT = (0.07, 0.14, 0.60, 0.74)
_LABEL_SPACING = 0.035
"""Least distance between the centres of two rank labels on a prospects map, as a fraction
of the map's longer side (~20 pixels on the 600-pixel map: the circled labels just clear)."""
_FOOTNOTE_CHARS_PER_INCH = 19
"""Characters of the 6.5-point footnote per inch of figure width (matplotlib's own wrapping,
which measures the text, fitted 198 characters of the caution on the 10-inch figure)."""


@dataclass(frozen=True)
class QuicklookInfo:
    """What was drawn, for logs and tests."""

    path: Path
    size_px: tuple[int, int]
    """PNG width and height in pixels."""
    legend_labels: tuple[str, ...]
    """Class legend entries in order (empty for continuous maps)."""
    scale_bar_km: float
    north: str
    """``"true north"`` or ``"grid north"`` (when true north could not be computed)."""
    north_angle_deg: float
    """Direction of the arrow, degrees clockwise from the top of the map."""
    decimation: int
    label_positions: tuple[tuple[float, float], ...] = ()
    """Where the rank labels of a prospects map were put (map coordinates, rank order)."""


# --------------------------------------------------------------------------- helpers


def _pyproj(crs):
    from pyproj import CRS

    if crs is None:
        return None
    if hasattr(crs, "to_wkt"):
        return CRS.from_wkt(crs.to_wkt())
    return CRS.from_user_input(crs)


def nice_length(target: float) -> float:
    """The largest 1, 2, 2.5 or 5 times a power of ten not above ``target`` (> 0)."""
    if not (target > 0 and math.isfinite(target)):
        return 0.0
    exp = math.floor(math.log10(target))
    for m in (5.0, 2.5, 2.0, 1.0):
        if m * 10.0**exp <= target:
            return m * 10.0**exp
    return 5.0 * 10.0 ** (exp - 1)


def north_angle(crs, x: float, y: float) -> float | None:
    """Direction of true north at (x, y), degrees clockwise from grid north (+y).

    Computed by moving a small step north along the meridian in the CRS's
    geodetic system and projecting it back. Returns 0 for geographic CRSs and
    ``None`` when the CRS cannot be transformed.
    """
    pc = _pyproj(crs)
    if pc is None:
        return None
    if pc.is_geographic:
        return 0.0
    try:
        from pyproj import Transformer

        geodetic = pc.geodetic_crs
        to_geo = Transformer.from_crs(pc, geodetic, always_xy=True)
        to_map = Transformer.from_crs(geodetic, pc, always_xy=True)
        lon, lat = to_geo.transform(x, y)
        step = 0.01 if lat < 89.0 else -0.01
        xn, yn = to_map.transform(lon, lat + step)
        dx, dy = (xn - x, yn - y) if step > 0 else (x - xn, y - yn)
        if not (math.isfinite(dx) and math.isfinite(dy)) or (dx == 0 and dy == 0):
            return None
        return math.degrees(math.atan2(dx, dy))
    except Exception:  # noqa: BLE001 - any PROJ failure: fall back to grid north
        return None


def _extent(transform: Affine, shape: tuple[int, int]) -> tuple[float, float, float, float]:
    if transform.b != 0 or transform.d != 0:
        msg = "rotated grids are not supported in quick-looks"
        raise ValueError(msg)
    h, w = shape
    x0, y0 = transform.c, transform.f
    x1, y1 = x0 + transform.a * w, y0 + transform.e * h
    return (min(x0, x1), max(x0, x1), min(y0, y1), max(y0, y1))


def _orient(array: np.ndarray, transform: Affine) -> np.ndarray:
    """Flip so that row 0 is north and column 0 is west (imshow origin 'upper')."""
    out = array
    if transform.e > 0:
        out = out[::-1, :]
    if transform.a < 0:
        out = out[:, ::-1]
    return out


def _decimation(shape: tuple[int, int]) -> int:
    return max(1, math.ceil(max(shape) / MAX_IMAGE_SIDE))


def _decimate_classes(array: np.ndarray, f: int) -> np.ndarray:
    if f <= 1:
        return array
    return array[f // 2 :: f, f // 2 :: f]


def _decimate_mean(array: np.ndarray, f: int) -> np.ndarray:
    if f <= 1:
        return array
    h, w = array.shape
    nh, nw = -(-h // f), -(-w // f)
    pad = np.full((nh * f, nw * f), np.nan, dtype=np.float64)
    pad[:h, :w] = array
    blocks = pad.reshape(nh, f, nw, f)
    finite = np.isfinite(blocks)
    total = np.where(finite, blocks, 0.0).sum(axis=(1, 3))
    count = finite.sum(axis=(1, 3))
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(count > 0, total / count, np.nan)


def _as_gdf(frame, pc):
    """Frame reprojected to the map CRS when both CRSs are known."""
    if frame is None or len(frame) == 0:
        return None
    if pc is not None and getattr(frame, "crs", None) is not None:
        from pyproj import CRS

        if not CRS.from_user_input(frame.crs).equals(pc):
            frame = frame.to_crs(pc.to_wkt())
    return frame


def _line_coords(geoms) -> list[np.ndarray]:
    import shapely

    lines = []
    for g in geoms:
        if g is None or g.is_empty:
            continue
        if g.geom_type in ("Polygon", "MultiPolygon"):
            g = g.boundary
        for part in shapely.get_parts(g):
            if part.geom_type in ("LineString", "LinearRing"):
                lines.append(np.asarray(part.coords)[:, :2])
            elif part.geom_type == "MultiLineString":
                lines.extend(np.asarray(p.coords)[:, :2] for p in part.geoms)
    return lines


class _Map:
    """One figure with a map axes laid out for geomelt's quick-looks."""

    def __init__(self, array, transform, crs, title, figsize, dpi):
        self.transform = Affine(*tuple(transform)[:6])
        self.shape = np.shape(array)
        if len(self.shape) != 2:
            msg = f"array must be 2-D, got shape {self.shape}"
            raise ValueError(msg)
        self.pc = _pyproj(crs)
        self.extent = _extent(self.transform, self.shape)
        self.decimation = _decimation(self.shape)
        self.fig = Figure(figsize=figsize, dpi=dpi)
        FigureCanvasAgg(self.fig)
        self.ax = self.fig.add_axes(_MAP_RECT)
        self.ax.set_facecolor("#ffffff")
        self.fig.text(0.07, 0.955, title, fontsize=13, fontweight="bold", va="top")
        self.fig.text(0.07, 0.912, crs_label(self.pc), fontsize=8, color="#555555", va="top")
        self.handles_extra: list = []
        self.labels_extra: list[str] = []

    @property
    def geographic(self) -> bool:
        return bool(self.pc is not None and self.pc.is_geographic)

    def show(self, image, **kwargs):
        left, right, bottom, top = self.extent
        self.ax.imshow(
            image,
            extent=(left, right, bottom, top),
            origin="upper",
            interpolation="nearest",
            **kwargs,
        )
        self.ax.set_xlim(left, right)
        self.ax.set_ylim(bottom, top)
        if self.geographic:
            mid = math.radians((bottom + top) / 2.0)
            self.ax.set_aspect(1.0 / max(math.cos(mid), 0.05))
            self.ax.set_xlabel("Longitude (°)", fontsize=8)
            self.ax.set_ylabel("Latitude (°)", fontsize=8)
        else:
            self.ax.set_aspect("equal")
            unit = self._metres_per_unit()
            if unit is not None and abs(unit - 1.0) < 1e-12:
                fmt = FuncFormatter(lambda v, _: f"{v / 1000:g}")
                self.ax.xaxis.set_major_formatter(fmt)
                self.ax.yaxis.set_major_formatter(fmt)
                self.ax.set_xlabel("Easting (km)", fontsize=8)
                self.ax.set_ylabel("Northing (km)", fontsize=8)
        self.ax.tick_params(labelsize=7)
        self.ax.apply_aspect()
        self.box = self.ax.get_position()

    def _metres_per_unit(self) -> float | None:
        if self.pc is None or not self.pc.axis_info:
            return None
        return float(self.pc.axis_info[0].unit_conversion_factor)

    def overlays(self, boundaries, hotspots):
        bnd = _as_gdf(boundaries, self.pc)
        if bnd is not None:
            types = (
                bnd["boundary_type"].astype(str).str.lower().to_numpy()
                if "boundary_type" in bnd.columns
                else np.full(len(bnd), "boundary")
            )
            geoms = bnd.geometry.to_numpy()
            for btype in sorted(set(types)):
                lines = _line_coords(geoms[types == btype])
                if not lines:
                    continue
                colour = BOUNDARY_COLOURS.get(btype, _OTHER_BOUNDARY)
                self.ax.add_collection(
                    LineCollection(lines, colors="#ffffff", linewidths=3.2, zorder=3)
                )
                self.ax.add_collection(
                    LineCollection(lines, colors=colour, linewidths=1.6, zorder=4)
                )
                self.handles_extra.append(Line2D([], [], color=colour, lw=1.8))
                self.labels_extra.append(btype)
        spots = _as_gdf(hotspots, self.pc)
        if spots is not None:
            pts = spots.geometry.to_numpy()
            xy = np.array([(p.x, p.y) for p in pts if p is not None and not p.is_empty])
            if xy.size:
                self.ax.scatter(xy[:, 0], xy[:, 1], zorder=5, linewidths=1.0, **_HOTSPOT_STYLE)
                self.handles_extra.append(
                    Line2D(
                        [],
                        [],
                        linestyle="",
                        marker=_HOTSPOT_STYLE["marker"],
                        markerfacecolor=_HOTSPOT_STYLE["facecolor"],
                        markeredgecolor=_HOTSPOT_STYLE["edgecolor"],
                        markersize=8,
                    )
                )
                self.labels_extra.append("hotspot")
        # Keep the map extent: overlays outside the grid must not zoom out.
        left, right, bottom, top = self.extent
        self.ax.set_xlim(left, right)
        self.ax.set_ylim(bottom, top)

    def extra_legend(self):
        if self.handles_extra:
            self.fig.legend(
                self.handles_extra,
                self.labels_extra,
                loc="lower left",
                bbox_to_anchor=(self.box.x1 + 0.02, self.box.y0),
                fontsize=8,
                frameon=False,
                title="Overlays",
                title_fontsize=8,
            )

    def _geod(self):
        from pyproj import Geod

        ellps = self.pc.ellipsoid if self.pc is not None else None
        if ellps is not None and ellps.inverse_flattening:
            return Geod(a=ellps.semi_major_metre, rf=ellps.inverse_flattening)
        if ellps is not None:
            return Geod(a=ellps.semi_major_metre, b=ellps.semi_minor_metre)
        return Geod(ellps="WGS84")

    def _km_per_unit(self, x0: float, y0: float, dx: float) -> float | None:
        """Ground kilometres per map unit along the bar (x direction) at (x0, y0).

        Geographic grids: the length of a degree of longitude on the bar's own
        parallel. Projected grids: the geodesic length of a probe segment along
        the bar divided by its map length, so the bar is true where it is drawn
        even where the projection's scale differs from nominal (e.g. Mercator);
        if the CRS cannot be transformed, the nominal linear unit is used.
        """
        if self.geographic:
            _, _, metres = self._geod().inv(x0, y0, x0 + 1.0, y0)
            return metres / 1000.0 if metres > 0 else None
        unit = self._metres_per_unit()
        try:
            from pyproj import Transformer

            to_geo = Transformer.from_crs(self.pc, self.pc.geodetic_crs, always_xy=True)
            (lon0, lon1), (lat0, lat1) = to_geo.transform([x0, x0 + dx], [y0, y0])
            _, _, metres = self._geod().inv(lon0, lat0, lon1, lat1)
            if math.isfinite(metres) and metres > 0:
                return metres / 1000.0 / dx
        except Exception:  # noqa: BLE001 - fall back to the nominal unit
            pass
        return unit / 1000.0 if unit else None

    def scale_bar(self) -> float:
        """Draw a two-segment scale bar in the lower left; return its length in km."""
        left, right, bottom, top = self.extent
        x0 = left + 0.05 * (right - left)
        y0 = bottom + 0.06 * (top - bottom)
        km_per_unit = self._km_per_unit(x0, y0, 0.25 * (right - left))
        if km_per_unit is None or not km_per_unit > 0:
            return 0.0
        length_km = nice_length(0.25 * (right - left) * km_per_unit)
        if length_km <= 0:
            return 0.0
        length = length_km / km_per_unit
        height = 0.012 * (top - bottom)
        half = length / 2.0
        for i, colour in enumerate(("#000000", "#ffffff")):
            self.ax.add_patch(
                Rectangle(
                    (x0 + i * half, y0),
                    half,
                    height,
                    facecolor=colour,
                    edgecolor="#000000",
                    linewidth=0.8,
                    zorder=6,
                )
            )
        self.ax.text(
            x0 + half,
            y0 + 2.2 * height,
            f"{length_km:g} km",
            ha="center",
            va="bottom",
            fontsize=8,
            zorder=6,
            bbox={"facecolor": "#ffffff", "edgecolor": "none", "alpha": 0.7, "pad": 1.0},
        )
        return length_km

    def north_arrow(self) -> tuple[str, float]:
        left, right, bottom, top = self.extent
        angle = north_angle(self.pc, (left + right) / 2.0, (bottom + top) / 2.0)
        kind = "true north" if angle is not None else "grid north"
        angle = 0.0 if angle is None else angle
        # Equal aspect (projected) or meridians vertical (geographic): the data-space
        # direction is the on-screen direction.
        tip = (0.93, 0.93)
        length = 26.0
        sx, sy = math.sin(math.radians(angle)), math.cos(math.radians(angle))
        self.ax.annotate(
            "",
            xy=tip,
            xycoords="axes fraction",
            xytext=(-length * sx, -length * sy),
            textcoords="offset points",
            arrowprops={"arrowstyle": "-|>", "color": "#000000", "lw": 1.5},
            zorder=7,
        )
        self.ax.annotate(
            "N",
            xy=tip,
            xycoords="axes fraction",
            xytext=(7 * sx, 7 * sy),
            textcoords="offset points",
            ha="center",
            va="center",
            fontsize=9,
            fontweight="bold",
            zorder=7,
        )
        if kind == "grid north":
            self.ax.annotate(
                "grid north",
                xy=tip,
                xycoords="axes fraction",
                xytext=(0, -length - 8),
                textcoords="offset points",
                ha="center",
                va="top",
                fontsize=6,
                zorder=7,
            )
        return kind, angle

    def footnote(self, text: str | None):
        if text:
            # Wrapped here by character count: matplotlib's own wrapping measures the line
            # word by word (about a second of a run's 18 quick-looks).
            width = max(40, int(_FOOTNOTE_CHARS_PER_INCH * self.fig.get_figwidth()))
            self.fig.text(
                0.01, 0.012, textwrap.fill(text, width), fontsize=6.5, color="#333333", va="bottom"
            )

    def save(self, path, title: str, footnote: str | None) -> tuple[Path, tuple[int, int]]:
        path = Path(path)
        path.parent.mkdir(parents=True, exist_ok=True)
        meta = {"Title": title, "Software": "geomelt"}
        if footnote:
            meta["Description"] = footnote
        with atomic_path(path) as tmp:
            self.fig.savefig(tmp, format="png", dpi=self.fig.dpi, metadata=meta)
        w, h = self.fig.canvas.get_width_height()
        return path, (int(w), int(h))


# --------------------------------------------------------------------------- public


def _finish(m: _Map, path, title, legend, boundaries, hotspots, footnote) -> QuicklookInfo:
    """Overlays, scale bar, north arrow and footnote; save the figure and describe it."""
    m.overlays(boundaries, hotspots)
    m.extra_legend()
    km = m.scale_bar()
    north, angle = m.north_arrow()
    m.footnote(footnote)
    out, size = m.save(path, title, footnote)
    return QuicklookInfo(
        path=out,
        size_px=size,
        legend_labels=tuple(t.get_text() for t in legend.get_texts()) if legend else (),
        scale_bar_km=km,
        north=north,
        north_angle_deg=angle,
        decimation=m.decimation,
    )


def class_map_png(
    path,
    array: np.ndarray,
    transform,
    crs,
    scheme: ClassScheme,
    title: str,
    boundaries=None,
    hotspots=None,
    *,
    footnote: str | None = None,
    nodata: int | None = None,
    figsize: Sequence[float] = (10.0, 7.5),
    dpi: int = 100,
) -> QuicklookInfo:
    """Quick-look PNG of a class raster with a legend of the classes present.

    Parameters
    ----------
    path : path-like
        Output PNG.
    array : 2-D integer array
        Class codes; ``nodata`` (default ``scheme.nodata``) is transparent.
    transform, crs
        Grid transform (no rotation) and CRS.
    scheme : ClassScheme
        Colours and labels (codes not in the scheme are drawn grey).
    title : str
        Map title.
    boundaries : GeoDataFrame, optional
        Lines with a ``boundary_type`` column, coloured by type.
    hotspots : GeoDataFrame, optional
        Points drawn as markers.
    footnote : str, optional
        Text printed under the map (e.g. the screening caution).
    figsize, dpi
        Figure size in inches and resolution; the PNG is
        ``figsize * dpi`` pixels.
    """
    arr = np.asarray(array)
    if arr.dtype.kind not in "ui":
        msg = f"class array must hold integer codes, got {arr.dtype}"
        raise ValueError(msg)
    nodata = scheme.nodata if nodata is None else int(nodata)
    m = _Map(arr, transform, crs, title, tuple(figsize), dpi)
    small = _orient(_decimate_classes(arr, m.decimation), m.transform)

    codes = np.unique(small)
    codes = [int(c) for c in codes if c != nodata]
    by_code = scheme.by_code()
    lut_size = max([255, nodata, *codes]) + 1
    lut = np.zeros((lut_size, 4), dtype=np.uint8)
    for c in codes:
        lut[c] = by_code[c].rgba if c in by_code else _UNKNOWN_CLASS_RGBA
    if 0 <= nodata < lut_size:
        lut[nodata] = (0, 0, 0, 0)
    m.show(lut[np.clip(small, 0, lut_size - 1)])

    handles = [
        Patch(
            facecolor=np.array(lut[c]) / 255.0,
            edgecolor="#444444",
            linewidth=0.5,
        )
        for c in codes
    ]
    labels = [by_code[c].label if c in by_code else f"code {c}" for c in codes]
    legend = m.fig.legend(
        handles,
        labels,
        loc="upper left",
        bbox_to_anchor=(m.box.x1 + 0.02, m.box.y1),
        fontsize=8,
        frameon=False,
        title=scheme.title,
        title_fontsize=9,
    )
    return _finish(m, path, title, legend, boundaries, hotspots, footnote)


def continuous_map_png(
    path,
    array: np.ndarray,
    transform,
    crs,
    title: str,
    unit: str,
    cmap: str = "viridis",
    boundaries=None,
    hotspots=None,
    *,
    footnote: str | None = None,
    nodata: float | None = None,
    vmin: float | None = None,
    vmax: float | None = None,
    figsize: Sequence[float] = (10.0, 7.5),
    dpi: int = 100,
) -> QuicklookInfo:
    """Quick-look PNG of a continuous raster with a colour bar labelled with ``unit``.

    NaN and ``nodata`` cells are transparent. The colour range defaults to
    the data's minimum and maximum. Use a perceptually uniform colour map
    (``viridis``, ``cividis``, ``magma``, ...). Other parameters as in
    :func:`class_map_png`.
    """
    import matplotlib

    arr = np.asarray(array, dtype=np.float64)
    if nodata is not None and np.isfinite(nodata):
        arr = np.where(arr == nodata, np.nan, arr)
    m = _Map(arr, transform, crs, title, tuple(figsize), dpi)
    small = _orient(_decimate_mean(arr, m.decimation), m.transform)
    finite = small[np.isfinite(small)]
    lo = float(finite.min()) if vmin is None and finite.size else vmin
    hi = float(finite.max()) if vmax is None and finite.size else vmax
    lo = 0.0 if lo is None else lo
    hi = 1.0 if hi is None else hi
    if hi <= lo:
        hi = lo + (abs(lo) * 1e-6 or 1.0)
    colour_map = matplotlib.colormaps[cmap].with_extremes(bad=(0, 0, 0, 0))
    norm = Normalize(vmin=lo, vmax=hi)
    # Coloured here, as bytes: handed floats, matplotlib resamples and colours them in
    # float64 copies of the figure's size (about 30 MiB more at the peak of a run).
    m.show(colour_map(norm(np.ma.masked_invalid(small)), bytes=True))
    box = m.box
    cax = m.fig.add_axes((box.x1 + 0.03, box.y0 + 0.4 * box.height, 0.022, 0.6 * box.height))
    bar = m.fig.colorbar(ScalarMappable(norm=norm, cmap=colour_map), cax=cax)
    bar.set_label(unit, fontsize=9)
    bar.ax.tick_params(labelsize=7)
    return _finish(m, path, title, None, boundaries, hotspots, footnote)


def place_labels(
    points: Sequence[tuple[float, float]], spacing: float, y_scale: float = 1.0
) -> list[tuple[float, float]]:
    """Positions for labels that must not cover one another, taken in order.

    A label goes on its point unless that is closer than ``spacing`` to a label
    already placed; then it goes to the first free place on rings of eight
    positions (radius 1, 2, 3 x ``spacing``, starting straight up) around its point,
    or on its point when none is free.

    Parameters
    ----------
    points : sequence of (x, y)
        Anchor of each label, map coordinates, most important first.
    spacing : float
        Least distance between label centres, in x units.
    y_scale : float
        On-screen length of one y unit in x units (the axes' aspect ratio; 1 on a
        projected map, ``1 / cos(latitude)`` on a geographic one).
    """
    placed: list[tuple[float, float]] = []

    def free(x: float, y: float) -> bool:
        return all(math.hypot(x - px, (y - py) * y_scale) >= spacing for px, py in placed)

    for x, y in points:
        spot = (x, y)
        if not free(x, y):
            rings = [
                (x + r * spacing * math.sin(a), y + r * spacing * math.cos(a) / y_scale)
                for r in (1, 2, 3)
                for a in (k * math.pi / 4.0 for k in range(8))
            ]
            spot = next(((cx, cy) for cx, cy in rings if free(cx, cy)), spot)
        placed.append(spot)
    return placed


def prospects_map_png(
    path,
    setting: np.ndarray,
    transform,
    crs,
    prospects,
    colours: Mapping[str, str],
    titles: Mapping[str, str],
    boundaries=None,
    hotspots=None,
    *,
    footnote: str | None = None,
    label_top: int = 15,
    figsize: Sequence[float] = (10.0, 7.5),
    dpi: int = 100,
) -> QuicklookInfo:
    """Quick-look PNG of the ranked prospects over a faded setting map.

    Parameters
    ----------
    setting : 2-D integer array
        Setting class codes (:data:`geomelt.classes.SETTING`), drawn faded as context.
    prospects : GeoDataFrame
        The ``prospects`` layer (``screen``, ``rank``, polygons).
    colours, titles : mapping of screen key to str
        Outline colour and legend title of each screen.
    label_top : int
        Prospects ranked up to this are labelled with their rank.

    Other parameters as in :func:`class_map_png`.
    """
    from geomelt.classes import SETTING

    arr = np.asarray(setting)
    m = _Map(arr, transform, crs, "Ranked prospects", tuple(figsize), dpi)
    small = _orient(_decimate_classes(arr, m.decimation), m.transform)
    lut = np.zeros((256, 4), dtype=np.uint8)
    for entry in SETTING.entries:
        r, g, b, _ = entry.rgba
        lut[entry.code] = (r, g, b, 70)  # faded context
    m.show(lut[np.clip(small, 0, 255)])
    frame = _as_gdf(prospects, m.pc)
    handles, labels = [], []
    label_positions: list[tuple[float, float]] = []
    if frame is not None:
        import shapely

        for key in colours:
            part = frame[frame["screen"] == key]
            if part.empty:
                continue
            rings = []
            for geom in part.geometry:
                for poly in shapely.get_parts(geom):
                    rings.append(np.asarray(poly.exterior.coords)[:, :2])
            colour = colours[key]
            m.ax.add_collection(
                PolyCollection(
                    rings, facecolors=colour + "40", edgecolors=colour, linewidths=1.3, zorder=2
                )
            )
            handles.append(Patch(facecolor=colour + "40", edgecolor=colour, linewidth=1.3))
            labels.append(f"{titles.get(key, key)} ({len(part)})")
        top = frame[frame["rank"] <= label_top].sort_values("rank")
        anchors = [(p.x, p.y) for p in top.geometry.representative_point()]
        left, right, bottom, up = m.extent
        y_scale = 1.0
        if m.geographic:
            y_scale = 1.0 / max(math.cos(math.radians((bottom + up) / 2.0)), 0.05)
        spacing = _LABEL_SPACING * max(right - left, (up - bottom) * y_scale)
        label_positions = place_labels(anchors, spacing, y_scale)
        for rank, anchor, spot in zip(top["rank"], anchors, label_positions, strict=True):
            moved = spot != anchor
            m.ax.annotate(
                str(int(rank)),
                anchor,
                xytext=spot,
                textcoords="data",
                fontsize=7,
                fontweight="bold",
                ha="center",
                va="center",
                zorder=6,
                bbox={"boxstyle": "circle,pad=0.15", "fc": "white", "ec": "#333333", "lw": 0.6},
                arrowprops={"arrowstyle": "-", "color": "#333333", "lw": 0.6} if moved else None,
            )
    legend = m.fig.legend(
        handles,
        labels,
        loc="upper left",
        bbox_to_anchor=(m.box.x1 + 0.02, m.box.y1),
        fontsize=8,
        frameon=False,
        title="Prospects by screen (count)",
        title_fontsize=9,
    )
    info = _finish(m, path, "Ranked prospects", legend, boundaries, hotspots, footnote)
    return replace(info, label_positions=tuple(label_positions))
