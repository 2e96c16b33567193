"""OSM ``maxspeed`` strings against the OpenStreetMap wiki, page *Key:maxspeed*.

Values and their meanings are recalled from the wiki page (from memory, not re-read
here): plain numbers are km/h; "mph" and "knots" units; "none", "walk",
"signals"; country-implicit "XX:zone" values; semicolon lists.
"""

import math

import pytest

from tripsim.maxspeed import NONE_KPH, WALK_KPH, parse_maxspeed

MPH = 1.609344  # km per international mile (exact)
KNOT = 1.852  # km per nautical mile (exact)


@pytest.mark.parametrize(("tag", "kph"), [
    ("50", 50.0),
    ("30 mph", 30 * MPH),
    ("20mph", 20 * MPH),
    ("10 knots", 10 * KNOT),
    ("60 km/h", 60.0),
    ("none", NONE_KPH),
    ("walk", WALK_KPH),
    ("DE:urban", 50.0),
    ("DE:rural", 100.0),
    ("DE:motorway", NONE_KPH),  # German motorways: no general limit
    ("FR:rural", 80.0),
    ("GB:nsl_single", 60 * MPH),
    ("GB:nsl_dual", 70 * MPH),
    ("DE:zone30", 30.0),
    ("RU:living_street", 20.0),
    ("50;30", 30.0),
    ("7,5", 7.5),
])
def test_wiki_examples(tag, kph):
    assert parse_maxspeed(tag) == pytest.approx(kph, rel=1e-12)


@pytest.mark.parametrize("tag", ["signals", "variable"])
def test_electronic_signs_have_no_value(tag):
    assert math.isnan(parse_maxspeed(tag))
