import re

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO, make_vehicle, straight_route

from tripsim.cli import main
from tripsim.errors import TripsimInputError
from tripsim.plan.search import PlanOptions, plan_trip
from tripsim.plan.sites import Site, parse_opening_hours
from tripsim.report.text import format_plan
from tripsim.segments import GEOD, segment_route

CAR = dict(battery={"usable_kwh": 40.0},
           charging={"ac_max_kw": 11.0, "dc_max_kw": 120.0, "efficiency": 0.92,
                     "connectors": ["type2", "type2_combo"],
                     "curve": {"x": [0.0, 0.5, 0.8, 1.0], "y": [120.0, 100.0, 50.0, 10.0]}})
# the corridors lie in Europe/Rome (timezonefinder): +02:00 in June, the local clock
DEPART = "2026-06-01T08:00+02:00"


@pytest.fixture(scope="module")
def corridor():
    return segment_route(straight_route(400_000.0, lat0=45.0, lon0=7.0, n_points=41,
                                        speed_kph=110.0))


@pytest.fixture(scope="module")
def short_corridor():
    """300 km at 110 km/h: about 44 kWh for CAR (40 kWh): one charge on the way."""
    return segment_route(straight_route(300_000.0, lat0=45.0, lon0=7.0, n_points=31,
                                        speed_kph=110.0))


def at_km(km, offset_m=300.0):
    """A point ``offset_m`` north of the corridors' line at ``km``: (lat, lon)."""
    lon, lat, _ = GEOD.fwd(7.0, 45.0, 90.0, km * 1000.0)
    lon2, lat2, _ = GEOD.fwd(lon, lat, 0.0, offset_m)
    return float(lat2), float(lon2)


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
    plan = plan_trip(corridor, v, only, depart="2026-06-01T07:00+02:00", start_soc=1.0,
                     options=PlanOptions(reserve_soc=0.05, arrive_soc=0.05,
                                         max_charge_soc=1.0))
    assert plan.feasible and len(plan.stops) == 1
    stop = plan.stops[0]
    assert stop.wait_min > 1.0
    starts = stop.arrive + pd.Timedelta(minutes=5 + stop.wait_min)  # park and plug, then wait
    assert abs(starts - pd.Timestamp("2026-06-01T10:00+02:00")) < pd.Timedelta(minutes=1)


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


def test_bad_plan_options():
    with pytest.raises(TripsimInputError, match="must be below the maximum charge"):
        PlanOptions(reserve_soc=0.5, max_charge_soc=0.4)


def test_days_too_short_name_their_option(corridor):
    """A first leg longer than a day's driving is no plan, with the option that limits the
    day: the window, or the driving hours when there is no window."""
    v = make_vehicle(**CAR)
    sites = sites_every(40.0)  # chargers enough, no place to sleep
    short = plan_trip(corridor, v, sites, depart=DEPART,
                      options=PlanOptions(daily_window_h=(8.0, 9.0)))
    sf = short.shortfall
    assert not short.feasible and sf["reason"] == "days"
    assert sf["limited_by"] == "--daily-window" and sf["next_target"] == "the destination"
    drive = plan_trip(corridor, v, sites, depart=DEPART, options=PlanOptions(max_drive_h=1.0))
    assert drive.shortfall["reason"] == "days" and drive.shortfall["limited_by"] == "--max-drive-h"
    text = format_plan(drive, [])
    assert "1.0 h of driving (--max-drive-h)" in text and "--daily-window" not in text
    # the day the diagnosis asks for gives a plan (it was tried on the planner)
    day_h = drive.shortfall["fixes"]["day_h"]
    assert plan_trip(corridor, v, sites, depart=DEPART,
                     options=PlanOptions(max_drive_h=day_h)).feasible


def test_days_diagnosis_names_the_gap_and_a_lodging_closes_it(corridor):
    v = make_vehicle(**CAR)
    beds = [Site(f"b{i}", f"inn {i}", *at_km(km), kind="lodging") for i, km in
            enumerate((100.0, 300.0))]
    opts = PlanOptions(daily_window_h=(8.0, 9.5))
    plan = plan_trip(corridor, v, [*sites_every(40.0), *beds], options=opts, depart=DEPART,
                     start_soc=0.9)
    sf = plan.shortfall
    assert sf["reason"] == "days" and sf["stuck_after"] == "inn 0"
    assert sf["next_target"] == "inn 1" and sf["leg_h"] > 1.5
    lo, hi = sf["fixes"]["lodging_between_km"]
    assert 100.0 < lo < hi < 300.0
    extra = Site("bx", "added inn", *at_km(0.5 * (lo + hi)), kind="lodging")
    assert plan_trip(corridor, v, [*sites_every(40.0), *beds, extra], options=opts,
                     depart=DEPART, start_soc=0.9).feasible


