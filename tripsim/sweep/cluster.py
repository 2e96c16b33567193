"""Where a sweep runs: a local Dask cluster of processes, or an existing one by address.

A local cluster has one worker process a core (``--workers`` to change it), one thread
each: the runs are numpy and numba work that holds the GIL in places, so processes,
not threads, use the cores.  Its dashboard listens on 127.0.0.1 only, and its workers keep
glibc's own memory thresholds (:data:`KEEP_MALLOC`).  An existing
cluster (``--scheduler tcp://host:8786``) brings its own workers; they must run the
same tripsim version as the client, which is checked before any run is sent.
"""

from __future__ import annotations

import contextlib
import logging
import os
from collections.abc import Iterator
from typing import Any

from tripsim.errors import TripsimInputError

__all__ = ["dashboard_link", "dask_client"]

#: Where a local cluster's dashboard listens (another free port when taken).
DASHBOARD = "127.0.0.1:8787"
#: Environment Dask sets in its workers that a local sweep cluster leaves unset: Dask sets
#: ``MALLOC_TRIM_THRESHOLD_=65536`` to give memory back to the system promptly, and any such
#: setting also freezes glibc's mmap threshold, so that every large temporary array of a run
#: is mapped and unmapped again (runs took 25-35 % longer on this machine).  A cluster given
#: by ``--scheduler`` keeps its own settings.
KEEP_MALLOC = ("MALLOC_TRIM_THRESHOLD_",)
#: Where the scheduler's web server (health checks) listens when no dashboard is asked for:
#: any free port, so that it never competes for the dashboard's.
QUIET_PORT = "127.0.0.1:0"


def _tripsim_version() -> str:
    import tripsim

    return tripsim.__version__


def dashboard_link(client: Any) -> str | None:
    """The dashboard's address, when the cluster has one."""
    try:
        services = client.scheduler_info().get("services", {})
        return client.dashboard_link if "dashboard" in services else None
    except Exception:  # a scheduler that does not say
        return None


@contextlib.contextmanager
def dask_client(workers: int | None = None, scheduler: str | None = None, *,
                dashboard: bool = True) -> Iterator[Any]:
    """A ``distributed.Client``: on a new local cluster, or attached to ``scheduler``.

    Parameters
    ----------
    workers : int, optional
        Worker processes of a local cluster (default: one a core).
    scheduler : str, optional
        Address of an existing scheduler (``tcp://host:8786``).
    dashboard : bool, default True
        Start the local cluster's dashboard.

    Raises
    ------
    TripsimInputError
        The scheduler cannot be reached, or its workers run another tripsim.
    """
    import dask
    from distributed import Client, LocalCluster

    if scheduler is not None:
        if workers is not None:
            raise TripsimInputError("starts a local cluster; an existing cluster (--scheduler) "
                                    "brings its own workers", "--workers")
        try:
            client = Client(scheduler, timeout="15s")
        except (OSError, TimeoutError, ValueError) as exc:
            raise TripsimInputError(f"cannot reach the scheduler at {scheduler} ({exc})",
                                    "--scheduler") from None
        try:
            versions = set(client.run(_tripsim_version).values())
            if versions - {_tripsim_version()}:
                raise TripsimInputError(f"the workers run tripsim {', '.join(sorted(versions))}"
                                        f", this client {_tripsim_version()}", "--scheduler")
            yield client
        finally:
            client.close()
        return
    n = (os.cpu_count() or 1) if workers is None else workers
    most = 4 * (os.cpu_count() or 1)
    if not 1 <= n <= most:
        raise TripsimInputError(f"{n}: expected 1 to {most} worker processes (this machine "
                                f"has {os.cpu_count() or 1} cores)", "--workers")
    with dask.config.set({f"distributed.nanny.pre-spawn-environ.{k}": None for k in KEEP_MALLOC}):
        cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                               dashboard_address=DASHBOARD if dashboard else QUIET_PORT,
                               silence_logs=logging.CRITICAL)
    client = Client(cluster)
    try:
        yield client
    finally:
        client.close()
        cluster.close()
