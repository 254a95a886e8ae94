"""Styling for geomelt's class outputs: raster sidecars and GeoPackage styles.

A finished uint8 class GeoTIFF already carries a colour table. This module adds
what desktop GIS need to show it as a labelled legend:

* ``<file>.tif.aux.xml``: GDAL PAM sidecar with category names (indexed by
  pixel value) and a thematic raster attribute table (value, label, RGBA).
* ``<basename>.qml``: QGIS style (QGIS's open XML format) with a paletted
  renderer that lists only the classes present, so the legend shows those
  classes rather than the 256 entries of a uint8 colour table. QGIS loads a
  ``.qml`` of the same base name automatically.
* ``<basename>.sld``: the same classes as OGC Styled Layer Descriptor 1.0
  (``RasterSymbolizer`` with a ``ColorMap``), the open standard that map
  servers read.

For polygon layers in a GeoPackage:

* :func:`vector_styles` renders a categorised QML and an SLD 1.0 document;
* :func:`write_layer_styles` stores them in a ``layer_styles`` table (a QGIS
  convention, not an OGC standard; QGIS applies the row marked
  ``useAsDefault`` when the layer is opened and ignores rows without QML);
* :func:`write_enum_constraints` records the class codes and labels with the
  GeoPackage Schema extension (``gpkg_schema``: ``gpkg_data_columns`` and
  ``gpkg_data_column_constraints``, constraint type ``enum``), which GDAL
  reports as a coded field domain and QGIS turns into a value map.

All SQL is parameterised; identifiers are constants of this module. Files are
written under a temporary name and moved into place with :func:`os.replace`.
"""

from __future__ import annotations

import os
import sqlite3
import uuid
import xml.etree.ElementTree as ET
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path

import numpy as np

from geomelt.classes import ClassEntry, ClassScheme

__all__ = [
    "QGIS_STYLE_VERSION",
    "LayerStyle",
    "atomic_path",
    "atomic_write_text",
    "codes_present",
    "qml_path_for",
    "raster_qml",
    "raster_sld",
    "sidecar_path_for",
    "sld_path_for",
    "style_class_layer",
    "vector_styles",
    "write_category_sidecar",
    "write_enum_constraints",
    "write_layer_styles",
    "write_qml",
    "write_raster_styles",
    "write_sld",
]

QGIS_STYLE_VERSION = "3.22.0"
"""QGIS version stamped on generated QML documents.

QGIS upgrades a style whose version is older than itself; an absent or
unparsable version is treated as very old and sent through every legacy
conversion, so a real version is always written.
"""

SLD_NS = "http://www.opengis.net/sld"
OGC_NS = "http://www.opengis.net/ogc"
XSI_NS = "http://www.w3.org/2001/XMLSchema-instance"
SLD_SCHEMA_LOCATION = f"{SLD_NS} http://schemas.opengis.net/sld/1.0.0/StyledLayerDescriptor.xsd"
# Serialise SLD with the default namespace and the conventional ogc/xsi prefixes.
ET.register_namespace("", SLD_NS)
ET.register_namespace("ogc", OGC_NS)
ET.register_namespace("xsi", XSI_NS)

# GDAL raster attribute table field types and usages (gdal.h: GDALRATFieldType and
# GDALRATFieldUsage): type 0 integer, 2 string; usage 5 = class value (min = max),
# 2 = name, 6..9 = red, green, blue, alpha.
_RAT_FIELDS = (
    ("Value", 0, 5),
    ("Class", 2, 2),
    ("Red", 0, 6),
    ("Green", 0, 7),
    ("Blue", 0, 8),
    ("Alpha", 0, 9),
)

_QML_DOCTYPE = "<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>"


# --------------------------------------------------------------------------- files


@contextmanager
def atomic_path(path) -> Iterator[Path]:
    """Yield a temporary path next to ``path``; move it onto ``path`` on success.

    The temporary file is in the same folder (same filesystem), so the final
    :func:`os.replace` is atomic: readers see the old file or the new one,
    never a partial one. On error the temporary file is removed.
    """
    path = Path(path)
    tmp = path.with_name(f".{path.name}.{uuid.uuid4().hex[:12]}.tmp")
    try:
        yield tmp
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