def test_diagnosis_when_the_charge_lasts_to_the_end_but_not_the_arrival_soc(corridor):
    """Issue 7 (c): the shortfall index ran past the route when the reserve is never reached
    but the arrival SoC is not met (IndexError); now the destination is the target."""
    v = make_vehicle(**CAR)
    plan = plan_trip(corridor, v, sites_every(1000.0, first=200.0), depart=DEPART,
                     start_soc=0.9, options=PlanOptions(arrive_soc=0.7, max_charge_soc=1.0))
    sf = plan.shortfall
    assert sf["reason"] == "energy" and sf["stuck_after"] == "site 0 (km 200)"
    assert sf["next_target"] == "the destination" and sf["fails_at_km"] == pytest.approx(400.0)
    assert 0.0 < sf["fixes"]["arrive_soc"] < 0.7
    assert plan_trip(corridor, v, sites_every(1000.0, first=200.0), depart=DEPART,
                     start_soc=0.9,
                     options=PlanOptions(arrive_soc=sf["fixes"]["arrive_soc"],
                                         max_charge_soc=1.0)).feasible


def test_infeasible_text_says_the_start_soc(corridor):
    v = make_vehicle(**CAR)
    plan = plan_trip(corridor, v, sites_every(1000.0, first=390.0), depart=DEPART,
                     start_soc=0.5)
    assert plan.shortfall["stuck_after"] == "the start"
    text = format_plan(plan, [])
    assert "leaving the start (km 0) with 50 %" in text and "full charge" not in text


def test_map_page_holds_route_stops_and_caution(corridor):
    from tripsim.io.web_assets import read_leaflet
    from tripsim.report.mapview import MapAssets, plan_map_html

    v = make_vehicle(**CAR)
    plan = plan_trip(corridor, v, sites_every(40.0), depart=DEPART, start_soc=0.9)
    page = plan_map_html(plan, plan.sites, title="corridor",
                         assets=MapAssets.inline(*read_leaflet()))
    assert page.count("tripsim-stop-item") == len(plan.stops) >= 1
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


def test_driving_starts_when_the_window_opens(corridor):
    """Issue 7 (d): with a 09:00-17:00 window a departure at 08:00 drives from 09:00, and a
    departure after 17:00 the next morning; the plan says so."""
    v = make_vehicle(**CAR)
    beds = [Site(f"b{i}", f"inn {i}", *at_km(km), kind="lodging") for i, km in
            enumerate((150.0, 250.0))]
    opts = PlanOptions(daily_window_h=(9.0, 17.0))
    plan = plan_trip(corridor, v, [*sites_every(40.0), *beds], options=opts,
                     depart="2026-06-01T08:00+02:00", start_soc=0.9)
    assert plan.feasible
    assert plan.trip.trace["clock"].iloc[0] == pd.Timestamp("2026-06-01T09:00+02:00")
    assert plan.totals["depart"] == "2026-06-01T09:00:00+02:00"
    assert any("window opens" in n and "08:00:00" in n for n in plan.notes)
    late = plan_trip(corridor, v, [*sites_every(40.0), *beds], options=opts,
                     depart="2026-06-01T18:30+02:00", start_soc=0.9)
    assert late.totals["depart"] == "2026-06-02T09:00:00+02:00"


def test_a_long_wait_for_a_charger_is_a_night(short_corridor):
    """Issue 7 (e): the only charger opens 08:00-09:00 and is reached at 09:20.  Without a
    window the plan waits there overnight: counted and shown as a night (it was "0
    nights").  With a window the charge must fit in a driving day: the night is spent at
    the inn before it, and no charging stop spans the end of a day."""
    v = make_vehicle(**CAR)
    hall = Site("c", "Morning Hall", *at_km(150.0), {"type2_combo": (2, 150.0)},
                opening=parse_opening_hours("Mo-Su 08:00-09:00"))
    inn = Site("b", "Roadside Inn", *at_km(145.0), kind="lodging")
    plain = plan_trip(short_corridor, v, [hall], depart=DEPART, start_soc=0.9)
    (stop,) = plain.stops
    assert stop.minutes > 20 * 60 and stop.nights == 1
    assert plain.totals["nights"] == 1 and plain.totals["days"] == 2
    text = format_plan(plain, [])
    assert "1 night(s), 2 driving day(s)" in text and "1 night(s) here" in text
    assert any("Morning Hall" in n and "--daily-window" in n for n in plain.notes)
    days = plan_trip(short_corridor, v, [hall, inn], depart=DEPART, start_soc=0.9,
                     options=PlanOptions(daily_window_h=(8.0, 18.0)))
    assert days.feasible and days.totals["nights"] == 1
    assert [s.kind for s in days.stops] == ["overnight", "charge"]
    for s in days.stops:  # a stop that spans 18:00 is a night
        spans = s.depart.normalize() > s.arrive.normalize() or s.depart.hour >= 18
        assert spans == (s.nights > 0)


