"""Segment lengths and headings against geodesics.

Sources: pyproj.Geod on WGS84 (Karney 2013, "Algorithms for geodesics", J. Geodesy
87) as the independent library; and the classic worked example of Vincenty
(1975) as used by Geoscience Australia, from memory: Flinders Peak
(37°57′03.72030″ S, 144°25′29.52440″ E) to Buninyong (37°39′10.15610″ S,
143°55′35.38390″ E) on the GRS80/WGS84 ellipsoid: 54 972.271 m, forward
azimuth 306°52′05.37″.
"""

import numpy as np
import pytest
from pyproj import Geod

from tripsim.route import Route
from tripsim.segments import segment_route


def dms(d, m, s):
    return np.sign(d) * (abs(d) + m / 60 + s / 3600)


def test_flinders_peak_to_buninyong():
    lat = [dms(-37, 57, 3.72030), dms(-37, 39, 10.15610)]
    lon = [dms(144, 25, 29.52440), dms(143, 55, 35.38390)]
    seg = segment_route(Route(lat_deg=lat, lon_deg=lon), max_length_m=25.0)
    assert seg["length_m"].sum() == pytest.approx(54_972.271, abs=0.002)
    assert seg["heading_deg"].iloc[0] == pytest.approx(dms(306, 52, 5.37), abs=1e-3)


def test_wandering_route_against_pyproj():
    rng = np.random.default_rng(11)
    lat = 60.0 + np.cumsum(rng.normal(0, 0.004, 80))
    lon = 10.0 + np.cumsum(np.abs(rng.normal(0.006, 0.004, 80)))
    seg = segment_route(Route(lat_deg=lat, lon_deg=lon), max_length_m=25.0)
    geod = Geod(ellps="WGS84")
    assert seg["length_m"].sum() == pytest.approx(geod.line_length(lon, lat), rel=1e-4)
    # heading at each segment's middle, from an independent inverse solution
    az, _, _ = geod.inv(seg["lon_deg"], seg["lat_deg"], seg["lon_end_deg"], seg["lat_end_deg"])
    diff = (seg["heading_deg"] - np.mod(az, 360) + 180) % 360 - 180
    assert np.abs(diff).max() < 0.01
