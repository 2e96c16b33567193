"""Background work: a pool of worker processes behind a bounded queue.

CPU-bound work (reading routes, simulations, plans, fleet years) runs in worker
processes (pebble's process pool: a running task can be cancelled by ending its
worker, which the pool replaces); the event loop only waits.  The queue is bounded:
when it is full, :meth:`Jobs.submit` raises :class:`QueueFull` with the seconds to wait,
and the service answers 429 with Retry-After.  Workers report progress through a
queue that a thread of the service reads into the job's row.

Every job is a row in the store.  A job that finishes stores its result and becomes
``done`` in one transaction; a job whose service stopped (killed, say) is marked
``failed`` by the next service that starts on the store (see
:meth:`~tripsim_api.store.Store.fail_lost_jobs`).
"""

from __future__ import annotations

import concurrent.futures as cf
import contextlib
import logging
import math
import multiprocessing as mp
import os
import queue
import socket
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from pebble import ProcessPool
from tripsim_api.store import Store, new_id, now
from tripsim_api.work import InputProblem, init_worker

__all__ = ["Jobs", "QueueFull", "owner_is_dead"]

log = logging.getLogger("tripsim.api")


class QueueFull(Exception):  # noqa: N818 - a state of the service, answered with 429
    """No room for more work now; try again after ``retry_after_s``."""

    def __init__(self, retry_after_s: int) -> None:
        super().__init__(f"the queue is full; retry after {retry_after_s} s")
        self.retry_after_s = retry_after_s


def owner_name() -> str:
    """The name of this service on job rows: host, process id and a random part."""
    return f"{socket.gethostname()}:{os.getpid()}:{new_id('svc')}"


def owner_is_dead(owner: str) -> bool:
    """True for the name of a service on this machine whose process no longer runs."""
    host, _, rest = owner.partition(":")
    pid_text = rest.partition(":")[0]
    if host != socket.gethostname() or not pid_text.isdigit():
        return False
    try:
        os.kill(int(pid_text), 0)
    except ProcessLookupError:
        return True
    except PermissionError:
        return False
    return False


@dataclass
class _Entry:
    job_id: str
    kind: str
    future: Any = None
    done: cf.Future = field(default_factory=cf.Future)  # set once the outcome is stored
    submitted: float = field(default_factory=time.monotonic)