def atomic_write_text(path, text: str) -> Path:
    """Write UTF-8 text to ``path`` atomically and return the path."""
    path = Path(path)
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return path


def sidecar_path_for(tif_path) -> Path:
    """GDAL PAM sidecar of a raster: ``<file>.tif.aux.xml``."""
    p = Path(tif_path)
    return p.with_name(p.name + ".aux.xml")


def qml_path_for(tif_path) -> Path:
    """QGIS style next to a raster: ``<basename>.qml``."""
    return Path(tif_path).with_suffix(".qml")


def sld_path_for(path) -> Path:
    """SLD file for ``path``: the path itself if it ends in ``.sld``, else ``<basename>.sld``."""
    p = Path(path)
    return p if p.suffix.lower() == ".sld" else p.with_suffix(".sld")


def codes_present(tif_path, band: int = 1) -> list[int]:
    """Class codes present in an integer raster, read block by block (nodata excluded)."""
    import rasterio

    with rasterio.open(tif_path) as ds:
        if np.dtype(ds.dtypes[band - 1]).kind not in "ui":
            msg = f"{tif_path}: band {band} is {ds.dtypes[band - 1]}, not an integer class raster"
            raise ValueError(msg)
        nodata = ds.nodatavals[band - 1]
        seen: set[int] = set()
        for _, window in ds.block_windows(band):
            block = ds.read(band, window=window)
            if block.dtype == np.uint8:
                seen.update(np.flatnonzero(np.bincount(block.ravel(), minlength=256)).tolist())
            else:
                seen.update(np.unique(block).tolist())
    if nodata is not None:
        seen.discard(int(nodata))
    return sorted(int(c) for c in seen)


def _present_entries(scheme: ClassScheme, present_codes: Iterable[int] | None) -> list[ClassEntry]:
    """Scheme entries for the present codes (all entries when ``None``), by code."""
    by_code = scheme.by_code()
    if present_codes is None:
        return sorted(scheme.entries, key=lambda e: e.code)
    codes = sorted({int(c) for c in present_codes} - {int(scheme.nodata)})
    unknown = [c for c in codes if c not in by_code]
    if unknown:
        msg = (
            f"class codes {unknown} are not in the '{scheme.name}' scheme "
            f"(valid: {sorted(by_code)}); the raster and the scheme disagree"
        )
        raise ValueError(msg)
    return [by_code[c] for c in codes]


def _hex(rgba: tuple[int, int, int, int]) -> str:
    return "#{:02x}{:02x}{:02x}".format(*rgba[:3])


def _darker(rgba: tuple[int, int, int, int], factor: float = 0.6) -> tuple[int, int, int, int]:
    return (int(rgba[0] * factor), int(rgba[1] * factor), int(rgba[2] * factor), 255)


def _xml_text(root: ET.Element, doctype: str | None = None) -> str:
    ET.indent(root, space="  ")
    body = ET.tostring(root, encoding="unicode")
    head = '<?xml version="1.0" encoding="UTF-8"?>\n'
    if doctype:
        head += doctype + "\n"
    return head + body + "\n"


# --------------------------------------------------------------------------- PAM sidecar


