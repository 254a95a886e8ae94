"""Products made from finished rasters: setting polygons, echoed boundaries, quick-look maps.

They run after the window loop, on rasters read reduced (overviews) so their
memory does not grow with the grid: polygons and maps are regional overviews,
the GeoTIFFs keep full resolution.
"""

from __future__ import annotations

import gc
import logging
import os
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
from pyproj import Geod

import geomelt
from geomelt.classes import MAGMA_TYPE, MELTING_MECHANISM, SCHEMES, SETTING
from geomelt.io.geopackage import GPKG_DATASET_OPTIONS
from geomelt.io.polygons import class_polygons, zonal_summary
from geomelt.io.rasters import read_reduced
from geomelt.io.styles import LayerStyle, style_class_layer, write_layer_styles

__all__ = [
    "POLYGON_MAX_CELLS",
    "QUICKLOOK_CONTINUOUS",
    "PROSPECT_COLOURS",
    "boundaries_with_production",
    "style_prospects_layer",
    "write_boundaries_layer",
    "write_quicklooks",
    "write_setting_polygons",
]

log = logging.getLogger(__name__)

QUICKLOOK_MAX_CELLS = 600
"""Quick-looks are drawn from rasters reduced to at most this many cells a side: the map
takes 600 x 555 pixels of the 1000 x 750 figure (``quicklook._MAP_RECT``), so finer reads
add memory (about 35 MiB more at 1000 cells), not detail."""
POLYGON_MAX_CELLS = 1500
"""Setting polygons are traced on the setting raster reduced to at most this many cells a side."""
POLYGON_MIN_CELLS = 8
"""Regions smaller than this many (reduced) cells are merged into a neighbour (speckle removal)."""
POLYGON_SIMPLIFY_CELLS = 0.5
"""Coverage simplification tolerance, in (reduced) cells."""

QUICKLOOK_CONTINUOUS = (
    ("lab_depth_km", "Thermal lithosphere base", "km", "viridis_r"),
    ("moho_temperature_c", "Moho temperature", "degC", "inferno"),
    ("melt_thickness_km", "Decompression melt column", "km", "magma"),
    ("wedge_melt_fraction", "Flux melt fraction of the mantle wedge", "1", "magma"),
    ("crustal_melt_fraction", "Crustal melt fraction", "1", "magma"),
    ("melt_production_m3_km2_yr", "Melt production rate density", "m3 km-2 yr-1", "magma"),
    ("screening_temperature_c", "Temperature at the geothermal screening depth", "degC", "inferno"),
    ("distance_to_melt_km", "Distance to the nearest predicted melt", "km", "viridis"),
    ("heat_source_score", "Geothermal heat-source score", "1", "YlOrRd"),
    ("porphyry_cu_au_mo_score", "Porphyry Cu-Au-Mo affinity score", "1", "YlOrRd"),
    ("epithermal_au_ag_score", "Epithermal Au-Ag affinity score", "1", "YlOrRd"),
    ("magmatic_ni_cu_pge_score", "Magmatic Ni-Cu-PGE affinity score", "1", "YlOrRd"),
    ("granite_sn_w_li_score", "Granite-related Sn-W-Li affinity score", "1", "YlOrRd"),
    ("vms_score", "Volcanogenic massive sulfide affinity score", "1", "YlOrRd"),
)
"""Continuous outputs that get a quick-look map: (layer, title, unit, colour map)."""

_GEOD = Geod(ellps="WGS84")


