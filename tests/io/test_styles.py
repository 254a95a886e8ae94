"""Style sidecars of class GeoTIFFs and styles/constraints in a GeoPackage."""

from __future__ import annotations

import sqlite3
import xml.etree.ElementTree as ET

import numpy as np
import pandas as pd
import pyogrio
import pytest
import rasterio
from rasterio.transform import from_origin
from shapely.geometry import box

from geomelt.classes import MELTING_MECHANISM, SETTING
from geomelt.io.geopackage import GPKG_DATASET_OPTIONS, write_run_metadata
from geomelt.io.styles import (
    LayerStyle,
    codes_present,
    style_class_layer,
    vector_styles,
    write_category_sidecar,
    write_enum_constraints,
    write_layer_styles,
    write_qml,
    write_raster_styles,
    write_sld,
)

SLD = "{http://www.opengis.net/sld}"
OGC = "{http://www.opengis.net/ogc}"
PRESENT = [1, 2, 6]


@pytest.fixture
def class_tif(tmp_path):
    """A 20 x 30 setting raster with classes 1, 2, 6 and a nodata corner."""
    a = np.full((20, 30), 1, np.uint8)
    a[:, 20:] = 2
    a[5:15, 5:12] = 6
    a[0:2, 0:2] = SETTING.nodata
    path = tmp_path / "setting.tif"
    with rasterio.open(
        path,
        "w",
        driver="GTiff",
        width=30,
        height=20,
        count=1,
        dtype="uint8",
        nodata=SETTING.nodata,
        crs="EPSG:32633",
        transform=from_origin(500_000, 5_000_000, 1000, 1000),
        tiled=True,
        blockxsize=16,
        blockysize=16,
    ) as dst:
        dst.write(a, 1)
        dst.write_colormap(1, SETTING.colormap())
    return path


def test_codes_present(class_tif):
    assert codes_present(class_tif) == PRESENT


def test_category_sidecar(class_tif):
    aux = write_category_sidecar(class_tif, SETTING)
    assert aux.name == "setting.tif.aux.xml"
    assert not list(aux.parent.glob(".*.tmp"))

    # The colour table in the TIFF is untouched and GDAL reads the sidecar without error.
    with rasterio.open(class_tif) as ds:
        cmap = ds.colormap(1)
        assert ds.colorinterp[0].name == "palette"
    for entry in SETTING.entries:
        assert cmap[entry.code] == entry.rgba
    assert cmap[SETTING.nodata][3] == 0

    root = ET.parse(aux).getroot()
    assert root.tag == "PAMDataset"
    band = root.find("PAMRasterBand[@band='1']")
    names = [c.text or "" for c in band.find("CategoryNames")]
    assert names == SETTING.category_names()
    assert names[6] == "continental arc"

    rat = band.find("GDALRasterAttributeTable")
    assert rat.get("tableType") == "thematic"
    fields = [
        (f.findtext("Name"), f.findtext("Type"), f.findtext("Usage")) for f in rat.iter("FieldDefn")
    ]
    assert fields == [
        ("Value", "0", "5"),
        ("Class", "2", "2"),
        ("Red", "0", "6"),
        ("Green", "0", "7"),
        ("Blue", "0", "8"),
        ("Alpha", "0", "9"),
    ]
    rows = [[f.text for f in r.findall("F")] for r in rat.findall("Row")]
    assert len(rows) == len(SETTING.entries)
    by_code = SETTING.by_code()
    for row in rows:
        entry = by_code[int(row[0])]
        assert row[1] == entry.label
        assert tuple(int(v) for v in row[2:]) == entry.rgba


