import numpy as np
import pytest
from conftest import DEMO, make_vehicle, straight_route

from tripsim.errors import RouteError, TripsimInputError
from tripsim.fleet.year import ChargingPolicy, Schedule, check_loop, fleet_year
from tripsim.io.weather_files import read_weather
from tripsim.route import Route
from tripsim.segments import segment_route

ROOF = [{"name": "roof", "area_m2": 4.0, "efficiency": 0.21, "tilt_deg": 0.0}]


@pytest.fixture(scope="module")
def epw():
    return read_weather(DEMO / "tamsreach.epw")


@pytest.fixture(scope="module")
def loop():
    out = segment_route(straight_route(6000.0, lat0=41.2, lon0=-31.6, azimuth_deg=45.0,
                                       n_points=7, speed_kph=50.0))
    lat = np.r_[out["lat_deg"], out["lat_end_deg"].iloc[-1], out["lat_deg"].iloc[::-1]]
    lon = np.r_[out["lon_deg"], out["lon_end_deg"].iloc[-1], out["lon_deg"].iloc[::-1]]
    return segment_route(Route(lat_deg=lat, lon_deg=lon, speed_limit_kph=np.full(lat.size - 1,
                                                                                  50.0)))


def van(**kw):
    return make_vehicle(panels=kw.pop("panels", ROOF), **kw)


def test_schedule_and_policy_parsing():
    s = Schedule.parse("Mon-Fri@08:00,13:30", -2.0)
    assert s.departures_h == (8.0, 13.5) and s.weekdays == frozenset(range(5))
    assert Schedule.parse("Sat-Mon@07:15").weekdays == frozenset({5, 6, 0})
    assert Schedule.parse("06:00").weekdays == frozenset(range(7))
    for bad in ("Funday@08:00", "Mon@25:00", "Mon@8h"):
        with pytest.raises(TripsimInputError, match="--schedule"):
            Schedule.parse(bad)
    p = ChargingPolicy.parse("plug-below:0.25:11:6")
    assert (p.kind, p.threshold_soc, p.power_kw, p.hours) == ("plug-below", 0.25, 11.0, 6.0)
    assert ChargingPolicy.parse("solar-only").kind == "solar-only"
    for bad in ("plug-below", "plug-below:x", "grid"):
        with pytest.raises(TripsimInputError, match="--policy"):
            ChargingPolicy.parse(bad)


def test_loop_must_close():
    open_route = segment_route(straight_route(3000.0))
    with pytest.raises(RouteError, match=r"does not close: it ends 3\.00 km from its start"):
        check_loop(open_route)


def test_overlapping_schedule_is_refused(loop, epw):
    with pytest.raises(TripsimInputError, match="overlaps the next departure at 08:10"):
        fleet_year(loop, van(), epw, schedule=Schedule((8.0, 8.1667), utc_offset_h=-2.0),
                   days=7, size_search=False)


def test_year_table_and_totals(loop, epw):
    r = fleet_year(loop, van(), epw, schedule=Schedule.parse("Mon-Fri@08:00", -2.0),
                   size_search=False)
    d = r.daily
    assert len(d) == 365 and r.totals["days"] == 261
    assert {"km", "drive_wh", "solar_drive_wh", "solar_parked_wh", "soc_start", "soc_end",
            "soc_min", "grid_wh", "closed_on_solar", "stranded", "stranded_at_km"} <= set(d)
    assert d["soc_end"].between(0, 1).all()
    assert (d.loc[d["runs"] == 0, "km"] == 0).all()
    summer = d["date"].astype(str).str[5:7].isin(["06", "07"])
    assert d.loc[summer, "solar_parked_wh"].mean() > 2 * d.loc[~summer, "solar_parked_wh"].min()
    t = r.totals
    assert t["share_closed"] == pytest.approx(t["days_closed"] / t["days"])
    # solar km are the solar energy at the consumption before solar (identities)
    assert t["solar_km"] == pytest.approx(t["solar_kwh"] * 1000.0 / t["wh_per_km_before_solar"])
    assert t["wh_per_km_before_solar"] == pytest.approx(t["drive_kwh"] * 1000.0 / t["km"])
    # a 12 km loop a day on 4 m² of panels in a sunny year closes nearly always
    assert t["share_closed"] > 0.8 and t["solar_km"] > 0


def test_no_panels_solar_only_never_closes_and_plug_policy_pays_grid(loop, epw):
    bare = make_vehicle(battery={"usable_kwh": 20.0})
    sched = Schedule.parse("Mon-Sun@08:00,15:00", -2.0)
    solar_only = fleet_year(loop, bare, epw, schedule=sched, size_search=False).totals
    assert solar_only["days_closed"] == 0 and solar_only["days_stranded"] > 300
    plug = fleet_year(loop, bare, epw, schedule=sched, size_search=False,
                      policy=ChargingPolicy.parse("plug-below:0.5")).totals
    assert plug["days_stranded"] == 0
    assert plug["grid_kwh"] == pytest.approx(plug["drive_kwh"], rel=0.1)