def test_stop_shows_the_power_the_vehicle_can_draw(short_corridor):
    """Issue 7 (e): the lesser of site and vehicle limit, AC or DC, beside the site's rating."""
    v = make_vehicle(**CAR)  # AC 11 kW, DC 120 kW
    dc = plan_trip(short_corridor, v, [Site("d", "Quay", *at_km(150.0),
                                            {"type2_combo": (2, 150.0)})],
                   depart=DEPART, start_soc=0.9)
    (stop,) = dc.stops
    assert (stop.power_kw, stop.site_kw) == (120.0, 150.0)
    assert "type2_combo 120 kW (site 150 kW)" in format_plan(dc, [])
    ac = plan_trip(short_corridor, v, [Site("a", "Barn", *at_km(150.0), {"type2": (1, 22.0)})],
                   depart=DEPART, start_soc=0.9)
    assert (ac.stops[0].power_kw, ac.stops[0].site_kw) == (11.0, 22.0)


def test_ties_go_to_the_least_charging(short_corridor):
    """Issue 7 (f): a slow 11 kW charger on the road and a fast one 14 km off it, then a
    night at an inn: both plans have one charging stop and one night and arrive at the same
    time; the fast charge (about 12 min instead of over an hour) is chosen."""
    v = make_vehicle(**CAR)
    sites = [Site("a", "Slow Barn", *at_km(150.0, 50.0), {"type2": (1, 11.0)}),
             Site("z", "Fast Yard", *at_km(150.0, 14000.0), {"type2_combo": (2, 150.0)}),
             Site("b", "Hill Inn", *at_km(230.0), kind="lodging")]
    opts = PlanOptions(daily_window_h=(8.0, 11.5), max_offset_m=20000.0, max_charge_soc=1.0)
    plan = plan_trip(short_corridor, v, sites, options=opts, depart=DEPART, start_soc=1.0)
    assert [s.name for s in plan.stops] == ["Fast Yard", "Hill Inn"]
    assert plan.stops[0].charge_min < 20.0
    slow = plan_trip(short_corridor, v, [sites[0], sites[2]], options=opts, depart=DEPART,
                     start_soc=1.0)
    assert slow.stops[0].charge_min > 60.0  # the other plan: the same stops and arrival
    assert (slow.totals["charging_stops"], slow.totals["nights"], slow.totals["arrive"]) == (
        plan.totals["charging_stops"], plan.totals["nights"], plan.totals["arrive"])


def _seconds(hms):
    h, m, s = (int(x) for x in hms.split(":"))
    return 3600 * h + 60 * m + s


def test_the_time_line_adds_up_and_clocks_are_to_the_second(short_corridor):
    """Driving + charging + stop overhead + detours + waiting + nights = total, in the
    totals and in the text; clocks in every output to the second."""
    v = make_vehicle(**CAR)
    hall = Site("c", "Morning Hall", *at_km(150.0), {"type2_combo": (2, 150.0)},
                opening=parse_opening_hours("Mo-Su 10:00-20:00"))
    plan = plan_trip(short_corridor, v, [hall], depart=DEPART, start_soc=0.9)
    t = plan.totals
    assert t["wait_h"] > 0.5 and t["detour_h"] > 0 and t["overhead_h"] > 0
    parts = sum(t[k] for k in ("drive_h", "charge_h", "overhead_h", "detour_h", "wait_h",
                               "night_h"))
    assert parts == pytest.approx(t["total_h"], abs=1e-9)
    assert t["total_h"] == pytest.approx(plan.trip.summary.duration_h, abs=1e-9)
    text = format_plan(plan, [])
    line = next(r for r in text.splitlines() if "time line" in r)
    pieces = re.findall(r"(\d+:\d\d:\d\d) ", line)
    assert sum(_seconds(p) for p in pieces[:-1]) == _seconds(pieces[-1])
    assert _seconds(pieces[-1]) == round(t["total_h"] * 3600)
    arrive = pd.Timestamp(t["arrive"])
    assert f"arrive {arrive:%a %d %b %H:%M:%S}" in text
    clock = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d[+-]\d\d:\d\d$")
    d = plan.to_dict()
    stamps = [d["depart"], d["arrive"], *(s[k] for s in d["stops"] for k in ("arrive",
                                                                           "depart"))]
    assert all(clock.match(x) for x in stamps), stamps
    assert all(clock.match(x) for x in plan.stops_table()["arrive"])


