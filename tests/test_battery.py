import numpy as np
import pytest

from tripsim.battery import energy_soc, rint_soc, soc_pass


def test_energy_counting_and_full_battery_curtailment():
    r = energy_soc(np.array([100.0, -300.0, 50.0]), 1000.0, 0.95)
    assert r.soc_end.tolist() == pytest.approx([0.85, 1.0, 0.95])
    assert r.accepted_wh[1] == pytest.approx(-150.0)  # only room for 150 Wh
    assert r.stranded_index == -1


def test_stranding_point_and_no_negative_soc():
    r = energy_soc(np.array([400.0, 400.0, 400.0]), 1000.0, 1.0)
    assert r.stranded_index == 2
    assert r.stranded_fraction == pytest.approx(0.5)
    assert r.soc_end.min() >= 0.0
    assert r.accepted_wh.sum() == pytest.approx(1000.0)


def test_rint_matches_energy_model_at_zero_resistance_limit():
    p = np.full(100, 20_000.0)
    dt = np.full(100, 10.0)
    kw = dict(capacity_wh=60_000.0, start_soc=1.0, ocv_soc=np.array([0.0, 1.0]),
              ocv_v=np.array([350.0, 350.0]))
    tiny = rint_soc(p, dt, resistance_ohm=1e-6, **kw)
    ref = energy_soc(p * dt / 3600, 60_000.0, 1.0)
    np.testing.assert_allclose(tiny.soc_end, ref.soc_end, rtol=1e-6)
    lossy = rint_soc(p, dt, resistance_ohm=0.1, **kw)
    assert lossy.soc_end[-1] < tiny.soc_end[-1]
    # I = (V - sqrt(V² - 4RP)) / 2R; loss I²R
    current = (350 - np.sqrt(350**2 - 4 * 0.1 * 20_000)) / 0.2
    assert lossy.loss_wh[0] == pytest.approx(current**2 * 0.1 * 10 / 3600)


def test_rint_power_limit_is_flagged():
    r = rint_soc(np.array([1e7]), np.array([1.0]), capacity_wh=60_000.0, start_soc=1.0,
                 resistance_ohm=0.1, ocv_soc=np.array([0.0, 1.0]), ocv_v=np.array([350.0, 350.0]))
    assert r.power_limited[0]


def test_rint_power_limit_keeps_the_energy_and_adds_time():
    """Before, a capped segment kept its time and so drew less energy than it needed."""
    dt = np.array([10.0])
    kw = dict(capacity_wh=60_000.0, start_soc=1.0, resistance_ohm=0.5,
              ocv_soc=np.array([0.0, 1.0]), ocv_v=np.array([350.0, 350.0]))
    asked_w = 100_000.0  # above V²/4R = 61.25 kW
    r = rint_soc(np.array([asked_w]), dt, **kw)
    assert r.power_limited[0] and r.extra_time_s[0] > 0
    terminal_wh = r.accepted_wh[0] - r.loss_wh[0]
    assert terminal_wh == pytest.approx(asked_w * dt[0] / 3600.0, rel=1e-9)
    assert dt[0] + r.extra_time_s[0] == pytest.approx(asked_w * dt[0] / (350.0**2 / 2.0))


def test_soc_pass_rows_idle_events_and_plug():
    demand = np.array([[300.0, 300.0]])
    p = soc_pass(demand, full_wh=1000.0, usable_wh=1000.0, start_soc=1.0,
                 rows=np.array([0, -1, 0]), post_gain_wh=np.array([0.0, 50.0, 0.0]),
                 plug_after=np.array([True, True, True]), plug_below_soc=0.3, plug_wh=500.0,
                 rescue=True)
    assert p.soc_end.tolist() == pytest.approx([0.4, 0.4, 0.0])
    assert p.energy_after_wh[1] == pytest.approx(450.0)  # the idle day's sun
    assert p.rescue_wh[2] == pytest.approx(150.0)
    assert p.grid_wh.tolist() == pytest.approx([0.0, 0.0, 500.0])
