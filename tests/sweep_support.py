"""Helpers of the sweep tests: one small Dask cluster for the session, small routes, specs."""

from __future__ import annotations

import atexit
import re
from pathlib import Path

from conftest import DEMO

_CLUSTER: dict[str, object] = {}

VEHICLE = str(DEMO / "vehicles" / "swift_tern.toml")
MULE = str(DEMO / "vehicles" / "parcel_mule.toml")
EPW = str(DEMO / "tamsreach.epw")


def cluster_client():
    """A LocalCluster of 2 worker processes (one thread each), shared by the session."""
    if "client" not in _CLUSTER:
        import logging

        from distributed import Client, LocalCluster

        cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                               dashboard_address="127.0.0.1:0",
                               silence_logs=logging.CRITICAL)
        client = Client(cluster)
        _CLUSTER.update(cluster=cluster, client=client)

        def close() -> None:
            client.close()
            cluster.close()

        atexit.register(close)
    return _CLUSTER["client"]


def small_gpx(folder: Path, points: int = 160) -> Path:
    """The first points of the demo's harbour loop as a GPX file (a few km of road)."""
    text = (DEMO / "harbour_loop.gpx").read_text()
    head, _, rest = text.partition("<trkseg>")
    pts = re.findall(r"<trkpt .*?</trkpt>", rest, flags=re.S)[:points]
    path = folder / "small.gpx"
    path.write_text(head + "<trkseg>\n" + "\n".join(pts) + "\n</trkseg></trk></gpx>\n")
    return path


def simulate_spec(route: Path, axes: dict, **extra) -> dict:
    """A simulate sweep on a route with the Swift Tern at 50 km/h."""
    scenario = {"kind": "simulate", "vehicle": VEHICLE, "speed_kph": 50.0,
                "route": {"file": str(route)}}
    scenario.update(extra.pop("scenario", {}))
    return {"name": "test", "scenario": scenario, "axes": axes, **extra}