def write_setting_polygons(gpkg_path: Path, out_dir: Path) -> int:
    """Vectorise ``setting.tif`` into the ``settings`` layer of ``gpkg_path``.

    Each polygon carries its class, area in km2 (equal-area), the dominant
    melting mechanism and magma type, and the mean melt thickness. Returns the
    number of polygons.
    """
    setting, transform, factor = read_reduced(out_dir / "setting.tif", POLYGON_MAX_CELLS, True)
    import rasterio

    with rasterio.open(out_dir / "setting.tif") as ds:
        crs = ds.crs
        cell = abs(ds.transform.a) * factor
    polys = class_polygons(
        setting,
        transform,
        crs,
        SETTING,
        sieve_cells=POLYGON_MIN_CELLS,
        simplify_tolerance=POLYGON_SIMPLIFY_CELLS * cell,
    )
    rasters = {
        "melting_mechanism": read_reduced(
            out_dir / "melting_mechanism.tif", POLYGON_MAX_CELLS, True
        )[0],
        "magma_type": read_reduced(out_dir / "magma_type.tif", POLYGON_MAX_CELLS, True)[0],
        "melt_thickness_km": read_reduced(out_dir / "melt_thickness_km.tif", POLYGON_MAX_CELLS)[0],
    }
    polys = zonal_summary(polys, rasters, transform)
    for name, scheme in (("melting_mechanism", MELTING_MECHANISM), ("magma_type", MAGMA_TYPE)):
        labels = scheme.labels()
        polys[f"dominant_{name}_label"] = [
            labels.get(int(c), "nodata") for c in polys[f"dominant_{name}"]
        ]
    polys = polys.rename(columns={"class_code": "setting_code", "class_label": "setting"})
    polys = polys.drop(columns=["class_key"], errors="ignore")
    polys = polys.sort_values("area_km2", ascending=False).reset_index(drop=True)
    polys.insert(0, "polygon_id", np.arange(1, len(polys) + 1, dtype=np.int32))
    polys.to_file(
        gpkg_path,
        layer="settings",
        driver="GPKG",
        engine="pyogrio",
        dataset_options=GPKG_DATASET_OPTIONS,
        layer_options={
            "DESCRIPTION": "Tectonic-magmatic setting polygons (screening estimate)",
            "IDENTIFIER": "settings",
            "SPATIAL_INDEX": "YES",
        },
    )
    style_class_layer(gpkg_path, "settings", SETTING, field="setting_code")
    return len(polys)


def boundaries_with_production(
    boundaries: gpd.GeoDataFrame, segment_production_km3_yr: np.ndarray | None = None
) -> gpd.GeoDataFrame:
    """The plate boundaries with their geodesic length and the melt each line makes.

    Columns added: ``boundary_id`` (1-based), ``length_km`` (WGS84 geodesic
    length), and, when ``segment_production_km3_yr`` is given (one value per row,
    from :class:`geomelt.pipeline.summaries.SegmentTotals`),
    ``melt_production_km3_yr`` (melt made by the cells credited to the line) and
    ``melt_production_km3_km_myr`` (the same per km of line per Myr, the unit of
    arc and ridge budgets in the literature). Lines of types that make no melt of
    their own (collision, transform) get nodata (NaN) there.
    """
    frame = boundaries.copy()
    if len(frame):
        lonlat = frame.to_crs("EPSG:4326")
        frame["length_km"] = [
            _GEOD.geometry_length(g) / 1000.0 if g is not None and not g.is_empty else 0.0
            for g in lonlat.geometry
        ]
    else:
        frame["length_km"] = pd.Series(dtype=float)
    if segment_production_km3_yr is not None:
        from geomelt.pipeline.summaries import SEGMENT_PRODUCTION

        producing = frame["boundary_type"].isin([t for t, _ in SEGMENT_PRODUCTION]).to_numpy()
        km3_yr = np.asarray(segment_production_km3_yr, dtype=np.float64)[: len(frame)]
        length = frame["length_km"].to_numpy(dtype=np.float64)
        with np.errstate(divide="ignore", invalid="ignore"):
            per_km_myr = np.where(length > 0, km3_yr / length * 1.0e6, np.nan)
        frame["melt_production_km3_yr"] = np.where(producing, km3_yr, np.nan)
        frame["melt_production_km3_km_myr"] = np.where(producing, per_km_myr, np.nan)
    frame.insert(0, "boundary_id", np.arange(1, len(frame) + 1, dtype=np.int32))
    return frame


def write_boundaries_layer(
    gpkg_path: Path,
    boundaries: gpd.GeoDataFrame,
    segment_production_km3_yr: np.ndarray | None = None,
) -> int:
    """Echo the plate boundaries with derived attributes (:func:`boundaries_with_production`)."""
    frame = boundaries_with_production(boundaries, segment_production_km3_yr)
    pyogrio.write_dataframe(
        frame,
        gpkg_path,
        layer="plate_boundaries",
        driver="GPKG",
        dataset_options=GPKG_DATASET_OPTIONS,
        layer_options={
            "DESCRIPTION": "Input plate boundaries with derived attributes",
            "IDENTIFIER": "plate_boundaries",
        },
    )
    if len(frame):
        qml, sld = _boundary_styles()
        write_layer_styles(
            gpkg_path,
            [LayerStyle("plate_boundaries", "geomelt boundary types", qml, sld)],
        )
    return len(frame)


_BOUNDARY_COLOURS = {
    "ridge": "#1f5fa8",
    "rift": "#2e9e8f",
    "subduction": "#a3361f",
    "collision": "#5c3d2e",
    "transform": "#8fb3d9",
}


def _boundary_styles() -> tuple[str, str]:
    """Categorised line styles (QML for QGIS, SLD 1.0) by boundary_type."""
    return _categorised_styles("plate_boundaries", "boundary_type", _BOUNDARY_COLOURS, "line")