def test_opening_hours_a_user_wrote_are_checked_and_osm_ones_are_noted(tmp_path,
                                                                      short_corridor):
    """Issue 8 (7): bad hours in a user's CSV are an error naming file and line; hours in
    OSM data that tripsim cannot read are assumed open and the plan names the site."""
    from tripsim.io.chargers_file import read_chargers

    bad = tmp_path / "sites.csv"
    bad.write_text("lat,lon,name,connector,hours\n45.0,7.0,A,type2,24/7\n"
                   "45.1,7.0,B,type2,Mo-Su 25:00-26:00\n")
    with pytest.raises(TripsimInputError, match=r"sites.csv: line 3: hours = 'Mo-Su "
                                                 r"25:00-26:00' is not understood"):
        read_chargers(bad)
    lat, lon = at_km(150.0)
    osm = tmp_path / "sites.osm"
    osm.write_text(
        "<?xml version='1.0' encoding='UTF-8'?>\n<osm version='0.6'>\n"
        f"<node id='1' lat='{lat}' lon='{lon}'><tag k='amenity' v='charging_station'/>"
        "<tag k='name' v='Dusk Yard'/><tag k='socket:type2_combo' v='2'/>"
        "<tag k='opening_hours' v='sunrise-sunset'/></node>\n</osm>\n")
    (site,) = read_chargers(osm)
    assert not site.opening.understood and site.opening.always
    plan = plan_trip(short_corridor, make_vehicle(**CAR), [site], depart=DEPART, start_soc=0.9)
    assert plan.feasible and plan.stops[0].name == "Dusk Yard"
    assert any("Dusk Yard" in n and "sunrise-sunset" in n and "assumed open" in n
               for n in plan.notes)
    assert parse_opening_hours("Mo-Su off").never


DEMO_PLAN = ["plan", str(DEMO / "tamsreach.osm"), "--vehicle",
             str(DEMO / "vehicles" / "parcel_mule.toml"), "--chargers",
             str(DEMO / "tamsreach.osm"), "--dem", str(DEMO / "tamsreach_dem.tif"),
             "--waypoints", "41.2,-31.6;41.238669,-30.030016;41.2,-29.331582",
             "--depart", "2026-07-14T08:00-02:00", "--start-soc", "0.8"]


def test_issue_command_with_a_short_window_says_what_breaks(capsys):
    """Issue 7 (c): this command ended in an IndexError in the diagnosis."""
    code = main([*DEMO_PLAN, "--daily-window", "08:00-09:30", "--lodging",
                 str(DEMO / "lodgings.csv")])
    out = capsys.readouterr().out
    assert code == 3
    assert "do not fit together" in out and "Ostrey Mill Rooms" in out
    assert "would close it" in out and "departure Tue 14 Jul 08:00:00 with 80 %" in out


def test_plan_cli_speed_factors_alternatives_and_exit_status(capsys, tmp_path):
    code = main([*DEMO_PLAN, "--speed-factors", "0.9,1.05"])
    out = capsys.readouterr().out
    assert code == 0
    for f in ("0.90", "1.05"):
        line = next(r for r in out.splitlines() if r.startswith(f"  {f} × the limits"))
        assert re.search(r"\d stop\(s\), \d night\(s\), arrive \w{3} \d\d \w{3} "
                         r"\d\d:\d\d:\d\d", line), line
    gpx = str(DEMO / "harbour_loop.gpx")
    route_file = [*DEMO_PLAN[:2], "--vehicle", DEMO_PLAN[3], "--chargers", DEMO_PLAN[5]]
    route_file[1] = gpx
    assert main([*route_file, "--alternatives", "2"]) == 2
    err = capsys.readouterr().err
    assert "--alternatives" in err and "harbour_loop.gpx is a fixed route" in err
    assert main([*DEMO_PLAN[:-6], "--waypoints", "41.2,-31.6;41.238669,-30.030016;41.2,-29.3",
                 "--alternatives", "3"]) == 2
    assert "3 waypoints given" in capsys.readouterr().err
    with pytest.raises(SystemExit):
        main(["plan", "--help"])
    assert "3 no plan keeps every constraint" in capsys.readouterr().out


def test_charge_and_days_both_short_are_both_said(corridor):
    v = make_vehicle(**CAR)
    plan = plan_trip(corridor, v, sites_every(400.0, first=300.0), depart=DEPART,
                     options=PlanOptions(daily_window_h=(8.0, 9.0)))
    sf = plan.shortfall
    assert sf["reason"] == "energy" and sf["days"]["limited_by"] == "--daily-window"
    text = format_plan(plan, [])
    assert "the charge runs short" in text and "too short as well" in text
