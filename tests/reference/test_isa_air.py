"""Air density and pressure against the International Standard Atmosphere.

Source: ISO 2533:1975 / ICAO Doc 7488, Manual of the ICAO Standard Atmosphere
(values recalled from memory, not re-read here): sea level 15 °C, 101 325 Pa,
1.2250 kg/m³; lapse rate −6.5 K/km; 1000 m: 8.5 °C, 89 874.6 Pa, 1.1117 kg/m³;
2000 m: 2.0 °C, 79 495.2 Pa, 1.0066 kg/m³.
"""

import pytest

from tripsim.air import air_density, pressure_from_elevation, wind_at_height

ISA = [  # elevation m, temperature °C, pressure Pa, density kg/m³
    (0.0, 15.0, 101_325.0, 1.2250),
    (1000.0, 8.5, 89_874.6, 1.1117),
    (2000.0, 2.0, 79_495.2, 1.0066),
]


@pytest.mark.parametrize(("z", "t", "p", "rho"), ISA)
def test_density_from_isa_temperature_and_pressure(z, t, p, rho):
    assert air_density(t, p) == pytest.approx(rho, rel=1e-3)


@pytest.mark.parametrize(("z", "t", "p", "rho"), ISA)
def test_pressure_from_elevation_follows_isa(z, t, p, rho):
    assert pressure_from_elevation(z) == pytest.approx(p, rel=1e-3)
    assert air_density(t, pressure_from_elevation(z)) == pytest.approx(rho, rel=1e-3)


def test_wind_power_law_10m_to_1m():
    """Power-law wind profile, α = 1/7 over open terrain (common practice): 10 m → 1 m ≈ 0.72."""
    assert wind_at_height(10.0, 1.0) / 10.0 == pytest.approx(0.72, rel=0.01)


def test_density_on_a_pass_from_a_station_near_sea_level():
    """A weather station at 20 m reading ISA pressure: on a road at 1,500 m the air is ISA's.

    ISA at 1,500 m (ISO 2533, from memory): 5.25 °C, 84 556 Pa, 1.0581 kg/m³.  Before the
    station pressure was carried to the segment's elevation, the density there came out
    about 1.2 kg/m³.
    """
    import numpy as np
    from conftest import make_vehicle, straight_route

    from tripsim.segments import segment_route
    from tripsim.simulate import simulate
    from tripsim.weather import Weather

    station = 101_325.0 * (1 - 0.0065 * 20.0 / 288.15) ** 5.25588
    t = np.array([0.0, 400 * 86400.0])
    weather = Weather(state_s=t, irradiance_s=t, periodic=True, elevation_m=20.0,
                      state={"temp_c": np.full(2, 5.25), "pressure_pa": np.full(2, station),
                             "wind_speed_mps": np.zeros(2), "wind_from_deg": np.zeros(2)},
                      irradiance={k: np.zeros(2) for k in ("ghi_w_m2", "dni_w_m2",
                                                            "dhi_w_m2")})
    route = straight_route(2000.0, n_points=3).with_elevation(np.full(3, 1500.0), "file")
    trace = simulate(segment_route(route), make_vehicle(), weather=weather).trace
    assert trace["pressure_pa"].to_numpy() == pytest.approx(84_556.0, rel=1e-3)
    assert trace["density_kg_m3"].to_numpy() == pytest.approx(1.0581, rel=1e-3)


def test_own_barometric_formula_and_wind_profile_match_pvlib():
    """pvlib (an independent implementation) as the reference for the two one-line formulas."""
    import numpy as np
    from pvlib import atmosphere

    z = np.array([-400.0, 0.0, 750.0, 1536.0, 3000.0, 5000.0])
    np.testing.assert_allclose(pressure_from_elevation(z), atmosphere.alt2pres(z), rtol=2e-5)
    np.testing.assert_allclose(wind_at_height(np.array([3.0, 12.0]), 1.4),
                               atmosphere.windspeed_powerlaw(np.array([3.0, 12.0]), 10.0, 1.4,
                                                             exponent=1 / 7), rtol=1e-12)