PROSPECT_COLOURS = {
    "geothermal_heat_source": "#d7301f",
    "porphyry_cu_au_mo": "#8c510a",
    "epithermal_au_ag": "#dfc27d",
    "magmatic_ni_cu_pge": "#01665e",
    "granite_sn_w_li": "#762a83",
    "vms": "#2166ac",
}
"""Outline colour of each screen's prospects in the layer style (fill: the same, 25 % opaque)."""


def _categorised_styles(layer: str, field: str, colours: dict, geometry: str) -> tuple[str, str]:
    """Categorised styles (QML for QGIS, SLD 1.0) of ``layer`` by the text ``field``.

    ``geometry`` is ``"line"`` (coloured lines) or ``"polygon"`` (a translucent fill with
    a solid outline of the colour, labelled by ``rank`` in QGIS).
    """
    import xml.etree.ElementTree as ET

    def rgb(colour: str) -> str:
        return ",".join(str(int(colour[k : k + 2], 16)) for k in (1, 3, 5))

    q = ET.Element("qgis", version="3.22.0", styleCategories="Symbology|Labeling")
    r = ET.SubElement(q, "renderer-v2", type="categorizedSymbol", attr=field)
    cats = ET.SubElement(r, "categories")
    syms = ET.SubElement(r, "symbols")
    for i, (name, colour) in enumerate(colours.items()):
        ET.SubElement(cats, "category", value=name, label=name, symbol=str(i), render="true")
        if geometry == "line":
            s = ET.SubElement(syms, "symbol", type="line", name=str(i), alpha="1")
            lyr = ET.SubElement(s, "layer", {"class": "SimpleLine"})
            props = (("line_color", rgb(colour) + ",255"), ("line_width", "0.8"))
        else:
            s = ET.SubElement(syms, "symbol", type="fill", name=str(i), alpha="1")
            lyr = ET.SubElement(s, "layer", {"class": "SimpleFill"})
            props = (
                ("color", rgb(colour) + ",64"),
                ("outline_color", rgb(colour) + ",255"),
                ("outline_width", "0.6"),
                ("style", "solid"),
            )
        for key, value in props:
            ET.SubElement(lyr, "prop", k=key, v=value)
    if geometry == "polygon":
        labeling = ET.SubElement(q, "labeling", type="simple")
        settings = ET.SubElement(labeling, "settings")
        ET.SubElement(settings, "text-style", fieldName="rank", fontSize="9", textColor="0,0,0,255")
    qml = ET.tostring(q, encoding="unicode")
    ns = "http://www.opengis.net/sld"
    ogc = "http://www.opengis.net/ogc"
    sld = ET.Element(f"{{{ns}}}StyledLayerDescriptor", version="1.0.0", attrib={})
    nl = ET.SubElement(sld, f"{{{ns}}}NamedLayer")
    ET.SubElement(nl, f"{{{ns}}}Name").text = layer
    us = ET.SubElement(nl, f"{{{ns}}}UserStyle")
    fts = ET.SubElement(us, f"{{{ns}}}FeatureTypeStyle")
    for name, colour in colours.items():
        rule = ET.SubElement(fts, f"{{{ns}}}Rule")
        ET.SubElement(rule, f"{{{ns}}}Name").text = name
        flt = ET.SubElement(rule, f"{{{ogc}}}Filter")
        eq = ET.SubElement(flt, f"{{{ogc}}}PropertyIsEqualTo")
        ET.SubElement(eq, f"{{{ogc}}}PropertyName").text = field
        ET.SubElement(eq, f"{{{ogc}}}Literal").text = name
        if geometry == "line":
            ls = ET.SubElement(rule, f"{{{ns}}}LineSymbolizer")
            st = ET.SubElement(ls, f"{{{ns}}}Stroke")
            ET.SubElement(st, f"{{{ns}}}CssParameter", name="stroke").text = colour
            ET.SubElement(st, f"{{{ns}}}CssParameter", name="stroke-width").text = "2"
        else:
            ps = ET.SubElement(rule, f"{{{ns}}}PolygonSymbolizer")
            fill = ET.SubElement(ps, f"{{{ns}}}Fill")
            ET.SubElement(fill, f"{{{ns}}}CssParameter", name="fill").text = colour
            ET.SubElement(fill, f"{{{ns}}}CssParameter", name="fill-opacity").text = "0.25"
            st = ET.SubElement(ps, f"{{{ns}}}Stroke")
            ET.SubElement(st, f"{{{ns}}}CssParameter", name="stroke").text = colour
            ET.SubElement(st, f"{{{ns}}}CssParameter", name="stroke-width").text = "1.5"
    return qml, ET.tostring(sld, encoding="unicode")