def test_category_sidecar_keeps_other_pam_content(class_tif):
    aux = class_tif.with_name(class_tif.name + ".aux.xml")
    aux.write_text(
        "<PAMDataset><PAMRasterBand band='1'><Metadata><MDI key='STATISTICS_MAXIMUM'>6"
        "</MDI></Metadata><CategoryNames><Category>old</Category></CategoryNames>"
        "</PAMRasterBand></PAMDataset>"
    )
    write_category_sidecar(class_tif, SETTING)
    band = ET.parse(aux).getroot().find("PAMRasterBand")
    assert band.find("Metadata/MDI").text == "6"
    assert len(band.findall("CategoryNames")) == 1
    assert band.find("CategoryNames")[1].text == "stable interior"


def test_qml_lists_only_present_classes(class_tif):
    qml = write_qml(class_tif, SETTING, PRESENT + [SETTING.nodata])
    assert qml.name == "setting.qml"
    root = ET.parse(qml).getroot()  # well-formed
    assert root.tag == "qgis"
    assert root.get("version")
    renderer = root.find("pipe/rasterrenderer")
    assert renderer.get("type") == "paletted"
    assert renderer.get("band") == "1"
    entries = renderer.findall("colorPalette/paletteEntry")
    assert [int(e.get("value")) for e in entries] == PRESENT
    by_code = SETTING.by_code()
    for e in entries:
        entry = by_code[int(e.get("value"))]
        assert e.get("label") == entry.label
        assert e.get("color") == "#{:02x}{:02x}{:02x}".format(*entry.rgba[:3])
        assert int(e.get("alpha")) == entry.rgba[3]


def test_unknown_codes_are_rejected(class_tif):
    with pytest.raises(ValueError, match="not in the 'setting' scheme"):
        write_qml(class_tif, SETTING, [1, 42])


def test_sld_raster_structure(class_tif):
    sld = write_sld(class_tif, SETTING, PRESENT, "setting")
    assert sld.name == "setting.sld"
    root = ET.parse(sld).getroot()
    assert root.tag == f"{SLD}StyledLayerDescriptor"
    assert root.get("version") == "1.0.0"
    assert root.find(f"{SLD}NamedLayer/{SLD}Name").text == "setting"
    cmap = root.find(f".//{SLD}RasterSymbolizer/{SLD}ColorMap")
    assert cmap.get("type") == "values"
    entries = cmap.findall(f"{SLD}ColorMapEntry")
    assert [int(e.get("quantity")) for e in entries] == PRESENT
    assert [e.get("label") for e in entries] == [SETTING.by_code()[c].label for c in PRESENT]
    assert all(e.get("color").startswith("#") and len(e.get("color")) == 7 for e in entries)
    strict = write_sld(class_tif.with_suffix(".sld"), SETTING, PRESENT, "setting", None)
    assert ET.parse(strict).getroot().find(f".//{SLD}ColorMap").get("type") is None


def test_write_raster_styles_finds_present_codes(class_tif):
    paths = write_raster_styles(class_tif, SETTING)
    assert set(paths) == {"aux", "qml", "sld"}
    root = ET.parse(paths["qml"]).getroot()
    assert len(root.findall(".//paletteEntry")) == len(PRESENT)
    with rasterio.open(class_tif) as ds:  # GDAL still opens the file with its sidecar
        assert ds.read(1)[10, 8] == 6


def test_vector_styles():
    qml, sld = vector_styles(MELTING_MECHANISM, [0, 1, 3], "mechanism_polygons", "class_code")
    q = ET.fromstring(qml.split("\n", 2)[2])  # skip the declaration and DOCTYPE lines
    renderer = q.find("renderer-v2")
    assert renderer.get("type") == "categorizedSymbol"
    assert renderer.get("attr") == "class_code"
    cats = renderer.findall("categories/category")
    assert [c.get("value") for c in cats] == ["0", "1", "3"]
    assert [c.get("label") for c in cats] == [
        MELTING_MECHANISM.by_code()[c].label for c in (0, 1, 3)
    ]
    assert len(renderer.findall("symbols/symbol")) == 3

    s = ET.fromstring(sld.encode())
    rules = s.findall(f".//{SLD}Rule")
    assert len(rules) == 3
    literals = [r.find(f"{OGC}Filter/{OGC}PropertyIsEqualTo/{OGC}Literal").text for r in rules]
    assert literals == ["0", "1", "3"]
    names = {r.find(f".//{OGC}PropertyName").text for r in rules}
    assert names == {"class_code"}
    fills = [r.find(f".//{SLD}Fill/{SLD}CssParameter[@name='fill']").text for r in rules]
    assert fills[1] == "#3b7dd8"


