import numpy as np
import pandas as pd
import pytest
from conftest import DEMO, make_vehicle, straight_route

from tripsim.errors import TripsimInputError
from tripsim.plan.search import PlanOptions, plan_trip
from tripsim.plan.sites import Site, parse_opening_hours
from tripsim.segments import GEOD, segment_route

CAR = dict(battery={"usable_kwh": 40.0},
           charging={"ac_max_kw": 11.0, "dc_max_kw": 120.0, "efficiency": 0.92,
                     "connectors": ["type2", "type2_combo"],
                     "curve": {"x": [0.0, 0.5, 0.8, 1.0], "y": [120.0, 100.0, 50.0, 10.0]}})
DEPART = "2026-06-01T08:00+00:00"


@pytest.fixture(scope="module")
def corridor():
    return segment_route(straight_route(400_000.0, lat0=45.0, lon0=7.0, n_points=41,
                                        speed_kph=110.0))


def sites_every(km, *, first=40.0, total=400.0, hours=None, kw=150.0, offset_m=300.0):
    out = []
    for i, d in enumerate(np.arange(first, total, km)):
        lon, lat, _ = GEOD.fwd(7.0, 45.0, 90.0, d * 1000.0)
        lon2, lat2, _ = GEOD.fwd(lon, lat, 0.0, offset_m)
        out.append(Site(f"s{i}", f"site {i} (km {d:.0f})", float(lat2), float(lon2),
                        {"type2_combo": (4, kw)}, opening=parse_opening_hours(hours)))
    return out


def test_plan_keeps_every_constraint_on_its_own_simulation(corridor):
    v = make_vehicle(**CAR)
    opts = PlanOptions(reserve_soc=0.1, arrive_soc=0.2, max_charge_soc=0.8)
    plan = plan_trip(corridor, v, sites_every(40.0), options=opts, depart=DEPART, start_soc=0.9)
    assert plan.feasible and plan.totals["charging_stops"] >= 1
    tr = plan.trip.trace
    low = np.fmin(tr["soc"], tr["soc_at_stop"])
    assert low.min() >= opts.reserve_soc - 1e-9
    assert plan.trip.summary.final_soc >= opts.arrive_soc - 1e-9
    assert all(s.depart_soc <= opts.max_charge_soc + 1e-9 for s in plan.stops)
    assert plan.totals["total_h"] > plan.totals["drive_h"]
    assert plan.totals["charger_kwh"] > 0
    kms = [s.route_km for s in plan.stops]
    assert kms == sorted(kms)


def test_time_objective_is_never_slower(corridor):
    v = make_vehicle(**CAR)
    stops = plan_trip(corridor, v, sites_every(40.0), depart=DEPART, start_soc=0.9)
    fast = plan_trip(corridor, v, sites_every(40.0), depart=DEPART, start_soc=0.9,
                     options=PlanOptions(objective="time"))
    assert fast.totals["total_h"] <= stops.totals["total_h"] + 1e-6
    assert stops.totals["charging_stops"] <= fast.totals["charging_stops"]


def test_closed_site_means_waiting(corridor):
    v = make_vehicle(**CAR)
    only = sites_every(1000.0, first=200.0, hours="Mo-Su 10:00-20:00")
    plan = plan_trip(corridor, v, only, depart="2026-06-01T07:00+00:00", start_soc=1.0,
                     options=PlanOptions(reserve_soc=0.05, arrive_soc=0.05,
                                         max_charge_soc=1.0))
    assert plan.feasible and len(plan.stops) == 1
    stop = plan.stops[0]
    assert stop.wait_min > 1.0
    starts = stop.arrive + pd.Timedelta(minutes=5 + stop.wait_min)  # park and plug, then wait
    assert abs(starts - pd.Timestamp("2026-06-01T10:00+00:00")) < pd.Timedelta(minutes=1)


def test_infeasible_trip_says_what_would_close_it(corridor):
    v = make_vehicle(**CAR)
    sparse = sites_every(1000.0, first=60.0)
    plan = plan_trip(corridor, v, sparse, depart=DEPART, start_soc=0.9)
    assert not plan.feasible and plan.stops == [] and plan.trip is None
    sf = plan.shortfall
    assert sf["shortfall_wh"] > 0 and sf["next_target"] == "the destination"
    lo, hi = sf["fixes"]["charger_between_km"]
    assert lo <= sf["fails_at_km"] + 1e-6 and hi <= sf["fails_at_km"] + 1e-6
    # a site placed where the fix says closes the trip
    lon, lat, _ = GEOD.fwd(7.0, 45.0, 90.0, sf["fixes"]["charger_near_km"] * 1000.0)
    extra = Site("fix", "added", float(lat), float(lon), {"type2_combo": (2, 150.0)})
    assert plan_trip(corridor, v, [*sparse, extra], depart=DEPART, start_soc=0.9).feasible


