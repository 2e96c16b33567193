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
    assert wind_at_height(10.0, 1.0) / 10.0 == pytest.approx(0.1 ** (1 / 7), rel=1e-9)
    assert wind_at_height(10.0, 1.0) / 10.0 == pytest.approx(0.72, rel=0.01)
