"""End to end on the invented sample region: every output re-read and checked.

Feature locations come from ``sample_layers/features.toml`` (invented demo
data). Expected values are physical ranges from published sources, named
beside each check.
"""

from __future__ import annotations

import sys

import numpy as np
import pytest
import rasterio
from click.testing import CliRunner

from geomelt.cli import main
from tests.conftest import SAMPLE_LAYERS

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

FEATURES = {
    f["id"]: f for f in tomllib.loads((SAMPLE_LAYERS / "features.toml").read_text())["features"]
}


def kinds(kind):
    return [f for f in FEATURES.values() if f["kind"] == kind]


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo") / "out"
    res = CliRunner().invoke(main, ["run", str(SAMPLE_LAYERS / "region.toml"), "-o", str(out)])
    assert res.exit_code == 0, res.output
    return out


def value_at(out, name, feature):
    with rasterio.open(out / f"{name}.tif") as ds:
        row, col = ds.index(feature["x"], feature["y"])
        return float(ds.read(1)[row, col])


def test_every_output_is_georeferenced_and_described(demo_out):
    with rasterio.open(SAMPLE_LAYERS / "crustal_thickness_km.tif") as ref:
        crs, transform = ref.crs, ref.transform
    tifs = sorted(demo_out.glob("*.tif"))
    assert len(tifs) >= 18
    for tif in tifs:
        with rasterio.open(tif) as ds:
            assert ds.crs == crs and ds.transform == transform, tif.name
            assert ds.descriptions[0] == tif.stem
            assert ds.units[0], f"{tif.name} has no unit"
            assert ds.nodata is not None
            assert ds.overviews(1), f"{tif.name} has no overviews"
            assert "caution" in ds.tags()


def test_lithosphere_base_craton_deep_ridge_shallow(demo_out):
    # Hasterok & Chapman 2011: ~200 km lithosphere under 40 mW/m2 cratons; young ocean thin.
    for f in kinds("stable_interior"):
        if f["heat_flow_mw_m2"] <= 45:
            assert value_at(demo_out, "lab_depth_km", f) > 150.0, f["name"]
    for f in kinds("mid_ocean_ridge"):
        assert value_at(demo_out, "lab_depth_km", f) < 30.0, f["name"]


def test_ridge_melt_thickness_matches_normal_oceanic_crust(demo_out):
    # Normal oceanic crust 7.1 +/- 0.8 km (White, McKenzie & O'Nions 1992, from memory);
    # 15 % tolerance as science.md recommends for this parameterization.
    for f in kinds("mid_ocean_ridge"):
        h = value_at(demo_out, "melt_thickness_km", f)
        assert 7.1 * 0.85 <= h <= 7.1 * 1.15, (f["name"], h)


@pytest.mark.parametrize("kind", ["stable_interior", "forearc"])
def test_no_melt_in_cratons_and_forearcs(demo_out, kind):
    for f in kinds(kind):
        if kind == "stable_interior" and f["heat_flow_mw_m2"] > 45:
            continue  # ordinary continent: only the craton proper must be dry
        assert value_at(demo_out, "melt_thickness_km", f) == 0.0, f["name"]
        assert value_at(demo_out, "wedge_melt_fraction", f) == 0.0, f["name"]
        assert value_at(demo_out, "crustal_melt_fraction", f) == 0.0, f["name"]


@pytest.mark.parametrize("kind", ["oceanic_arc", "continental_arc"])
def test_flux_melting_beneath_arcs(demo_out, kind):
    # Slab 65-173 km beneath arc fronts (Syracuse & Abers 2006) -> water-fluxed wedge melting.
    for f in kinds(kind):
        assert value_at(demo_out, "wedge_melt_fraction", f) > 0.05, f["name"]


def test_hotspots_raise_potential_temperature_and_melt_more(demo_out):
    ridge_h = value_at(demo_out, "melt_thickness_km", kinds("mid_ocean_ridge")[0])
    for f in kinds("oceanic_hotspot") + kinds("continental_hotspot"):
        assert value_at(demo_out, "potential_temperature_c", f) > 1450.0, f["name"]
        assert value_at(demo_out, "melt_thickness_km", f) > 0.0, f["name"]
    # +200 K roughly quadruples melt production (White & McKenzie 1989): the oceanic
    # hotspot (+200 K, 43 km lid) must out-produce the ridge.
    assert value_at(demo_out, "melt_thickness_km", kinds("oceanic_hotspot")[0]) > ridge_h


def test_collision_belt_is_flagged_not_trusted(demo_out):
    for f in kinds("continental_collision"):
        assert value_at(demo_out, "moho_temperature_flag", f) == 1, f["name"]