def write_category_sidecar(tif_path, scheme: ClassScheme, band: int = 1) -> Path:
    """Write category names and a thematic attribute table to ``<file>.tif.aux.xml``.

    ``gdalinfo`` then lists "Categories" and QGIS uses the names as legend
    labels. If the sidecar exists (e.g. GDAL stored statistics in it), its
    other content is kept and only the category names and attribute table of
    ``band`` are replaced.

    Parameters
    ----------
    tif_path : path-like
        The class GeoTIFF (uint8, nodata ``scheme.nodata``).
    scheme : ClassScheme
        Codes, labels and colours; every class of the scheme is listed.
    band : int
        Band number (1-based).

    Returns
    -------
    Path
        The sidecar path.
    """
    aux = sidecar_path_for(tif_path)
    root = None
    if aux.exists():
        try:
            root = ET.parse(aux).getroot()
        except ET.ParseError:
            root = None
        if root is not None and root.tag != "PAMDataset":
            root = None
    if root is None:
        root = ET.Element("PAMDataset")
    band_el = next(
        (b for b in root.findall("PAMRasterBand") if b.get("band") == str(band)),
        None,
    )
    if band_el is None:
        band_el = ET.SubElement(root, "PAMRasterBand", band=str(band))
    for tag in ("CategoryNames", "GDALRasterAttributeTable"):
        for old in band_el.findall(tag):
            band_el.remove(old)

    names = ET.SubElement(band_el, "CategoryNames")
    for name in scheme.category_names():
        ET.SubElement(names, "Category").text = name

    rat = ET.SubElement(band_el, "GDALRasterAttributeTable", tableType="thematic")
    for i, (name, ftype, usage) in enumerate(_RAT_FIELDS):
        field = ET.SubElement(rat, "FieldDefn", index=str(i))
        ET.SubElement(field, "Name").text = name
        ET.SubElement(field, "Type").text = str(ftype)
        ET.SubElement(field, "Usage").text = str(usage)
    for i, entry in enumerate(sorted(scheme.entries, key=lambda e: e.code)):
        row = ET.SubElement(rat, "Row", index=str(i))
        for value in (entry.code, entry.label, *entry.rgba):
            ET.SubElement(row, "F").text = str(value)

    ET.indent(root, space="  ")
    return atomic_write_text(aux, ET.tostring(root, encoding="unicode") + "\n")


# --------------------------------------------------------------------------- QML


def _qml_root() -> ET.Element:
    return ET.Element("qgis", version=QGIS_STYLE_VERSION, styleCategories="Symbology")


def raster_qml(scheme: ClassScheme, present_codes: Iterable[int] | None, band: int = 1) -> str:
    """QGIS style text: paletted renderer with one entry per present class."""
    root = _qml_root()
    pipe = ET.SubElement(root, "pipe")
    renderer = ET.SubElement(
        pipe,
        "rasterrenderer",
        type="paletted",
        band=str(band),
        opacity="1",
        alphaBand="-1",
        nodataColor="",
    )
    ET.SubElement(renderer, "rasterTransparency")
    palette = ET.SubElement(renderer, "colorPalette")
    for e in _present_entries(scheme, present_codes):
        ET.SubElement(
            palette,
            "paletteEntry",
            value=str(e.code),
            color=_hex(e.rgba),
            alpha=str(e.rgba[3]),
            label=e.label,
        )
    ET.SubElement(pipe, "brightnesscontrast", brightness="0", contrast="0", gamma="1")
    ET.SubElement(pipe, "huesaturation", saturation="0", grayscaleMode="0", colorizeOn="0")
    # Nearest-neighbour display: never blend class codes.
    ET.SubElement(pipe, "rasterresampler", maxOversampling="2")
    ET.SubElement(root, "blendMode").text = "0"
    return _xml_text(root, _QML_DOCTYPE)


def write_qml(tif_path, scheme: ClassScheme, present_codes: Iterable[int], band: int = 1) -> Path:
    """Write ``<basename>.qml`` next to a class GeoTIFF (QGIS loads it automatically).

    Only ``present_codes`` (nodata excluded) are listed, so the QGIS legend
    shows the classes in the file rather than 256 colour-table entries.
    """
    return atomic_write_text(qml_path_for(tif_path), raster_qml(scheme, present_codes, band))


def _option(parent: ET.Element, name: str, value: str) -> None:
    ET.SubElement(parent, "Option", name=name, value=value, type="QString")


