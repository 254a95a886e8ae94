"""Quick-look PNG maps."""

from __future__ import annotations

import time

import geopandas as gpd
import matplotlib.image as mpimg
import numpy as np
import pytest
from affine import Affine
from shapely.geometry import LineString, Point, box

from geomelt.classes import SETTING
from geomelt.io.quicklook import class_map_png, continuous_map_png, nice_length, north_angle

CRS = "EPSG:32633"
TRANSFORM = Affine(5000, 0, 100_000, 0, -5000, 7_000_000)
CAUTION = "Regional screening estimate; not a substitute for site investigation."


def class_array(rows=300, cols=400) -> np.ndarray:
    a = np.full((rows, cols), 1, np.uint8)
    a[:, cols // 2 :] = 2
    a[rows // 3 : 2 * rows // 3, cols // 8 : cols // 3] = 6
    a[:10, :10] = SETTING.nodata
    return a


@pytest.fixture
def overlays():
    x0, y0 = TRANSFORM.c, TRANSFORM.f
    bnd = gpd.GeoDataFrame(
        {"boundary_type": ["ridge", "subduction", "transform"]},
        geometry=[
            LineString([(x0 + 1e6, y0 - 1e5), (x0 + 1e6, y0 - 1.4e6)]),
            LineString([(x0 + 3e5, y0 - 1e5), (x0 + 4e5, y0 - 1.4e6)]),
            LineString([(x0 + 1.2e6, y0 - 7e5), (x0 + 1.8e6, y0 - 7e5)]),
        ],
        crs=CRS,
    )
    spots = gpd.GeoDataFrame(geometry=[Point(x0 + 1.5e6, y0 - 5e5)], crs=CRS)
    return bnd, spots


def test_class_map(tmp_path, overlays):
    bnd, spots = overlays
    out = tmp_path / "maps" / "setting.png"
    start = time.perf_counter()
    info = class_map_png(
        out,
        class_array(),
        TRANSFORM,
        CRS,
        SETTING,
        "Tectonic-magmatic setting",
        bnd,
        spots,
        footnote=CAUTION,
    )
    elapsed = time.perf_counter() - start
    assert out.is_file() and out.stat().st_size > 10_000
    assert not list(out.parent.glob(".*.tmp"))
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    img = mpimg.imread(out)
    assert img.shape[:2] == (750, 1000)
    assert info.size_px == (1000, 750)
    by_code = SETTING.by_code()
    assert info.legend_labels == tuple(by_code[c].label for c in (1, 2, 6))
    assert info.north == "true north"
    # Map centre 600 km east of the UTM 33N central meridian at ~62 N: true north is
    # west of grid north (meridian convergence about 8 degrees).
    assert -10 < info.north_angle_deg < -5
    assert info.scale_bar_km > 0
    assert info.decimation == 1
    assert elapsed < 5.0  # generous bound for slow CI; ~0.2 s measured


def test_class_map_legend_drops_absent_classes(tmp_path):
    a = class_array()
    a[a == 6] = 1
    info = class_map_png(tmp_path / "s.png", a, TRANSFORM, CRS, SETTING, "Setting")
    assert info.legend_labels == ("stable interior", "mid-ocean ridge")


def test_continuous_map_and_decimation(tmp_path, overlays):
    bnd, spots = overlays
    rows, cols = 1600, 3200  # long side above the 1500-cell limit: decimated by 3
    x = np.linspace(0.0, 12.0, cols, dtype=np.float32)[None, :] + np.zeros((rows, 1), np.float32)
    x[:100, :100] = np.nan
    tr = Affine(500, 0, 100_000, 0, -500, 7_000_000)
    out = tmp_path / "melt.png"
    info = continuous_map_png(
        out, x, tr, CRS, "Melt thickness", "km", boundaries=bnd, hotspots=spots, footnote=CAUTION
    )
    assert out.stat().st_size > 10_000
    assert mpimg.imread(out).shape[:2] == (750, 1000)
    assert info.decimation == 3
    assert info.legend_labels == ()


def test_continuous_map_colours_are_matplotlibs(tmp_path):
    # The map is coloured before matplotlib draws it; the colours must be the ones
    # matplotlib's own colour map gives for those values (reference: matplotlib.colormaps).
    import matplotlib

    x = np.zeros((300, 400), np.float32)
    x[:, 200:] = 12.0
    x[:, 100:200] = 3.0
    x[:50, :50] = np.nan
    out = tmp_path / "c.png"
    continuous_map_png(out, x, TRANSFORM, CRS, "Values", "km", cmap="magma", vmin=0.0, vmax=12.0)
    pixels = {
        tuple(p) for p in (mpimg.imread(out)[..., :3] * 255).round().astype(int).reshape(-1, 3)
    }
    cmap = matplotlib.colormaps["magma"]
    for value in (0.0, 3.0, 12.0):
        assert tuple(int(c) for c in cmap(value / 12.0, bytes=True)[:3]) in pixels


def test_footnote_wrapped_inside_the_figure(tmp_path):
    # A caution longer than one line on a narrow figure: wrapped onto several lines, none
    # running past the right edge (the last 2 % of the columns stay background).
    import geomelt

    out = tmp_path / "n.png"
    continuous_map_png(
        out,
        class_array().astype(np.float32),
        TRANSFORM,
        CRS,
        "Narrow",
        "1",
        footnote=geomelt.CAUTION,
        figsize=(6.0, 4.5),
    )
    img = mpimg.imread(out)[..., :3]
    band = img[-40:]  # the footnote sits in the bottom 40 pixels
    inked = (band < 0.9).any(axis=2)
    assert not inked[:, -int(0.02 * band.shape[1]) :].any()
    rows = np.flatnonzero(inked.any(axis=1))
    lines = 1 + np.count_nonzero(np.diff(rows) > 1)
    assert lines >= 2


def test_scale_bar_geographic(tmp_path):
    a = class_array(200, 300)
    tr = Affine(0.02, 0, 10.0, 0, -0.02, 62.0)  # 6 x 4 degrees at 58-62 N
    info = class_map_png(tmp_path / "g.png", a, tr, "EPSG:4326", SETTING, "Geographic")
    # The bar is drawn at 6 % of the height (58.24 N) and sized to at most a quarter of
    # the width: 1.5 degrees of longitude on that parallel.
    from pyproj import Geod

    _, _, metres = Geod(ellps="WGS84").inv(10.3, 58.24, 11.8, 58.24)
    assert 85 < metres / 1000 < 90
    assert info.scale_bar_km == nice_length(metres / 1000) == 50.0
    assert info.north == "true north" and info.north_angle_deg == 0.0


def test_helpers():
    assert nice_length(730) == 500
    assert nice_length(300) == 250
    assert nice_length(0.9) == 0.5
    assert nice_length(0) == 0
    assert north_angle("EPSG:4326", 10, 50) == 0.0
    assert north_angle(CRS, 500_000, 7_000_000) == pytest.approx(0.0, abs=1e-6)
    assert north_angle(None, 0, 0) is None


PROSPECT_CRS = "+proj=laea +lat_0=-45 +lon_0=-140 +datum=WGS84 +units=m"


def draw_prospects(tmp_path, screens, ranks, boxes, setting_right=1):
    """A prospects map of a 500 x 400 km setting grid (left half stable interior) with one
    prospect per (screen, rank, box)."""
    from geomelt.io.quicklook import prospects_map_png

    setting = np.full((40, 50), 1, dtype=np.uint8)
    setting[:, 25:] = setting_right
    frame = gpd.GeoDataFrame(
        {"screen": screens, "rank": ranks}, geometry=[box(*b) for b in boxes], crs=PROSPECT_CRS
    )
    return prospects_map_png(
        tmp_path / "p.png",
        setting,
        Affine(10_000.0, 0, 0.0, 0, -10_000.0, 400_000.0),
        PROSPECT_CRS,
        frame,
        {"geothermal_heat_source": "#d7301f", "porphyry_cu_au_mo": "#8c510a", "vms": "#2166ac"},
        {
            "geothermal_heat_source": "Geothermal heat source",
            "porphyry_cu_au_mo": "Porphyry",
            "vms": "VMS",
        },
    )


def test_prospects_map_labels_screens_and_ranks(tmp_path):
    info = draw_prospects(
        tmp_path,
        ["porphyry_cu_au_mo", "geothermal_heat_source"],
        [1, 2],
        [(50_000, 50_000, 150_000, 150_000), (300_000, 200_000, 400_000, 300_000)],
        setting_right=6,
    )
    assert info.path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    # screens without prospects are left out of the legend; counts are shown
    assert info.legend_labels == ("Geothermal heat source (1)", "Porphyry (1)")


def test_place_labels_keeps_labels_apart():
    from geomelt.io.quicklook import place_labels

    # Far apart: left where they are.
    assert place_labels([(0.0, 0.0), (10.0, 0.0)], 1.0) == [(0.0, 0.0), (10.0, 0.0)]
    # Three on one spot: the first stays, the next go to the first free places of the
    # ring around it (straight up, then up-right), every centre at least `spacing` apart.
    spots = place_labels([(5.0, 5.0)] * 3, 2.0)
    assert spots[0] == (5.0, 5.0)
    assert spots[1] == pytest.approx((5.0, 7.0))
    for i in range(3):
        for j in range(i):
            assert np.hypot(*np.subtract(spots[i], spots[j])) >= 2.0 - 1e-9
    # On a geographic map one degree of latitude is drawn 1 / cos(lat) times longer than
    # one of longitude: the distance is measured as drawn.
    y_scale = 2.0
    spots = place_labels([(0.0, 0.0), (0.0, 0.4)], 1.0, y_scale)
    assert spots[1] != (0.0, 0.4)  # 0.8 apart as drawn: too close
    dx, dy = np.subtract(spots[1], spots[0])
    assert np.hypot(dx, dy * y_scale) >= 1.0 - 1e-9


def test_prospects_map_moves_overlapping_rank_labels(tmp_path):
    # Two screens' prospects on the same ground (as an oceanic hotspot's geothermal and
    # another screen's can be): the same representative point.
    same = (200_000, 150_000, 260_000, 210_000)
    info = draw_prospects(tmp_path, ["geothermal_heat_source", "vms"], [1, 15], [same, same])
    (x1, y1), (x2, y2) = info.label_positions
    anchor = box(*same).representative_point()
    assert (x1, y1) == pytest.approx((anchor.x, anchor.y))
    assert np.hypot(x2 - x1, y2 - y1) >= 0.035 * 500_000 - 1e-6  # map 500 x 400 km


def test_write_quicklooks_leaves_the_callers_frozen_objects_frozen(tmp_path):
    # The quick-looks freeze what lives before drawing (gc.freeze) and unfreeze after; a
    # caller that froze objects itself keeps them frozen, and no freeze is left behind.
    import gc

    from geomelt.pipeline.products import write_quicklooks

    assert gc.get_freeze_count() == 0
    assert write_quicklooks(tmp_path, tmp_path) == []  # no rasters: nothing drawn
    assert gc.get_freeze_count() == 0
    gc.freeze()
    try:
        frozen = gc.get_freeze_count()
        assert frozen > 0
        write_quicklooks(tmp_path, tmp_path)
        assert gc.get_freeze_count() == frozen
    finally:
        gc.unfreeze()