def test_sizing_search_reaches_the_target(loop, epw):
    v = van(panels=[{"name": "roof", "area_m2": 1.0, "efficiency": 0.2}],
            battery={"usable_kwh": 5.0})
    sched = Schedule.parse("Mon-Fri@08:00,13:00", -2.0)
    r = fleet_year(loop, v, epw, schedule=sched, target_share=0.8)
    area = r.totals["min_panel_m2_for_target"]
    assert area is not None and area > 1.0
    bigger = van(panels=[{"name": "roof", "area_m2": area * 1.02, "efficiency": 0.2}],
                 battery={"usable_kwh": 5.0})
    assert fleet_year(loop, bigger, epw, schedule=sched,
                      size_search=False).totals["share_closed"] >= 0.8


def test_bad_fleet_options(loop, epw):
    with pytest.raises(TripsimInputError, match="--days"):
        fleet_year(loop, van(), epw, days=0)
    with pytest.raises(TripsimInputError, match="--target"):
        fleet_year(loop, van(), epw, target_share=0.0)


def test_rescue_energy_is_named_and_not_called_grid(loop, epw):
    bare = make_vehicle(battery={"usable_kwh": 3.0})
    sched = Schedule.parse("Mon-Sun@08:00,15:00", zone="Etc/GMT+2")
    r = fleet_year(loop, bare, epw, schedule=sched,
                   days=10, size_search=False)
    d, t = r.daily, r.totals
    assert d["stranded"].all() and (d["rescue_wh"] > 0).all()
    assert t["grid_kwh"] == 0.0 and t["rescue_kwh"] > 0


def test_sizing_says_when_the_panels_do_not_fit(loop, epw):
    v = van(panels=[{"name": "roof", "area_m2": 1.0, "efficiency": 0.2}],
            battery={"usable_kwh": 5.0}, body={"max_panel_area_m2": 1.2})
    r = fleet_year(loop, v, epw, schedule=Schedule.parse("Mon-Fri@08:00,13:00", -2.0),
                   target_share=0.8)
    t = r.totals
    assert t["min_panel_m2_for_target"] > 1.2 and t["panel_fits"] is False
    assert any("more than the vehicle can carry" in w for w in t["warnings"])
    assert t["battery_search_kwh"] == [1.0, 1000.0] and t["panel_search_m2"] == [0.0, 40.0]


def test_far_weather_station_is_warned(loop, epw):
    from dataclasses import replace

    far = replace(epw, latitude=epw.latitude + 5.0)
    r = fleet_year(loop, van(), far, days=3, size_search=False)
    assert any("km from the loop" in w for w in r.totals["warnings"])
    near = fleet_year(loop, van(), epw, days=3, size_search=False)
    assert not near.totals["warnings"]


def test_schedule_follows_daylight_saving():
    """08:00 local leaves at 07:00 UTC before the spring change and 06:00 UTC after it."""
    import pandas as pd

    from tripsim.fleet.year import _departures

    sched = Schedule.parse("Mon-Sun@08:00", zone="Europe/Berlin")
    dates = pd.date_range(pd.Timestamp("2026-03-28").tz_localize("Europe/Berlin"), periods=3,
                          freq="D")
    _, dep = _departures(sched, dates)
    hours = pd.to_datetime(dep, unit="s", utc=True).hour.tolist()
    assert hours == [7, 6, 6]


def test_the_sun_above_58_degrees_is_not_cut_off():
    """Before, the fleet assumed the sun is down 9 h from solar noon, false in a northern summer."""
    import pandas as pd

    from tripsim.parking import parked_solar
    from tripsim.vehicle import PanelFacet
    from tripsim.weather import clear_sky_weather

    start = pd.Timestamp("2026-06-20T00:00Z")
    w = clear_sky_weather(65.0, 0.0, start, start + pd.Timedelta(days=2))
    park = parked_solar([PanelFacet(area_m2=1.0, efficiency=0.2)], w, start,
                        start + pd.Timedelta(days=1), latitude=65.0, longitude=0.0)
    t0 = park.epoch_s[0]
    evening = park.energy_wh(np.array([t0 + 21.1 * 3600]), np.array([t0 + 22.5 * 3600]))[0]
    assert evening > 0.3  # Wh: the sun is still up after 21:00 solar time


def test_parked_cells_are_cooled_by_wind_at_their_height():
    import pandas as pd

    from tripsim.parking import parked_solar
    from tripsim.vehicle import PanelFacet
    from tripsim.weather import clear_sky_weather

    start = pd.Timestamp("2026-06-21T00:00-02:00")
    w = clear_sky_weather(41.2, -31.6, start, start + pd.Timedelta(days=2), temp_c=30.0,
                          wind_speed_mps=8.0)
    kw = dict(latitude=41.2, longitude=-31.6)
    low = parked_solar([PanelFacet(area_m2=1.0, efficiency=0.2)], w, start,
                       start + pd.Timedelta(days=1), height_m=1.2, **kw)
    mast = parked_solar([PanelFacet(area_m2=1.0, efficiency=0.2)], w, start,
                        start + pd.Timedelta(days=1), height_m=10.0, **kw)
    assert low.cum_wh[-1] < mast.cum_wh[-1]  # less wind near the ground, warmer cells