class Jobs:
    """The worker pool, the bounded queue and the jobs this service looks after.

    Parameters
    ----------
    store : Store
        Where jobs and their results go.
    workers : int
        Worker processes.
    queue_size : int
        Jobs queued or running at most; more get :class:`QueueFull`.
    job_timeout_s : float
        A job that runs longer is ended and marked failed.
    """

    def __init__(self, store: Store, *, workers: int, queue_size: int,
                 job_timeout_s: float, heartbeat_s: float = 5.0) -> None:
        self.store = store
        self.owner = owner_name()
        self.queue_size = queue_size
        self.job_timeout_s = job_timeout_s
        self.heartbeat_s = heartbeat_s
        self._entries: dict[str, _Entry] = {}
        self._lock = threading.Lock()
        self._durations: list[float] = []
        ctx = mp.get_context("spawn")  # no fork of a threaded server
        self._progress: Any = ctx.Queue()
        self.workers = max(1, workers)
        self.pool = ProcessPool(max_workers=self.workers, initializer=init_worker,
                                initargs=(self._progress, os.getpid()), context=ctx)
        self._stop = threading.Event()
        self._threads = [threading.Thread(target=self._read_progress, daemon=True,
                                          name="tripsim-progress"),
                         threading.Thread(target=self._look_after, daemon=True,
                                          name="tripsim-heartbeat")]
        lost = store.fail_lost_jobs(self.owner, stale_s=3 * heartbeat_s,
                                    dead_owner=owner_is_dead)
        if lost:
            log.warning("%d job(s) of a stopped service marked failed", lost)
        for t in self._threads:
            t.start()

    # --- submitting -----------------------------------------------------------------------

    def retry_after_s(self, waiting: int | None = None) -> int:
        """Seconds until a place in the queue is likely free."""
        durations = list(self._durations)
        mean = sum(durations) / len(durations) if durations else 2.0
        if waiting is None:
            with self._lock:
                waiting = len(self._entries)
        return max(1, math.ceil(mean * max(1, waiting - self.queue_size + 1) / self.workers))

    def submit(self, kind: str, request: dict[str, Any], task: Callable[..., Any],
               args: tuple[Any, ...], kwargs: dict[str, Any],
               store_result: Callable[[str, dict[str, Any]], None], *,
               input_hash: str | None = None, job_prefix: str = "job") -> str:
        """Queue a task in the pool; ``store_result(job_id, output)`` runs when it ends.

        Raises
        ------
        QueueFull
            When queue_size jobs are queued or running already.
        """
        with self._lock:
            waiting = len(self._entries)
            full = waiting >= self.queue_size
            if not full:
                job_id = new_id(job_prefix)
                entry = _Entry(job_id, kind)
                self._entries[job_id] = entry
        if full:
            raise QueueFull(self.retry_after_s(waiting))
        try:
            self.store.add_job(job_id, kind, request, self.owner, input_hash=input_hash)
            entry.future = self.pool.submit(task, self.job_timeout_s, job_id, *args, **kwargs)
        except BaseException:
            with self._lock:
                self._entries.pop(job_id, None)
            raise
        entry.future.add_done_callback(lambda f: self._finish(entry, f, store_result))
        return job_id

    def _finish(self, entry: _Entry, future: Any,
                store_result: Callable[[str, dict[str, Any]], None]) -> None:
        """Store a job's outcome (in a pool thread, never on the event loop)."""
        job_id = entry.job_id
        try:
            if future.cancelled():
                self.store.update_job(job_id, state="cancelled", finished_at=now(),
                                      message="cancelled")
                return
            try:
                output = future.result()
            except InputProblem as exc:
                self.store.update_job(job_id, state="failed", finished_at=now(),
                                      message="bad input", problem=_problem(
                                          422, "Bad input", exc.detail, exc.field))
                return
            except TimeoutError:
                self.store.update_job(job_id, state="failed", finished_at=now(),
                                      message="took too long", problem=_problem(
                                          500, "Job took too long", "the job ran longer "
                                          f"than {self.job_timeout_s:g} s and was ended"))
                return
            except Exception as exc:
                log.error("job %s failed", job_id, exc_info=exc)
                self.store.update_job(job_id, state="failed", finished_at=now(),
                                      message="internal error", problem=_problem(
                                          500, "Internal error", "the job failed; the "
                                          "service's log has the details"))
                return
            self.store.update_job(job_id, state="running", progress=0.95,
                                  message="storing the result")
            store_result(job_id, output)
            self._durations = [*self._durations[-49:], time.monotonic() - entry.submitted]
        except Exception as exc:  # the store failed: say so on the job if possible
            log.error("job %s: the result could not be stored", job_id, exc_info=exc)
            with contextlib.suppress(Exception):
                self.store.update_job(job_id, state="failed", finished_at=now(),
                                      message="not stored", problem=_problem(
                                          500, "Not stored", "the result could not be "
                                          "stored; the service's log has the details"))
        finally:
            with self._lock:
                self._entries.pop(job_id, None)
            entry.done.set_result(job_id)

    def done_future(self, job_id: str) -> cf.Future | None:
        """A future set once the job's outcome is stored (None: not one of ours)."""
        with self._lock:
            entry = self._entries.get(job_id)
        return None if entry is None else entry.done

    def cancel(self, job_id: str) -> bool:
        """Cancel a queued or running job of this service (a running one ends its worker)."""
        with self._lock:
            entry = self._entries.get(job_id)
        if entry is None or entry.future is None:
            return False
        if entry.future.cancel():
            return True
        return entry.future.done()

    def active(self) -> int:
        """Jobs queued or running."""
        with self._lock:
            return len(self._entries)

    # --- threads --------------------------------------------------------------------------

    def _read_progress(self) -> None:
        while not self._stop.is_set():
            try:
                job_id, fraction, message = self._progress.get(timeout=0.5)
            except (queue.Empty, EOFError, OSError):
                continue
            with contextlib.suppress(Exception):
                values: dict[str, Any] = {"state": "running", "progress": float(fraction),
                                          "message": str(message)}
                job = self.store.get_job(job_id)
                if job is not None and job["started_at"] is None:
                    values["started_at"] = now()
                self.store.update_job(job_id, **values)

    def _look_after(self) -> None:
        while not self._stop.wait(self.heartbeat_s):
            with contextlib.suppress(Exception):
                self.store.heartbeat(self.owner)
                self.store.fail_lost_jobs(self.owner, stale_s=3 * self.heartbeat_s,
                                          dead_owner=owner_is_dead)

    def close(self) -> None:
        """Stop the workers; jobs still queued or running are marked failed."""
        self._stop.set()
        with self._lock:
            pending = list(self._entries.values())
        for entry in pending:
            if entry.future is not None:
                entry.future.cancel()
        self.pool.stop()
        with contextlib.suppress(Exception):
            self.pool.join(timeout=10)
        for entry in pending:
            with contextlib.suppress(Exception):
                self.store.update_job(entry.job_id, state="failed", finished_at=now(),
                                      message="the service stopped", problem=_problem(
                                          503, "Service stopped", "the service stopped "
                                          "before the job finished; submit it again"))
        for t in self._threads:
            t.join(timeout=2)


def _problem(status: int, title: str, detail: str, field: str | None = None) -> dict[str, Any]:
    doc: dict[str, Any] = {"type": "about:blank", "title": title, "status": status,
                           "detail": detail}
    if field:
        doc["errors"] = [{"field": field, "detail": detail}]
    return doc