def _qml_fill_symbol(parent: ET.Element, name: str, rgba: tuple[int, int, int, int]) -> None:
    symbol = ET.SubElement(
        parent, "symbol", type="fill", name=name, alpha="1", clip_to_extent="1", force_rhr="0"
    )
    layer = ET.SubElement(
        symbol, "layer", {"class": "SimpleFill", "pass": "0", "enabled": "1", "locked": "0"}
    )
    props = {
        "border_width_map_unit_scale": "3x:0,0,0,0,0,0",
        "color": ",".join(str(v) for v in rgba),
        "joinstyle": "bevel",
        "offset": "0,0",
        "offset_unit": "MM",
        "outline_color": ",".join(str(v) for v in _darker(rgba)),
        "outline_style": "solid",
        "outline_width": "0.2",
        "outline_width_unit": "MM",
        "style": "solid",
    }
    # QGIS 3.x reads the <Option> map; older 3.x releases read <prop k v>. Write both.
    opts = ET.SubElement(layer, "Option", type="Map")
    for k, v in props.items():
        _option(opts, k, v)
    for k, v in props.items():
        ET.SubElement(layer, "prop", k=k, v=v)


def _vector_qml(entries: list[ClassEntry], field: str) -> str:
    root = _qml_root()
    renderer = ET.SubElement(
        root,
        "renderer-v2",
        type="categorizedSymbol",
        attr=field,
        symbollevels="0",
        enableorderby="0",
        forceraster="0",
    )
    cats = ET.SubElement(renderer, "categories")
    for i, e in enumerate(entries):
        ET.SubElement(
            cats, "category", value=str(e.code), symbol=str(i), label=e.label, render="true"
        )
    symbols = ET.SubElement(renderer, "symbols")
    for i, e in enumerate(entries):
        _qml_fill_symbol(symbols, str(i), e.rgba)
    ET.SubElement(renderer, "rotation")
    ET.SubElement(renderer, "sizescale")
    ET.SubElement(root, "blendMode").text = "0"
    ET.SubElement(root, "featureBlendMode").text = "0"
    ET.SubElement(root, "layerOpacity").text = "1"
    return _xml_text(root, _QML_DOCTYPE)


# --------------------------------------------------------------------------- SLD 1.0


def _sld_root(layer_name: str, title: str) -> tuple[ET.Element, ET.Element]:
    root = ET.Element(
        f"{{{SLD_NS}}}StyledLayerDescriptor",
        {"version": "1.0.0", f"{{{XSI_NS}}}schemaLocation": SLD_SCHEMA_LOCATION},
    )
    named = ET.SubElement(root, f"{{{SLD_NS}}}NamedLayer")
    ET.SubElement(named, f"{{{SLD_NS}}}Name").text = layer_name
    style = ET.SubElement(named, f"{{{SLD_NS}}}UserStyle")
    ET.SubElement(style, f"{{{SLD_NS}}}Name").text = layer_name
    ET.SubElement(style, f"{{{SLD_NS}}}Title").text = title
    fts = ET.SubElement(style, f"{{{SLD_NS}}}FeatureTypeStyle")
    return root, fts


def raster_sld(
    scheme: ClassScheme,
    present_codes: Iterable[int] | None,
    layer_name: str,
    colormap_type: str | None = "values",
) -> str:
    """OGC SLD 1.0 text: ``RasterSymbolizer`` whose ``ColorMap`` lists the present classes.

    ``ColorMap type="values"`` (exact value match) is a widely implemented
    extension of SLD 1.0 (map servers read it) but is not declared in the
    SLD 1.0.0 XML schema; pass ``colormap_type=None`` for a document that
    validates strictly. A reader without it interpolates a ramp between the
    entries, which still gives each integer class code its exact colour.
    """
    root, fts = _sld_root(layer_name, scheme.title)
    rule = ET.SubElement(fts, f"{{{SLD_NS}}}Rule")
    ET.SubElement(rule, f"{{{SLD_NS}}}Name").text = scheme.name
    ET.SubElement(rule, f"{{{SLD_NS}}}Title").text = scheme.title
    sym = ET.SubElement(rule, f"{{{SLD_NS}}}RasterSymbolizer")
    ET.SubElement(sym, f"{{{SLD_NS}}}Opacity").text = "1.0"
    cmap = ET.SubElement(sym, f"{{{SLD_NS}}}ColorMap")
    if colormap_type:
        cmap.set("type", colormap_type)
    for e in _present_entries(scheme, present_codes):
        ET.SubElement(
            cmap,
            f"{{{SLD_NS}}}ColorMapEntry",
            color=_hex(e.rgba),
            quantity=str(e.code),
            label=e.label,
            opacity=f"{e.rgba[3] / 255:.3g}",
        )
    return _xml_text(root)