def style_prospects_layer(gpkg_path: Path) -> None:
    """Register the categorised style of the ``prospects`` layer (by screen) in ``gpkg_path``."""
    qml, sld = _categorised_styles("prospects", "screen", PROSPECT_COLOURS, "polygon")
    write_layer_styles(
        gpkg_path, [LayerStyle("prospects", "geomelt prospects by screen", qml, sld)]
    )


def write_quicklooks(
    staging: Path, out_dir: Path, boundaries=None, hotspots=None, prospects=None
) -> list[tuple[Path, Path]]:
    """PNG quick-looks of the class maps and key continuous maps.

    Written into ``staging/quicklook``; returns (staged, final) path pairs for
    the caller to move into ``out_dir/quicklook``.
    """
    # matplotlib is imported here, not with the module: a run holds it only after its
    # windows are done, when their buffers have been freed (the import alone is ~30 MiB
    # resident, measured with matplotlib 3.11).
    import geomelt.io.quicklook  # noqa: F401 - loaded before the freeze below

    qdir = staging / "quicklook"
    qdir.mkdir(exist_ok=True)
    # Each figure is freed by a garbage collection (matplotlib figures hold reference
    # cycles). What lives already is frozen out of those collections, so each scans only
    # what the figure made (a full collection over a run's objects took ~80 ms per map).
    # Left alone when the caller froze objects itself (unfreeze would release those too).
    freeze = gc.get_freeze_count() == 0
    if freeze:
        gc.collect()
        gc.freeze()
    try:
        return _draw_quicklooks(qdir, out_dir, boundaries, hotspots, prospects)
    finally:
        if freeze:
            gc.unfreeze()


def _draw_quicklooks(qdir: Path, out_dir: Path, boundaries, hotspots, prospects):
    """Draw each quick-look of :func:`write_quicklooks` into ``qdir``; (staged, final) pairs."""
    import rasterio

    from geomelt.io.quicklook import class_map_png, continuous_map_png, prospects_map_png

    pairs = []
    footnote = geomelt.CAUTION
    for name in ("setting", "melting_mechanism", "magma_type"):
        tif = out_dir / f"{name}.tif"
        if not tif.exists():
            continue
        arr, tr, _ = read_reduced(tif, QUICKLOOK_MAX_CELLS, categorical=True)
        with rasterio.open(tif) as ds:
            crs = ds.crs
        scheme = SCHEMES[name]
        class_map_png(
            qdir / f"{name}.png",
            arr,
            tr,
            crs,
            scheme,
            scheme.title,
            boundaries=boundaries,
            hotspots=hotspots,
            footnote=footnote,
        )
        pairs.append((qdir / f"{name}.png", out_dir / "quicklook" / f"{name}.png"))
        del arr
        gc.collect()  # matplotlib figures hold reference cycles; free each before the next
    for name, title, unit, cmap in QUICKLOOK_CONTINUOUS:
        tif = out_dir / f"{name}.tif"
        if not tif.exists():
            continue
        arr, tr, _ = read_reduced(tif, QUICKLOOK_MAX_CELLS)
        with rasterio.open(tif) as ds:
            crs = ds.crs
        continuous_map_png(
            qdir / f"{name}.png",
            arr,
            tr,
            crs,
            title,
            unit,
            cmap=cmap,
            boundaries=boundaries,
            hotspots=hotspots,
            footnote=footnote,
        )
        pairs.append((qdir / f"{name}.png", out_dir / "quicklook" / f"{name}.png"))
        del arr
        gc.collect()  # matplotlib figures hold reference cycles; free each before the next
    if prospects is not None and (out_dir / "setting.tif").exists():
        from geomelt.io.prospects import standard_screens

        arr, tr, _ = read_reduced(out_dir / "setting.tif", QUICKLOOK_MAX_CELLS, categorical=True)
        with rasterio.open(out_dir / "setting.tif") as ds:
            crs = ds.crs
        titles = {s.key: s.title for s in standard_screens()}
        prospects_map_png(
            qdir / "prospects.png",
            arr,
            tr,
            crs,
            prospects,
            PROSPECT_COLOURS,
            titles,
            boundaries=boundaries,
            hotspots=hotspots,
            footnote=footnote,
        )
        pairs.append((qdir / "prospects.png", out_dir / "quicklook" / "prospects.png"))
    return pairs


def move_into_place(pairs: list[tuple[Path, Path]]) -> list[Path]:
    """Move staged files to their final names (creating folders)."""
    done = []
    for staged, final in pairs:
        final.parent.mkdir(parents=True, exist_ok=True)
        os.replace(staged, final)
        done.append(final)
    return done