# Expected class per feature kind of the invented region (design.md section 4.5 classes;
# mechanism and magma-type expectations follow the cited rules in geomelt.tectonics.settings).
EXPECTED_SETTING = {
    "mid_ocean_ridge": "MID_OCEAN_RIDGE",
    "transform": "TRANSFORM",
    "ocean_basin": "STABLE_INTERIOR",
    "oceanic_hotspot": "OCEANIC_HOTSPOT",
    "forearc": "FOREARC",
    "oceanic_arc": "OCEANIC_ARC",
    "back_arc": "BACK_ARC",
    "continental_arc": "CONTINENTAL_ARC",
    "continental_collision": "CONTINENTAL_COLLISION",
    "continental_rift": "CONTINENTAL_RIFT",
    "continental_hotspot": "CONTINENTAL_HOTSPOT",
    "stable_interior": "STABLE_INTERIOR",
}
EXPECTED_MAGMA = {
    "mid_ocean_ridge": "MAFIC",
    "back_arc": "MAFIC",
    "oceanic_hotspot": "MAFIC",
    "continental_arc": "INTERMEDIATE",
    "continental_collision": "FELSIC",
    "continental_rift": "BIMODAL",
    "continental_hotspot": "BIMODAL",
    "forearc": "NONE",
}


@pytest.mark.parametrize("feature_id", sorted(FEATURES), ids=lambda i: FEATURES[i]["kind"])
def test_each_feature_lands_in_its_setting(demo_out, feature_id):
    from geomelt.classes import MagmaType, Mechanism, Setting

    f = FEATURES[feature_id]
    setting = Setting(int(value_at(demo_out, "setting", f)))
    assert setting.name == EXPECTED_SETTING[f["kind"]], f["name"]
    magma = MagmaType(int(value_at(demo_out, "magma_type", f)))
    if f["kind"] in EXPECTED_MAGMA:
        assert magma.name == EXPECTED_MAGMA[f["kind"]], f["name"]
    mech = int(value_at(demo_out, "melting_mechanism", f))
    if f["kind"] in ("oceanic_arc", "continental_arc"):
        assert mech & Mechanism.FLUX, f["name"]
    if f["kind"] in ("mid_ocean_ridge", "oceanic_hotspot", "continental_hotspot"):
        assert mech & Mechanism.DECOMPRESSION, f["name"]
    if f["kind"] == "continental_collision":
        assert mech == Mechanism.CRUSTAL_HEATING, f["name"]


def test_class_rasters_carry_legends(demo_out):
    import xml.etree.ElementTree as ET

    from geomelt.classes import SETTING

    with rasterio.open(demo_out / "setting.tif") as ds:
        assert ds.dtypes[0] == "uint8" and ds.nodata == 255
        cmap = ds.colormap(1)
        assert cmap[2][:3] == SETTING.by_code()[2].rgba[:3]
    aux = ET.parse(demo_out / "setting.tif.aux.xml").getroot()
    names = [c.text or "" for c in aux.iter("Category")]
    assert names[2] == "mid-ocean ridge"
    qml = ET.parse(demo_out / "setting.qml").getroot()
    assert len(list(qml.iter("paletteEntry"))) == len(SETTING.entries)  # all 11 present here
    assert (demo_out / "setting.sld").exists()


def test_settings_polygons_and_boundaries_in_the_geopackage(demo_out):
    import pyogrio

    layers = {name for name, _ in pyogrio.list_layers(demo_out / "results.gpkg")}
    assert {"settings", "plate_boundaries", "run_metadata"} <= layers
    polys = pyogrio.read_dataframe(demo_out / "results.gpkg", layer="settings")
    assert set(polys["setting"]) >= {"mid-ocean ridge", "forearc", "continental arc"}
    assert (polys["area_km2"] > 0).all()
    # Polygon areas add up to the region (4000 km x 3000 km equal-area grid) within 1 %.
    assert polys["area_km2"].sum() == pytest.approx(4000.0 * 3000.0, rel=0.01)
    assert {
        "dominant_melting_mechanism_label",
        "dominant_magma_type_label",
        "mean_melt_thickness_km",
    } <= set(polys.columns)
    bounds = pyogrio.read_dataframe(demo_out / "results.gpkg", layer="plate_boundaries")
    assert (bounds["length_km"] > 0).all()


def test_quicklook_maps_written(demo_out):
    pngs = {p.stem for p in (demo_out / "quicklook").glob("*.png")}
    assert {"setting", "melting_mechanism", "magma_type", "melt_thickness_km"} <= pngs