@pytest.fixture
def gpkg(tmp_path):
    """A GeoPackage 1.2 with a polygon layer and the run-metadata table."""
    path = tmp_path / "results.gpkg"
    frame = pd.DataFrame(
        {
            "class_code": np.array([1, 2, 6], dtype="int32"),
            "class_label": ["stable interior", "mid-ocean ridge", "continental arc"],
        }
    )
    import geopandas as gpd

    gdf = gpd.GeoDataFrame(
        frame, geometry=[box(0, 0, 1, 1), box(1, 0, 2, 1), box(0, 1, 2, 2)], crs="EPSG:32633"
    )
    pyogrio.write_dataframe(
        gdf,
        path,
        layer="setting_polygons",
        driver="GPKG",
        dataset_options=GPKG_DATASET_OPTIONS,
    )
    write_run_metadata(path, [("run", "version", "test")])
    return path


def test_layer_styles_table(gpkg):
    qml, sld = vector_styles(SETTING, PRESENT, "setting_polygons", "class_code")
    n = write_layer_styles(
        gpkg, [LayerStyle("setting_polygons", "geomelt setting", qml, sld, description="classes")]
    )
    assert n == 1
    # Writing again replaces the row rather than adding a second one.
    write_layer_styles(gpkg, [LayerStyle("setting_polygons", "geomelt setting", qml, sld)])
    with sqlite3.connect(gpkg) as con:
        rows = con.execute(
            "SELECT f_table_catalog, f_table_schema, f_table_name, f_geometry_column, "
            "styleName, styleQML, styleSLD, useAsDefault, update_time FROM layer_styles"
        ).fetchall()
        contents = con.execute(
            "SELECT data_type, identifier FROM gpkg_contents WHERE table_name = ?",
            ("layer_styles",),
        ).fetchone()
        cols = [r[1] for r in con.execute("PRAGMA table_info(layer_styles)")]
    assert len(rows) == 1
    cat, schema, table, geom, name, row_qml, row_sld, default, stamp = rows[0]
    assert (cat, schema, table, geom, name) == (
        "",
        "",
        "setting_polygons",
        "geom",
        "geomelt setting",
    )
    assert row_qml == qml and "categorizedSymbol" in row_qml
    assert row_sld == sld and "StyledLayerDescriptor" in row_sld
    assert default == 1
    assert stamp.endswith("Z")
    assert contents == ("attributes", "layer_styles")
    for c in (
        "f_table_catalog",
        "f_table_schema",
        "f_table_name",
        "f_geometry_column",
        "styleName",
        "styleQML",
        "styleSLD",
        "useAsDefault",
        "description",
        "owner",
        "ui",
        "update_time",
    ):
        assert c in cols

    layers = dict(pyogrio.list_layers(gpkg).tolist())
    assert layers["setting_polygons"] == "Polygon"
    assert "layer_styles" in layers
    back = pyogrio.read_dataframe(gpkg, layer="setting_polygons")
    assert back["class_code"].tolist() == [1, 2, 6]
    styles = pyogrio.read_dataframe(gpkg, layer="layer_styles")
    assert styles["styleName"].tolist() == ["geomelt setting"]