def write_sld(
    path,
    scheme: ClassScheme,
    present_codes: Iterable[int],
    layer_name: str,
    colormap_type: str | None = "values",
) -> Path:
    """Write an OGC SLD 1.0 raster style as ``<basename>.sld`` (see :func:`raster_sld`).

    ``path`` may be the raster itself (``class.tif`` gives ``class.sld``) or a
    ``.sld`` path. QGIS does not load an ``.sld`` automatically; the ``.qml``
    is for QGIS, the ``.sld`` for map servers and other standard readers.
    """
    text = raster_sld(scheme, present_codes, layer_name, colormap_type)
    return atomic_write_text(sld_path_for(path), text)


def _vector_sld(entries: list[ClassEntry], scheme: ClassScheme, layer_name: str, field: str):
    root, fts = _sld_root(layer_name, scheme.title)
    for e in entries:
        rule = ET.SubElement(fts, f"{{{SLD_NS}}}Rule")
        ET.SubElement(rule, f"{{{SLD_NS}}}Name").text = e.key
        ET.SubElement(rule, f"{{{SLD_NS}}}Title").text = e.label
        flt = ET.SubElement(rule, f"{{{OGC_NS}}}Filter")
        eq = ET.SubElement(flt, f"{{{OGC_NS}}}PropertyIsEqualTo")
        ET.SubElement(eq, f"{{{OGC_NS}}}PropertyName").text = field
        ET.SubElement(eq, f"{{{OGC_NS}}}Literal").text = str(e.code)
        sym = ET.SubElement(rule, f"{{{SLD_NS}}}PolygonSymbolizer")
        fill = ET.SubElement(sym, f"{{{SLD_NS}}}Fill")
        ET.SubElement(fill, f"{{{SLD_NS}}}CssParameter", name="fill").text = _hex(e.rgba)
        ET.SubElement(
            fill, f"{{{SLD_NS}}}CssParameter", name="fill-opacity"
        ).text = f"{e.rgba[3] / 255:.3g}"
        stroke = ET.SubElement(sym, f"{{{SLD_NS}}}Stroke")
        ET.SubElement(stroke, f"{{{SLD_NS}}}CssParameter", name="stroke").text = _hex(
            _darker(e.rgba)
        )
        ET.SubElement(stroke, f"{{{SLD_NS}}}CssParameter", name="stroke-width").text = "0.5"
    return _xml_text(root)


def vector_styles(
    scheme: ClassScheme, present_codes: Iterable[int] | None, layer_name: str, field: str
) -> tuple[str, str]:
    """QML and SLD 1.0 texts for a polygon layer categorised by integer ``field``.

    Returns
    -------
    (qml_text, sld_text)
        QGIS ``categorizedSymbol`` renderer and an SLD with one rule per
        present class (``ogc:PropertyIsEqualTo`` on ``field``).
    """
    entries = _present_entries(scheme, present_codes)
    return _vector_qml(entries, field), _vector_sld(entries, scheme, layer_name, field)


def write_raster_styles(
    tif_path, scheme: ClassScheme, present_codes: Iterable[int] | None = None, layer_name=None
) -> dict[str, Path]:
    """All sidecars of a finished class GeoTIFF: ``.aux.xml``, ``.qml`` and ``.sld``.

    ``present_codes`` defaults to the codes found in the file (one pass over
    its blocks). Returns the written paths keyed ``"aux"``, ``"qml"``, ``"sld"``.
    """
    if present_codes is None:
        present_codes = codes_present(tif_path)
    present_codes = list(present_codes)
    return {
        "aux": write_category_sidecar(tif_path, scheme),
        "qml": write_qml(tif_path, scheme, present_codes),
        "sld": write_sld(tif_path, scheme, present_codes, layer_name or Path(tif_path).stem),
    }


# --------------------------------------------------------------------------- GeoPackage

_GPKG_APPLICATION_ID = 0x47504B47  # "GPKG"

