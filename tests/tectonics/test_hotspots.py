"""Hotspot excess temperature per cell (Gaussian radial profile, geodesic distances)."""

from __future__ import annotations

import numpy as np
import pytest
from pyproj import Geod

from geomelt.tectonics.hotspots import HotspotSet, hotspot_excess_temperature_k

GEOD = Geod(ellps="WGS84")  # reference: pyproj.Geod (Karney 2013, J. Geodesy 87:43)


def one(lon, lat, dt=200.0, radius=300.0):
    return HotspotSet(np.array([lon]), np.array([lat]), np.array([dt]), np.array([radius]))


@pytest.mark.parametrize(
    ("hlon", "hlat", "az"),
    [(0.0, 0.0, 90.0), (-140.0, -45.0, 30.0), (179.5, 10.0, 90.0), (20.0, 78.0, 180.0)],
    ids=["equator", "mid-latitude", "antimeridian", "high-latitude"],
)
def test_profile_follows_geodesic_distance(hlon, hlat, az):
    dists_km = np.array([0.0, 150.0, 300.0, 600.0])
    lons, lats, _ = GEOD.fwd(np.full(4, hlon), np.full(4, hlat), np.full(4, az), dists_km * 1000)
    got = hotspot_excess_temperature_k(np.asarray(lons), np.asarray(lats), one(hlon, hlat))
    expected = 200.0 * np.exp(-((dists_km / 300.0) ** 2))  # the documented Gaussian profile
    # Distances come from Lambert's formula, within 2e-6 of Karney's geodesic; the
    # Gaussian turns a relative distance error e into 2 (r/R)^2 e, i.e. 8 e at r = 2R.
    np.testing.assert_allclose(got, expected, rtol=8 * 2e-6, atol=1e-9)
    implied_km = 300.0 * np.sqrt(-np.log(got[1:] / 200.0))
    np.testing.assert_allclose(implied_km, dists_km[1:], rtol=2e-6)


def test_overlapping_plumes_take_the_larger_excess():
    hs = HotspotSet(
        np.array([0.0, 0.5]),
        np.array([0.0, 0.0]),
        np.array([100.0, 250.0]),
        np.array([200.0, 200.0]),
    )
    got = hotspot_excess_temperature_k(np.array([0.0, 0.5]), np.array([0.0, 0.0]), hs)
    assert got[1] == pytest.approx(250.0)
    assert 100.0 <= got[0] < 250.0


def test_far_cells_and_invalid_hotspots_give_zero_and_nan_stays_nan():
    hs = HotspotSet(
        np.array([0.0, 10.0]),
        np.array([0.0, 0.0]),
        np.array([np.nan, 150.0]),
        np.array([200.0, 0.0]),
    )
    got = hotspot_excess_temperature_k(np.array([0.0, 40.0, np.nan]), np.array([0.0, 0.0, 0.0]), hs)
    assert got[0] == 0.0 and got[1] == 0.0 and np.isnan(got[2])
