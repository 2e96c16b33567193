import pytest
from conftest import DEMO

from tripsim.errors import TripsimInputError
from tripsim.inputs import parse_waypoints
from tripsim.io.trips_file import read_fleets, read_plans, read_trips


def test_demo_trip_list():
    trips = read_trips(DEMO / "trips.toml")
    assert {t.name for t in trips} >= {"coast-to-pellisford", "harbour-loop"}
    assert all(t.route.is_file() for t in trips)
    assert read_fleets(DEMO / "trips.toml")[0].weather.is_file()
    assert read_plans(DEMO / "trips.toml")[0].lodging.is_file()


def test_bad_trip_list(tmp_path):
    p = tmp_path / "t.toml"
    p.write_text('[[trip]]\nname = "x"\nroute = "a.gpx"\nvehicles = []\ntemp_c = 99\n')
    with pytest.raises(TripsimInputError, match=r"\[trip #1\] temp_c = 99"):
        read_trips(p)
    p.write_text("")
    with pytest.raises(TripsimInputError, match="no \\[\\[trip\\]\\] tables"):
        read_trips(p)


def test_waypoint_parsing():
    assert parse_waypoints("41.2,-31.6; 41.3,-31.5") == [(41.2, -31.6), (41.3, -31.5)]
    with pytest.raises(TripsimInputError, match="waypoint 2"):
        parse_waypoints("41.2,-31.6;91,0")
    with pytest.raises(TripsimInputError, match="at least 2"):
        parse_waypoints("41.2,-31.6")


def test_trip_list_numbers_are_strict(tmp_path):
    p = tmp_path / "t.toml"
    head = '[[trip]]\nname = "x"\nroute = "a.gpx"\nvehicles = ["v"]\n'
    p.write_text(head + "temp_c = 12\n")
    assert read_trips(p)[0].temp_c == 12.0
    for line, match in [("temp_c = true", r"\[trip #1\] temp_c = True: Input should be a valid "
                         "number"), ("start_soc = nan", "finite number"),
                        ("wind_speed_mps = '3'", "valid number")]:
        p.write_text(head + line + "\n")
        with pytest.raises(TripsimInputError, match=match):
            read_trips(p)
    p.write_text("trip = 5\n")
    with pytest.raises(TripsimInputError, match=r"trip must be an array of tables"):
        read_trips(p)