def test_multi_day_respects_window_and_driving_hours(corridor):
    v = make_vehicle(**CAR)
    beds = [Site(f"b{i}", f"inn {i}", s.lat_deg, s.lon_deg, {"type2": (1, 11.0)},
                 kind="lodging") for i, s in enumerate(sites_every(50.0, first=25.0))]
    opts = PlanOptions(daily_window_h=(8.0, 12.0), max_drive_h=2.0)
    plan = plan_trip(corridor, v, [*sites_every(40.0), *beds], options=opts, depart=DEPART,
                     start_soc=0.9)
    assert plan.feasible
    assert plan.totals["overnight_stops"] >= 1 and plan.totals["days"] >= 2
    tr = plan.trip.trace
    driving = tr["time_s"] > 0
    hours = (tr["clock"].dt.hour + tr["clock"].dt.minute / 60)[driving]
    assert hours.between(8.0, 12.0 + 1e-6).all()
    day = tr["clock"].dt.date
    assert (tr.groupby(day)["time_s"].sum() <= 2.0 * 3600 + 60).all()


def test_bad_plan_options(corridor):
    with pytest.raises(TripsimInputError, match="must be below the maximum charge"):
        PlanOptions(reserve_soc=0.5, max_charge_soc=0.4)
    v = make_vehicle(**CAR)
    with pytest.raises(TripsimInputError, match="shorter than the first leg"):
        plan_trip(corridor, v, sites_every(400.0, first=300.0), depart=DEPART,
                  options=PlanOptions(daily_window_h=(8.0, 9.0)))


def test_map_page_holds_route_stops_and_caution(corridor):
    from tripsim.report.mapview import plan_map_html

    v = make_vehicle(**CAR)
    plan = plan_trip(corridor, v, sites_every(40.0), depart=DEPART, start_soc=0.9)
    page = plan_map_html(plan, plan.sites, title="corridor")
    assert page.count("tripsim-stop") == len(plan.stops) >= 1
    assert "Estimates only" in page and "state of charge" in page
    assert "L.polyline" in page or "polyline" in page.lower()
    assert "other charging sites near the route" in page


def test_demo_plan_with_weather_settles():
    import tripsim
    from tripsim.io.chargers_file import read_chargers
    from tripsim.io.weather_files import read_weather

    seg = tripsim.load_segments(DEMO / "tamsreach.osm", waypoints=[
        (41.2, -31.6), (41.238669, -30.030016), (41.2, -29.331582)],
        dem=DEMO / "tamsreach_dem.tif")
    v = tripsim.read_vehicle(DEMO / "vehicles" / "parcel_mule.toml")
    plan = plan_trip(seg, v, read_chargers(DEMO / "tamsreach.osm"),
                     weather=read_weather(DEMO / "tamsreach.epw"),
                     depart="2026-07-14T08:00-02:00", start_soc=0.8)
    assert plan.feasible and 1 <= plan.rounds <= 5
    assert plan.trip.summary.solar_wh > 0


def test_overnight_sun_tops_up_a_bed_without_charger(corridor):
    from tripsim.io.weather_files import read_weather

    v = make_vehicle(**CAR, panels=[{"name": "roof", "area_m2": 3.0, "efficiency": 0.22}])
    beds = [Site(f"b{i}", f"barn {i}", s.lat_deg, s.lon_deg, kind="lodging")
            for i, s in enumerate(sites_every(50.0, first=25.0))]
    plan = plan_trip(corridor, v, [*sites_every(40.0), *beds], depart=DEPART, start_soc=0.9,
                     weather=read_weather(DEMO / "tamsreach.epw"),
                     options=PlanOptions(daily_window_h=(8.0, 12.0), max_drive_h=2.0))
    assert plan.feasible
    nights = [s for s in plan.stops if s.kind == "overnight"]
    assert nights and all(s.depart_soc > s.arrive_soc for s in nights)