_LAYER_STYLES_DDL = (
    "CREATE TABLE IF NOT EXISTS layer_styles ("
    "id INTEGER PRIMARY KEY AUTOINCREMENT NOT NULL, "
    "f_table_catalog TEXT(256), "
    "f_table_schema TEXT(256), "
    "f_table_name TEXT(256), "
    "f_geometry_column TEXT(256), "
    "styleName TEXT(30), "
    "styleQML TEXT, "
    "styleSLD TEXT, "
    "useAsDefault BOOLEAN, "
    "description TEXT, "
    "owner TEXT(30), "
    "ui TEXT(30), "
    "update_time DATETIME DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')))"
)

# GeoPackage 1.2.1, clause F.9 (Schema extension) and clause 2.1.6 (extensions table).
_GPKG_EXTENSIONS_DDL = (
    "CREATE TABLE IF NOT EXISTS gpkg_extensions ("
    "table_name TEXT, column_name TEXT, extension_name TEXT NOT NULL, "
    "definition TEXT NOT NULL, scope TEXT NOT NULL, "
    "CONSTRAINT ge_tce UNIQUE (table_name, column_name, extension_name))"
)
_GPKG_DATA_COLUMNS_DDL = (
    "CREATE TABLE IF NOT EXISTS gpkg_data_columns ("
    "table_name TEXT NOT NULL, column_name TEXT NOT NULL, name TEXT, title TEXT, "
    "description TEXT, mime_type TEXT, constraint_name TEXT, "
    "CONSTRAINT pk_gdc PRIMARY KEY (table_name, column_name), "
    "CONSTRAINT gdc_tn UNIQUE (table_name, name))"
)
_GPKG_CONSTRAINTS_DDL = (
    "CREATE TABLE IF NOT EXISTS gpkg_data_column_constraints ("
    "constraint_name TEXT NOT NULL, constraint_type TEXT NOT NULL, value TEXT, "
    "min NUMERIC, min_is_inclusive BOOLEAN, max NUMERIC, max_is_inclusive BOOLEAN, "
    "description TEXT, "
    "CONSTRAINT gdcc_ntv UNIQUE (constraint_name, constraint_type, value))"
)

_SCHEMA_DEFINITION = {
    10200: "http://www.geopackage.org/spec120/#extension_schema",
    10201: "http://www.geopackage.org/spec121/#extension_schema",
    10300: "http://www.geopackage.org/spec130/#extension_schema",
    10400: "http://www.geopackage.org/spec140/#extension_schema",
}


@dataclass(frozen=True)
class LayerStyle:
    """One row of the ``layer_styles`` table.

    ``geometry_column`` defaults to the layer's column in
    ``gpkg_geometry_columns``. With ``use_as_default`` the other styles of the
    same layer lose their default flag.
    """

    table_name: str
    style_name: str
    qml: str
    sld: str
    use_as_default: bool = True
    description: str = ""
    geometry_column: str | None = None


def _now() -> str:
    return datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%S.%f")[:-3] + "Z"


@contextmanager
def _gpkg(path) -> Iterator[sqlite3.Connection]:
    """Open an existing GeoPackage for one transaction (commit on success)."""
    path = Path(path)
    if not path.is_file():
        msg = f"GeoPackage {str(path)!r} does not exist; write its layers first"
        raise FileNotFoundError(msg)
    con = sqlite3.connect(path)
    try:
        app_id = con.execute("PRAGMA application_id").fetchone()[0]
        has_contents = con.execute(
            "SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = ?", ("gpkg_contents",)
        ).fetchone()
        if app_id != _GPKG_APPLICATION_ID or not has_contents:
            msg = f"{str(path)!r} is not a GeoPackage (no GPKG application id or gpkg_contents)"
            raise ValueError(msg)
        with con:
            yield con
    finally:
        con.close()


def _table_exists(con: sqlite3.Connection, name: str) -> bool:
    row = con.execute(
        "SELECT 1 FROM sqlite_master WHERE type IN ('table', 'view') AND name = ?", (name,)
    ).fetchone()
    return row is not None


