import json

import pandas as pd
import pytest
from conftest import straight_route

from tripsim.errors import TripsimInputError
from tripsim.io.export import atomic_path, to_json_text, write_trace
from tripsim.segments import segment_route
from tripsim.simulate import simulate


@pytest.fixture(scope="module")
def trip(request):
    from conftest import make_vehicle

    return simulate(segment_route(straight_route(2000.0)), make_vehicle())


@pytest.mark.parametrize("suffix", [".csv", ".parquet", ".geojson"])
def test_trace_round_trips(tmp_path, trip, suffix):
    path = write_trace(trip.trace, tmp_path / f"t{suffix}")
    if suffix == ".csv":
        back = pd.read_csv(path)
        assert back["soc"].to_numpy() == pytest.approx(trip.trace["soc"].to_numpy(), rel=1e-5)
    elif suffix == ".parquet":
        back = pd.read_parquet(path)
        assert back["clock"].iloc[0] == trip.trace["clock"].iloc[0]
        assert len(back) == len(trip.trace)
    else:
        doc = json.loads(path.read_text())
        assert len(doc["features"]) == len(trip.trace)
        assert doc["features"][-1]["geometry"]["coordinates"][1] == pytest.approx(
            [trip.trace["lon_end_deg"].iloc[-1], trip.trace["lat_end_deg"].iloc[-1]])


def test_unknown_suffix_and_missing_folder(tmp_path, trip):
    with pytest.raises(TripsimInputError, match="unknown trace format"):
        write_trace(trip.trace, tmp_path / "t.xlsx")
    with pytest.raises(TripsimInputError, match="does not exist"):
        write_trace(trip.trace, tmp_path / "nope" / "t.csv")


def test_atomic_write_leaves_nothing_on_failure(tmp_path):
    target = tmp_path / "out.txt"
    with pytest.raises(RuntimeError), atomic_path(target) as tmp:
        tmp.write_text("half")
        raise RuntimeError("boom")
    assert list(tmp_path.iterdir()) == []


def test_json_text_handles_numpy_and_nan():
    import numpy as np

    text = to_json_text({"a": np.float64(1.5), "b": float("nan"), "c": [np.int64(2)]})
    assert json.loads(text) == {"a": 1.5, "b": None, "c": [2]}