def test_ridge_production_integrates_to_melt_thickness_times_rate(demo_out):
    # McKenzie & Bickle (1988): production per km of ridge = crustal (melt) thickness x
    # full spreading rate. Summing the per-cell density across the ridge must give it back.
    ridge = kinds("mid_ocean_ridge")[0]
    h = value_at(demo_out, "melt_thickness_km", ridge)
    with rasterio.open(demo_out / "ridge_melt_production_m3_km2_yr.tif") as ds:
        row, _ = ds.index(ridge["x"], ridge["y"])
        density = ds.read(1)[row]  # m3 km-2 yr-1 along the E-W row through the ridge
        cell_km = ds.transform.a / 1000.0
    import pyogrio

    bounds = pyogrio.read_dataframe(SAMPLE_LAYERS / "plate_boundaries.gpkg")
    rate = float(bounds.loc[bounds["boundary_type"] == "ridge", "rate_mm_yr"].iloc[0])
    per_km_m3_yr = np.nansum(density) * cell_km  # m3 per km of ridge per year
    expected = h * rate * 1e9 / 1e6  # km x km/Myr = km3/km/Myr -> m3/km/yr
    assert per_km_m3_yr == pytest.approx(expected, rel=0.10)


@pytest.mark.parametrize(
    ("kind", "system"),
    [
        ("continental_arc", "porphyry_cu_au_mo"),  # porphyry Cu with arcs (Sillitoe 2010)
        ("oceanic_arc", "epithermal_au_ag"),
        ("continental_collision", "granite_sn_w_li"),  # Sn-W with crustal melts (Lehmann 1990)
        ("continental_hotspot", "magmatic_ni_cu_pge"),  # Ni-Cu-PGE with plume melts (Naldrett 2004)
        ("mid_ocean_ridge", "vms"),  # VMS at ridges and back-arcs (Franklin et al. 2005)
    ],
)
def test_mineral_system_scores_follow_their_settings(demo_out, kind, system):
    f = kinds(kind)[0]
    own = value_at(demo_out, f"{system}_score", f)
    craton = value_at(demo_out, f"{system}_score", FEATURES["m"])
    assert own >= 0.75, (f["name"], own)
    assert own > craton + 0.4


# ----------------------------------------------------------------- productivity per line
def _boundaries(out):
    import pyogrio

    return pyogrio.read_dataframe(out / "results.gpkg", layer="plate_boundaries")


def test_ridge_lines_make_melt_thickness_times_rate(demo_out):
    # McKenzie & Bickle (1988): a ridge makes (crustal thickness x full rate) per km per
    # Myr; 7 km at 40 mm/yr is 280 km3/km/Myr. Cells beyond a segment's ends are credited
    # to it too, so short segments sit a little above: 15 % tolerance.
    lines = _boundaries(demo_out)
    ridge = kinds("mid_ocean_ridge")[0]
    h = value_at(demo_out, "melt_thickness_km", ridge)
    ridges = lines[lines["boundary_type"] == "ridge"]
    assert len(ridges) >= 2
    for _, r in ridges.iterrows():
        expected = h * r["rate_mm_yr"]
        assert r["melt_production_km3_km_myr"] == pytest.approx(expected, rel=0.15), r["name"]


def test_arc_lines_inside_published_arc_budgets(demo_out):
    # Arc crustal growth 20-40 km3/km/Myr (Reymer & Schubert 1984, from memory) and western
    # Pacific island arcs 30-95 (Dimalanta et al. 2002, from memory): 20-95 overall.
    lines = _boundaries(demo_out)
    arcs = lines[lines["boundary_type"] == "subduction"]
    assert len(arcs) >= 2
    for _, r in arcs.iterrows():
        assert 20.0 <= r["melt_production_km3_km_myr"] <= 95.0, r["name"]
    # collision and transform lines make no melt of their own
    quiet = lines[lines["boundary_type"].isin(["collision", "transform"])]
    assert quiet["melt_production_km3_yr"].isna().all()


def test_regional_totals_in_run_metadata(demo_out):
    import json

    import pyogrio

    meta = pyogrio.read_dataframe(demo_out / "results.gpkg", layer="run_metadata")
    totals = meta[meta["section"] == "total"]
    ridge = json.loads(totals.loc[totals["key"] == "mid-ocean ridge", "value"].iloc[0])
    assert ridge["area_km2"] > 0 and ridge["ridge_melt_production_km3_yr"] > 0
    assert ridge["flash_isotherm_within_reach_km2"] <= ridge["area_km2"]
    area = sum(json.loads(v)["area_km2"] for v in totals["value"])
    assert area == pytest.approx(4000.0 * 3000.0, rel=1e-6)  # equal-area grid, every cell