def _require_layer(con: sqlite3.Connection, table: str) -> None:
    if not con.execute("SELECT 1 FROM gpkg_contents WHERE table_name = ?", (table,)).fetchone():
        known = [r[0] for r in con.execute("SELECT table_name FROM gpkg_contents")]
        msg = f"GeoPackage has no layer {table!r} (it has: {', '.join(known) or 'none'})"
        raise ValueError(msg)


def write_layer_styles(gpkg_path, rows: Iterable[LayerStyle]) -> int:
    """Store default styles in the GeoPackage's ``layer_styles`` table.

    Creates the table if needed (the columns QGIS uses) and registers it in
    ``gpkg_contents`` as ``attributes`` so the file stays a valid GeoPackage.
    A row replaces an earlier row with the same layer and style name.
    ``f_table_catalog`` and ``f_table_schema`` are empty strings, as QGIS
    writes and looks them up for GeoPackage layers.

    Returns the number of rows written.
    """
    rows = list(rows)
    now = _now()
    with _gpkg(gpkg_path) as con:
        con.execute(_LAYER_STYLES_DDL)
        if not con.execute(
            "SELECT 1 FROM gpkg_contents WHERE table_name = ?", ("layer_styles",)
        ).fetchone():
            con.execute(
                "INSERT INTO gpkg_contents (table_name, data_type, identifier, description, "
                "last_change, srs_id) VALUES (?, ?, ?, ?, ?, ?)",
                (
                    "layer_styles",
                    "attributes",
                    "layer_styles",
                    "Default layer styles (QML for QGIS, OGC SLD 1.0)",
                    now,
                    0,
                ),
            )
        for row in rows:
            _require_layer(con, row.table_name)
            geom_col = row.geometry_column
            if geom_col is None:
                found = con.execute(
                    "SELECT column_name FROM gpkg_geometry_columns WHERE table_name = ?",
                    (row.table_name,),
                ).fetchone()
                geom_col = found[0] if found else ""
            if row.use_as_default:
                con.execute(
                    "UPDATE layer_styles SET useAsDefault = 0 "
                    "WHERE f_table_name = ? AND f_geometry_column = ?",
                    (row.table_name, geom_col),
                )
            con.execute(
                "DELETE FROM layer_styles WHERE f_table_name = ? AND styleName = ?",
                (row.table_name, row.style_name),
            )
            con.execute(
                "INSERT INTO layer_styles (f_table_catalog, f_table_schema, f_table_name, "
                "f_geometry_column, styleName, styleQML, styleSLD, useAsDefault, description, "
                "owner, ui, update_time) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (
                    "",
                    "",
                    row.table_name,
                    geom_col,
                    row.style_name,
                    row.qml,
                    row.sld,
                    1 if row.use_as_default else 0,
                    row.description,
                    "",
                    None,
                    now,
                ),
            )
        con.execute(
            "UPDATE gpkg_contents SET last_change = ? WHERE table_name = ?", (now, "layer_styles")
        )
    return len(rows)


