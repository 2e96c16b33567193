"""The demo against its committed results: a regression guard, not a reference.

The numbers in ``routes_demo/results/summary.json`` were written by tripsim itself, so these
tests only say that the demo still computes what it computed when the results were last
regenerated (``tripsim demo --out routes_demo/results --no-traces``, after a deliberate change
of physics).  They cannot say whether those numbers are right.  Every figure guarded here also
rests on checks against outside sources in ``tests/reference/``; docs/REFERENCES.md lists
which reference test covers which figure (energy per km, regeneration, time, state of charge,
solar per year, charging time, plan stops, coast-down fit).
"""

import json

import pytest
from conftest import DEMO

from tripsim.cli import main

KEYS = ("distance_km", "duration_h", "battery_wh", "final_soc", "min_soc", "regen_wh")


@pytest.fixture(scope="module")
def fresh(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    assert main(["demo", "--out", str(out), "--no-traces"]) == 0
    return json.loads((out / "summary.json").read_text()), out


def test_demo_matches_committed_results(fresh):
    """The committed results are what the demo computes (regenerate them when physics changes:
    ``tripsim demo --out routes_demo/results --no-traces``)."""
    now, _ = fresh
    committed = json.loads((DEMO / "results" / "summary.json").read_text())
    assert set(now["trips"]) == set(committed["trips"])
    for name, s in committed["trips"].items():
        for key in KEYS:
            assert now["trips"][name][key] == pytest.approx(s[key], rel=1e-6, abs=1e-9), (name, key)


def test_demo_fleet_matches_committed_results(fresh):
    now, _ = fresh
    committed = json.loads((DEMO / "results" / "summary.json").read_text())["fleets"]
    for name, f in committed.items():
        for key in ("share_closed", "grid_kwh", "solar_kwh", "days_stranded"):
            assert now["fleets"][name]["totals"][key] == pytest.approx(f["totals"][key],
                                                                       rel=1e-6, abs=1e-9)
        for key, s in f["solar_year_solar_only"].items():
            assert now["fleets"][name]["solar_year_solar_only"][key]["solar_kwh"] == (
                pytest.approx(s["solar_kwh"], rel=1e-6, abs=1e-9))


def test_demo_plans_match_committed_results(fresh):
    now, out = fresh
    committed = json.loads((DEMO / "results" / "summary.json").read_text())["plans"]
    for name, p in committed.items():
        mine = now["plans"][name]
        assert mine["feasible"] == p["feasible"]
        for key in ("charging_stops", "overnight_stops", "days"):
            assert mine[key] == p[key], (name, key)
        assert mine["total_h"] == pytest.approx(p["total_h"], rel=1e-6)
        assert [s["name"] for s in mine["stops"]] == [s["name"] for s in p["stops"]]
        assert (out / f"{name}--map.html").is_file()
    assert any(p["overnight_stops"] >= 1 for p in now["plans"].values())  # a multi-day trip


def test_demo_writes_figures_and_caution(fresh, capsys):
    now, out = fresh
    assert "Estimates only" in now["caution"]
    assert len(list(out.glob("*.png"))) == 10
    assert any(s["stranded"] for s in now["trips"].values())  # the van cannot cross the pass


def test_demo_coastdown_matches_committed_results(fresh):
    now, out = fresh
    committed = json.loads((DEMO / "results" / "summary.json").read_text())["coastdown"]
    mine = now["coastdown"]
    for key in ("cda_m2", "crr", "f0_n", "f1_n_per_mps", "f2_n_per_mps2"):
        assert mine[key] == pytest.approx(committed[key], rel=1e-6), key
    assert mine["runs_used"] == committed["runs_used"]
    assert mine["runs_rejected"] == committed["runs_rejected"]
    assert (out / "coastdown--harbour_crossover--body.toml").read_text().count("[body]") == 1


def test_demo_claims_and_logs_match_committed_results(fresh):
    now, out = fresh
    committed = json.loads((DEMO / "results" / "summary.json").read_text())
    for name, c in committed["claims"].items():
        mine = now["claims"][name]
        for key in ("range_km_p10", "range_km_p50", "range_km_p90", "share_meeting_claim",
                    "wh_per_km_p50"):
            assert mine[key] == pytest.approx(c[key], rel=1e-6), (name, key)
        assert mine["verdict"] == c["verdict"]
        assert (out / f"claim--{name}.png").is_file()
    for name, log in committed["logs"].items():
        mine = now["logs"][name]
        for key in ("measured_wh", "model_wh"):
            assert mine["comparison"]["end"][key] == pytest.approx(
                log["comparison"]["end"][key], rel=1e-6), (name, key)
        assert mine["fit"]["aux_base_w"] == pytest.approx(log["fit"]["aux_base_w"], rel=1e-6)
        assert (out / f"log--{name}.png").is_file()


def test_work_beside_gives_its_result_and_never_holds_up_a_failure():
    """The demo's second process: its result when asked; when the caller fails, the error
    comes at once (the process is stopped, not waited for)."""
    import time

    from tripsim.demo import _beside

    with _beside(pow, 2, 10) as get:
        assert get() == 1024
    t0 = time.perf_counter()
    with pytest.raises(RuntimeError, match="caller"), _beside(time.sleep, 30):
        raise RuntimeError("the caller failed")
    assert time.perf_counter() - t0 < 10.0