def test_second_default_style_demotes_first(gpkg):
    qml, sld = vector_styles(SETTING, PRESENT, "setting_polygons", "class_code")
    write_layer_styles(gpkg, [LayerStyle("setting_polygons", "a", qml, sld)])
    write_layer_styles(gpkg, [LayerStyle("setting_polygons", "b", qml, sld)])
    with sqlite3.connect(gpkg) as con:
        rows = dict(con.execute("SELECT styleName, useAsDefault FROM layer_styles"))
    assert rows == {"a": 0, "b": 1}


def test_layer_styles_unknown_layer(gpkg):
    with pytest.raises(ValueError, match="no layer 'nope'"):
        write_layer_styles(gpkg, [LayerStyle("nope", "x", "<qgis/>", "<sld/>")])


def test_enum_constraints(gpkg):
    name = write_enum_constraints(gpkg, "setting_polygons", "class_code", SETTING)
    write_enum_constraints(gpkg, "setting_polygons", "class_code", SETTING)  # idempotent
    assert name == "setting_codes"
    with sqlite3.connect(gpkg) as con:
        enum = con.execute(
            "SELECT value, description FROM gpkg_data_column_constraints "
            "WHERE constraint_name = ? AND constraint_type = 'enum'",
            (name,),
        ).fetchall()
        link = con.execute(
            "SELECT constraint_name FROM gpkg_data_columns WHERE table_name = ? AND column_name = ?",
            ("setting_polygons", "class_code"),
        ).fetchall()
        ext = con.execute(
            "SELECT table_name, column_name, definition, scope FROM gpkg_extensions "
            "WHERE extension_name = 'gpkg_schema' ORDER BY table_name"
        ).fetchall()
    assert sorted((int(v), d) for v, d in enum) == sorted(
        (e.code, e.label) for e in SETTING.entries
    )
    assert link == [(name,)]
    assert [(t, c, s) for t, c, _, s in ext] == [
        ("gpkg_data_column_constraints", None, "read-write"),
        ("gpkg_data_columns", None, "read-write"),
    ]
    assert all(d.endswith("#extension_schema") for _, _, d, _ in ext)
    back = pyogrio.read_dataframe(gpkg, layer="setting_polygons")
    assert len(back) == 3


def test_enum_constraints_unknown_column(gpkg):
    with pytest.raises(ValueError, match="no column 'missing'"):
        write_enum_constraints(gpkg, "setting_polygons", "missing", SETTING)


def test_not_a_geopackage(tmp_path):
    path = tmp_path / "plain.sqlite"
    sqlite3.connect(path).close()
    with pytest.raises(ValueError, match="not a GeoPackage"):
        write_enum_constraints(path, "t", "c", SETTING)


def test_style_class_layer_from_polygons(tmp_path):
    """class_polygons -> GeoPackage 1.2 -> default style + domain, read back."""
    from affine import Affine

    from geomelt.io.polygons import class_polygons

    a = np.full((20, 30), 1, np.uint8)
    a[:, 20:] = 2
    a[5:15, 5:12] = 6
    polys = class_polygons(a, Affine(1000, 0, 0, 0, -1000, 0), "EPSG:3035", SETTING, None, 4, 500)
    path = tmp_path / "results.gpkg"
    pyogrio.write_dataframe(
        polys, path, layer="setting_polygons", driver="GPKG", dataset_options=GPKG_DATASET_OPTIONS
    )
    name = style_class_layer(path, "setting_polygons", SETTING)
    assert name == "setting_codes"
    with sqlite3.connect(path) as con:
        qml = con.execute("SELECT styleQML FROM layer_styles WHERE useAsDefault = 1").fetchone()[0]
        (version,) = con.execute("PRAGMA user_version").fetchone()
    values = [c.get("value") for c in ET.fromstring(qml.split("\n", 2)[2]).iter("category")]
    assert values == ["1", "2", "6"]
    assert version == 10200  # still GeoPackage 1.2
    back = pyogrio.read_dataframe(path, layer="setting_polygons")
    assert sorted(back["class_code"]) == [1, 2, 6]
    assert back["area_km2"].sum() == pytest.approx(600.0)