def write_enum_constraints(
    gpkg_path,
    table: str,
    column: str,
    scheme: ClassScheme,
    constraint_name: str | None = None,
) -> str:
    """Declare the class codes of ``table.column`` with the GeoPackage Schema extension.

    Writes one ``enum`` row per class of ``scheme`` to
    ``gpkg_data_column_constraints`` (``value`` = code, ``description`` =
    label), links the column to it in ``gpkg_data_columns`` and registers
    the ``gpkg_schema`` extension for both tables in ``gpkg_extensions``.
    GDAL then reports a coded field domain named ``constraint_name`` and QGIS
    shows the labels through a value map.

    Returns the constraint name (default ``"<scheme name>_codes"``).
    """
    name = constraint_name or f"{scheme.name}_codes"
    with _gpkg(gpkg_path) as con:
        _require_layer(con, table)
        cols = [r[0] for r in con.execute("SELECT name FROM pragma_table_info(?)", (table,))]
        if column not in cols:
            msg = f"layer {table!r} has no column {column!r} (it has: {', '.join(cols)})"
            raise ValueError(msg)
        user_version = con.execute("PRAGMA user_version").fetchone()[0]
        definition = _SCHEMA_DEFINITION.get(
            user_version, "http://www.geopackage.org/spec/#extension_schema"
        )
        con.execute(_GPKG_EXTENSIONS_DDL)
        con.execute(_GPKG_DATA_COLUMNS_DDL)
        con.execute(_GPKG_CONSTRAINTS_DDL)
        for ext_table in ("gpkg_data_columns", "gpkg_data_column_constraints"):
            # column_name is NULL, and NULLs never collide in a UNIQUE constraint:
            # test for the row instead of relying on INSERT OR IGNORE.
            exists = con.execute(
                "SELECT 1 FROM gpkg_extensions WHERE table_name = ? AND column_name IS NULL "
                "AND extension_name = ?",
                (ext_table, "gpkg_schema"),
            ).fetchone()
            if not exists:
                con.execute(
                    "INSERT INTO gpkg_extensions (table_name, column_name, extension_name, "
                    "definition, scope) VALUES (?, NULL, ?, ?, ?)",
                    (ext_table, "gpkg_schema", definition, "read-write"),
                )
        con.execute(
            "DELETE FROM gpkg_data_column_constraints "
            "WHERE constraint_name = ? AND constraint_type = ?",
            (name, "enum"),
        )
        con.executemany(
            "INSERT INTO gpkg_data_column_constraints (constraint_name, constraint_type, value, "
            "min, min_is_inclusive, max, max_is_inclusive, description) "
            "VALUES (?, ?, ?, NULL, NULL, NULL, NULL, ?)",
            [(name, "enum", str(e.code), e.label) for e in sorted(scheme.entries, key=_code)],
        )
        found = con.execute(
            "SELECT 1 FROM gpkg_data_columns WHERE table_name = ? AND column_name = ?",
            (table, column),
        ).fetchone()
        if found:
            con.execute(
                "UPDATE gpkg_data_columns SET constraint_name = ?, "
                "title = COALESCE(title, ?), description = COALESCE(description, ?) "
                "WHERE table_name = ? AND column_name = ?",
                (name, scheme.title, _column_description(scheme), table, column),
            )
        else:
            con.execute(
                "INSERT INTO gpkg_data_columns (table_name, column_name, name, title, "
                "description, mime_type, constraint_name) VALUES (?, ?, NULL, ?, ?, NULL, ?)",
                (table, column, scheme.title, _column_description(scheme), name),
            )
    return name


def _code(entry: ClassEntry) -> int:
    return entry.code


def _column_description(scheme: ClassScheme) -> str:
    return f"{scheme.title} class code (see constraint for labels)"


def style_class_layer(
    gpkg_path,
    layer: str,
    scheme: ClassScheme,
    present_codes: Iterable[int] | None = None,
    field: str = "class_code",
    style_name: str | None = None,
) -> str:
    """Default style and class-code domain for a polygon layer categorised by ``field``.

    Writes the QML + SLD 1.0 pair to ``layer_styles`` (as the default style)
    and the ``enum`` constraint of ``field``. ``present_codes`` defaults to the
    distinct values of ``field`` in the layer. Returns the constraint name.
    """
    if present_codes is None:
        with _gpkg(gpkg_path) as con:
            _require_layer(con, layer)
            cols = [r[0] for r in con.execute("SELECT name FROM pragma_table_info(?)", (layer,))]
            if field not in cols:
                msg = f"layer {layer!r} has no column {field!r} (it has: {', '.join(cols)})"
                raise ValueError(msg)
        import pyogrio

        frame = pyogrio.read_dataframe(gpkg_path, layer=layer, columns=[field], read_geometry=False)
        present_codes = sorted(int(v) for v in frame[field].dropna().unique())
    qml, sld = vector_styles(scheme, present_codes, layer, field)
    write_layer_styles(
        gpkg_path,
        [LayerStyle(layer, style_name or f"geomelt {scheme.name}", qml, sld, True, scheme.title)],
    )
    return write_enum_constraints(gpkg_path, layer, field, scheme)