# ------------------------------------------------------------------ geothermal screening
def test_heat_source_score_high_at_hotspots_and_rifts_low_in_cratons(demo_out):
    craton = value_at(demo_out, "heat_source_score", FEATURES["m"])
    for kind in ("continental_hotspot", "oceanic_hotspot", "continental_rift"):
        f = kinds(kind)[0]
        assert value_at(demo_out, "heat_source_score", f) > craton + 0.3, f["name"]
        assert value_at(demo_out, "distance_to_melt_km", f) == 0.0
    assert value_at(demo_out, "distance_to_melt_km", FEATURES["m"]) > 200.0
    assert value_at(demo_out, "heat_source_melt_proximity_factor", FEATURES["m"]) == 0.0


# --------------------------------------------------------------------------- prospects
def _prospects(out):
    import pyogrio

    return pyogrio.read_dataframe(out / "results.gpkg", layer="prospects")


def _prospect_at(prospects, screen, feature):
    from shapely.geometry import Point

    point = Point(feature["x"], feature["y"])
    hit = prospects[(prospects["screen"] == screen) & prospects.contains(point)]
    assert len(hit) == 1, (screen, feature["name"])
    return hit.iloc[0]


def test_prospects_are_ranked_polygons(demo_out):
    p = _prospects(demo_out)
    assert len(p) >= 6
    assert p["rank"].tolist() == list(range(1, len(p) + 1))
    assert (p["mean_score"].diff().dropna() <= 1e-9).all()
    assert (p["area_km2"] >= 2000.0).all()  # prospect_min_area_km2 default
    assert (p["mean_score"] >= p["threshold"]).all() and (p["max_score"] <= 1.0).all()
    screens = set(p["screen"])
    assert {"geothermal_heat_source", "porphyry_cu_au_mo", "magmatic_ni_cu_pge"} <= screens
    for _, group in p.groupby("screen"):
        assert sorted(group["screen_rank"]) == list(range(1, len(group) + 1))


def test_arc_prospects_are_driven_by_the_arc(demo_out):
    # porphyry Cu with arc magmatism (Sillitoe 2010; Richards 2003)
    p = _prospects(demo_out)
    arc = _prospect_at(p, "porphyry_cu_au_mo", kinds("continental_arc")[0])
    assert arc["dominant_setting"] == "continental arc"
    assert arc["dominant_magma_type"] == "intermediate"
    drivers = {arc["driver_1"], arc["driver_2"], arc["driver_3"]}
    assert drivers & {"flux melt", "setting affinity", "magma affinity"}


def test_hotspot_prospects_are_driven_by_the_plume(demo_out):
    p = _prospects(demo_out)
    # magmatic Ni-Cu-PGE with plume melts in continental crust (Naldrett 2004)
    plume = _prospect_at(p, "magmatic_ni_cu_pge", kinds("continental_hotspot")[0])
    assert plume["dominant_setting"] == "continental hotspot"
    assert plume["driver_1"] == "setting affinity"
    # geothermal: heat of the melting column beneath the oceanic hotspot
    heat = _prospect_at(p, "geothermal_heat_source", kinds("oceanic_hotspot")[0])
    assert "melt proximity" in heat["drivers"]
    assert heat["dominant_mechanism"].startswith("decompression")


# ------------------------------------------------------------------------------ report
def test_report_is_self_contained_and_complete(demo_out):
    import base64
    import re

    html = (demo_out / "report.html").read_text(encoding="utf-8")
    assert html.count("not a substitute for site investigation") == 2  # caution top and end
    images = re.findall(r'src="data:image/png;base64,([^"]+)"', html)
    pngs = sorted((demo_out / "quicklook").glob("*.png"))
    assert len(images) == len(pngs) >= 10
    assert base64.b64decode(images[0])[:8] == b"\x89PNG\r\n\x1a\n"
    assert "http://" not in html and "https://" not in html
    for heading in (
        "Area and melt production per setting",
        "Melt production of plate-boundary lines",
        "Top prospects",
        "Output rasters",
        "Inputs",
    ):
        assert heading in html, heading
    assert "Halvane" in html  # a ridge line of the invented region in the per-line table


def test_geothermal_reach_areas_in_the_report(demo_out):
    # The sample ridge is young ocean floor: its whole setting has the flash-steam isotherm
    # (200 degC) within 3 km (half-space cooling, Turcotte & Schubert 2002 section 4-16);
    # the cold craton has none. Areas are true cell areas (equal-area grid: 100 km2 each).
    html = (demo_out / "report.html").read_text(encoding="utf-8")
    assert "Ground with geothermal temperatures within 3 km of the surface" in html
    with rasterio.open(demo_out / "flash_isotherm_depth_km.tif") as ds:
        flash = ds.read(1)
    with rasterio.open(demo_out / "setting.tif") as ds:
        setting = ds.read(1)
    ridge = setting == 2
    assert np.count_nonzero(flash[ridge] <= 3.0) / np.count_nonzero(ridge) > 0.99
    assert value_at(demo_out, "flash_isotherm_depth_km", FEATURES["m"]) > 6.0
