"""Many independent runs at once: in this process, or in batches on a Dask cluster.

:func:`map_runs` applies a function to every item of a list and returns the results in
order; :func:`iter_batches` does the same work but hands over each batch as it
finishes (the sweep writes each batch to disk as it comes).  Without a client both
run in this process; with a ``dask.distributed`` client the items are cut into
batches, each batch is one task, and

- objects every task needs (a route's segments, a weather year, a vehicle) are given
  as ``shared``: they go to the cluster once (``Client.scatter``), and each worker
  fetches them once, not once a task.  With ``group``, items are grouped by a key and
  ``shared`` maps each key to its own object; a batch never mixes groups, and a
  group's object is released when its last batch is done;
- batches are sized from the measured time per item so that a task takes about
  ``task_s`` seconds (long enough that the scheduler's few milliseconds a task do not
  count, short enough to keep every worker busy to the end); the first batches are
  small, to measure;
- only a few tasks per worker are in flight at any moment, so the scheduler holds a
  short queue however many items there are, and an interruption (Ctrl-C, a killed
  client) loses at most the batches in flight.  Dask itself re-runs the tasks of a
  worker that dies.

This is the one way tripsim runs many things in parallel: the sweep (:mod:`tripsim.sweep`)
uses it, and so can an application that draws many samples (pass the client it was
given)::

    from tripsim.parallel import map_runs

    def energy_of(sample, shared):
        segments, vehicle = shared
        return simulate(segments, vehicle, conditions=sample).summary.battery_wh

    totals = map_runs(energy_of, samples, shared=(segments, vehicle), client=client)

The function must be importable by the workers (defined in a module, not in
``__main__``) and its results small: summaries, not traces.  Dask is imported only
when a client is given.
"""

from __future__ import annotations

import math
import time
import uuid
from collections import OrderedDict, deque
from collections.abc import Callable, Hashable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import Any

__all__ = ["BatchSizer", "iter_batches", "map_runs", "rate_text"]

#: Items a task takes before anything has been measured.
FIRST_BATCH = 1
#: Tasks in flight per worker thread.
IN_FLIGHT_PER_THREAD = 2
#: Times a batch is sent again after its shared data was lost with the workers holding it.
MAX_RESENDS = 3


def _quiet(stage: str, fraction: float) -> None:
    """No progress shown."""


def rate_text(done: int, total: int, elapsed_s: float, *, unit: str = "runs") -> str:
    """``"120/312 runs, 21.4 runs/s, 9 s left"``: what a progress bar shows."""
    rate = done / elapsed_s if elapsed_s > 0 and done else 0.0
    text = f"{done}/{total} {unit}, {rate:.3g} {unit}/s"
    if rate > 0 and done < total:
        left = (total - done) / rate
        text += f", {left:.0f} s left" if left < 120 else f", {left / 60:.1f} min left"
    return text


@dataclass
class BatchSizer:
    """Cuts groups of item indices into batches of about ``task_s`` seconds of work.

    The time per item is measured per group (an exponential mean of finished batches)
    and falls back on the mean over all groups.  A fixed ``batch_size`` turns the
    measuring off.  No batch is larger than a share of what is left for each worker, so
    the last tasks finish together.
    """

    groups: OrderedDict[Hashable, deque[int]]
    task_s: float = 1.0
    batch_size: int | None = None
    max_batch: int = 5000
    workers: int = 1
    _per_item: dict[Hashable, float] = field(default_factory=dict)
    _all: float | None = None

    @property
    def left(self) -> int:
        """Items not yet handed out."""
        return sum(len(q) for q in self.groups.values())

    def record(self, key: Hashable, n_items: int, seconds: float) -> None:
        """Learn from a finished batch of ``n_items`` that took ``seconds``."""
        if n_items <= 0 or not math.isfinite(seconds):
            return
        each = max(seconds, 1e-6) / n_items
        old = self._per_item.get(key)
        self._per_item[key] = each if old is None else 0.5 * (old + each)
        self._all = each if self._all is None else 0.5 * (self._all + each)

    def size_for(self, key: Hashable) -> int:
        """How many items the next batch of a group takes."""
        if self.batch_size is not None:
            return self.batch_size
        each = self._per_item.get(key, self._all)
        if each is None:
            return FIRST_BATCH
        size = int(self.task_s / each)
        fair = math.ceil(self.left / (IN_FLIGHT_PER_THREAD * max(self.workers, 1)))
        return max(1, min(size, self.max_batch, fair))

    def next_batch(self) -> tuple[Hashable, list[int]] | None:
        """The next batch (group key, item indices), or None when all are handed out."""
        while self.groups:
            key, queue = next(iter(self.groups.items()))
            if not queue:
                del self.groups[key]
                continue
            n = min(self.size_for(key), len(queue))
            batch = [queue.popleft() for _ in range(n)]
            if not queue:
                del self.groups[key]
            return key, batch
        return None


class _Parcel:
    """Shared data wrapped as one object, so that Dask pickles it whole.

    (Dask serialises a bare list, tuple or dict element by element.)
    """

    __slots__ = ("value",)

    def __init__(self, value: Any) -> None:
        self.value = value

    def __reduce__(self) -> tuple[Any, ...]:
        return (_Parcel, (self.value,))


def _run_batch(fn: Callable[..., Any], items: list[Any], shared: Any,
               vectorised: bool) -> tuple[list[Any], float, float]:
    """One task: the results of a batch, the seconds it took and its thread's CPU seconds."""
    t0, cpu0 = time.perf_counter(), time.thread_time()
    if isinstance(shared, _Parcel):
        shared = shared.value
    if vectorised:
        results = list(fn(items, shared))
        if len(results) != len(items):
            raise ValueError(f"{getattr(fn, '__name__', fn)} returned {len(results)} results "
                             f"for {len(items)} items")
    else:
        results = [fn(item, shared) for item in items]
    return results, time.perf_counter() - t0, time.thread_time() - cpu0


class _Tally:
    """Adds up what the tasks said about themselves (see ``stats`` of iter_batches)."""

    def __init__(self, stats: dict[str, float]) -> None:
        self.stats = stats
        for k in ("tasks", "task_s", "task_cpu_s"):
            stats.setdefault(k, 0.0)

    def __call__(self, seconds: float, cpu: float) -> None:
        self.stats["tasks"] += 1
        if math.isfinite(seconds):
            self.stats["task_s"] += seconds
            self.stats["task_cpu_s"] += cpu


def _groups(n: int, group: Callable[[int], Hashable] | None
            ) -> OrderedDict[Hashable, deque[int]]:
    out: OrderedDict[Hashable, deque[int]] = OrderedDict()
    for i in range(n):
        out.setdefault(None if group is None else group(i), deque()).append(i)
    return out


_PLUGIN: type | None = None


def _warmup_plugin() -> type:
    """A ``WorkerPlugin`` class that runs a function on every worker as it joins.

    Made on first use (so that importing this module does not import dask) and found
    by pickle through the module's ``__getattr__``.
    """
    global _PLUGIN
    if _PLUGIN is None:
        from distributed.diagnostics.plugin import WorkerPlugin

        class _WarmupPlugin(WorkerPlugin):
            idempotent = False

            def __init__(self, fn: Callable[[], Any]) -> None:
                self.fn = fn

            def setup(self, worker: Any) -> None:
                self.fn()

        _WarmupPlugin.__module__ = __name__
        _WarmupPlugin.__qualname__ = "_WarmupPlugin"
        _PLUGIN = _WarmupPlugin
    return _PLUGIN


def __getattr__(name: str) -> Any:
    if name == "_WarmupPlugin":
        return _warmup_plugin()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def _worker_threads(client: Any) -> int:
    try:
        return max(sum(client.nthreads().values()), 1)
    except Exception:  # a scheduler with no workers yet
        return 1


def iter_batches(
    fn: Callable[..., Any],
    items: Sequence[Any],
    *,
    client: Any = None,
    shared: Any = None,
    group: Callable[[Any], Hashable] | None = None,
    vectorised: bool = False,
    batch_size: int | None = None,
    task_s: float = 1.0,
    max_batch: int = 5000,
    warm_up: Callable[[], Any] | None = None,
    on_error: Callable[[list[Any], BaseException], list[Any]] | None = None,
    stats: dict[str, float] | None = None,
) -> Iterator[tuple[list[int], list[Any]]]:
    """Run ``fn`` over ``items`` in batches; yield ``(indices, results)`` as batches finish.

    Parameters
    ----------
    fn : callable
        ``fn(item, shared) -> result``, or with ``vectorised=True``
        ``fn(list_of_items, shared) -> list_of_results`` (one result an item, in order).
    items : sequence
        The work; small picklable values (the large common data goes in ``shared``).
    client : distributed.Client, optional
        Where to run; None runs in this process, batch after batch.
    shared : object or mapping, optional
        Handed to every call of ``fn``: sent to the cluster once.  With ``group`` a
        mapping from group key to the group's object.
    group : callable, optional
        ``group(item) -> key``: batches hold items of one key only.
    vectorised : bool, default False
        ``fn`` takes a whole batch (so it can compute many items at once).
    batch_size : int, optional
        Items a task; default: measured, about ``task_s`` seconds a task.
    task_s : float, default 1.0
        Aimed-at duration of a task [s].
    max_batch : int, default 5000
        Most items a task.
    warm_up : callable, optional
        Run once in every worker (and once here without a client) before any batch:
        imports and compiled kernels, so that no task pays for them.
    on_error : callable, optional
        ``on_error(batch_items, exception) -> results`` for a batch that failed as a
        whole (its worker died too often, or ``fn`` raised); default: raise.
    stats : dict, optional
        Filled as batches finish: ``tasks``, ``task_s`` (seconds inside the tasks) and
        ``task_cpu_s`` (CPU seconds of the threads that ran them); the difference to the
        elapsed time is what sending, scheduling and waiting for a core cost.

    Yields
    ------
    (list of int, list)
        Indices into ``items`` of a finished batch, and their results.
    """
    keyed = None if group is None else (lambda i: group(items[i]))
    sizer = BatchSizer(_groups(len(items), keyed), task_s=task_s, batch_size=batch_size,
                       max_batch=max_batch)
    tally = _Tally(stats if stats is not None else {})

    def shared_of(key: Hashable) -> Any:
        return shared if group is None else shared[key]  # type: ignore[index]

    if client is None:
        if warm_up is not None:
            warm_up()
        while (batch := sizer.next_batch()) is not None:
            key, idx = batch
            chunk = [items[i] for i in idx]
            try:
                results, seconds, cpu = _run_batch(fn, chunk, shared_of(key), vectorised)
            except Exception as exc:
                if on_error is None:
                    raise
                results, seconds, cpu = on_error(chunk, exc), math.nan, math.nan
            sizer.record(key, len(idx), seconds)
            tally(seconds, cpu)
            yield idx, results
        return
    yield from _on_cluster(client, fn, items, sizer, shared_of, vectorised, warm_up, on_error,
                           tally)


class _ClusterRun:
    """The client's side of :func:`iter_batches` on a cluster: what is sent, what is out.

    Shared objects are scattered when their group's first batch is sent, copied to a
    second worker (so that one worker's death does not lose them), sent again if every
    copy was lost, and released when their group's last batch is done.
    """

    def __init__(self, client: Any, fn: Callable[..., Any], items: Sequence[Any],
                 sizer: BatchSizer, shared_of: Callable[[Hashable], Any],
                 vectorised: bool) -> None:
        from distributed import as_completed

        self.client, self.fn, self.items, self.sizer = client, fn, items, sizer
        self.shared_of, self.vectorised = shared_of, vectorised
        self.tag = uuid.uuid4().hex[:8]
        self.open: dict[Hashable, int] = {}
        self.scattered: dict[Hashable, Any] = {}
        self.meta: dict[Any, tuple[Hashable, list[int], int]] = {}
        self.pending = as_completed()

    def _shared(self, key: Hashable) -> Any:
        future = self.scattered.get(key)
        if future is not None and future.status == "finished":
            return future
        obj = self.shared_of(key)
        if obj is None:
            return None
        future = self.client.scatter([_Parcel(obj)], hash=False)[0]
        if _worker_threads(self.client) > 1:
            self.client.replicate([future], n=2)
        self.scattered[key] = future
        return future

    def send(self, batch: tuple[Hashable, list[int]] | None = None, tries: int = 0) -> bool:
        """Send the next batch (or ``batch`` again); False when there is none."""
        batch = batch or self.sizer.next_batch()
        if batch is None:
            return False
        key, idx = batch
        future = self.client.submit(_run_batch, self.fn, [self.items[i] for i in idx],
                                    self._shared(key), self.vectorised, pure=False,
                                    key=f"tripsim-batch-{self.tag}-{idx[0]}-{tries}")
        self.meta[future] = (key, idx, tries)
        self.open[key] = self.open.get(key, 0) + (tries == 0)
        self.pending.add(future)
        return True

    def fill(self) -> None:
        self.sizer.workers = _worker_threads(self.client)
        while len(self.meta) < IN_FLIGHT_PER_THREAD * self.sizer.workers and self.send():
            pass

    def finish(self, key: Hashable) -> None:
        """A batch of group ``key`` is done: release its shared object after the last."""
        self.open[key] -= 1
        if self.open[key] == 0 and key not in self.sizer.groups:
            done = self.scattered.pop(key, None)
            if done is not None:
                done.release()

    def close(self) -> None:
        if self.meta:
            self.client.cancel(list(self.meta))
        for f in self.scattered.values():
            if f is not None:
                f.release()


def _on_cluster(client: Any, fn: Callable[..., Any], items: Sequence[Any], sizer: BatchSizer,
                shared_of: Callable[[Hashable], Any], vectorised: bool,
                warm_up: Callable[[], Any] | None,
                on_error: Callable[[list[Any], BaseException], list[Any]] | None,
                tally: _Tally) -> Iterator[tuple[list[int], list[Any]]]:
    from concurrent.futures import CancelledError

    if warm_up is not None:
        client.register_plugin(_warmup_plugin()(warm_up), name="tripsim-warm-up")
    out = _ClusterRun(client, fn, items, sizer, shared_of, vectorised)
    try:
        out.fill()
        for future in out.pending:
            key, idx, tries = out.meta.pop(future)
            try:
                results, seconds, cpu = future.result()
            except CancelledError:  # its shared data was lost with a worker: send again
                future.release()
                if tries < MAX_RESENDS:
                    out.send((key, idx), tries + 1)
                    continue
                if on_error is None:
                    raise
                results, seconds, cpu = on_error([items[i] for i in idx], RuntimeError(
                    f"lost {tries + 1} times with its workers")), math.nan, math.nan
            except Exception as exc:
                if on_error is None:
                    raise
                results, seconds, cpu = on_error([items[i] for i in idx], exc), math.nan, math.nan
            future.release()
            sizer.record(key, len(idx), seconds)
            tally(seconds, cpu)
            out.finish(key)
            out.fill()
            yield idx, results
    finally:
        out.close()


def map_runs(
    fn: Callable[..., Any],
    items: Sequence[Any],
    *,
    client: Any = None,
    shared: Any = None,
    group: Callable[[Any], Hashable] | None = None,
    vectorised: bool = False,
    batch_size: int | None = None,
    task_s: float = 1.0,
    warm_up: Callable[[], Any] | None = None,
    progress: Callable[[str, float], None] = _quiet,
) -> list[Any]:
    """``[fn(item, shared) for item in items]``, on a Dask cluster when a client is given.

    The arguments are those of :func:`iter_batches`; ``progress(stage, fraction)``
    hears how far it is (:mod:`tripsim.progress`).  An exception in ``fn`` is raised
    here (after the tasks still in flight are cancelled).

    Examples
    --------
    >>> from tripsim.parallel import map_runs
    >>> map_runs(pow, [1, 2, 3], shared=2)
    [1, 4, 9]
    """
    out: list[Any] = [None] * len(items)
    done = 0
    t0 = time.perf_counter()
    for idx, results in iter_batches(fn, items, client=client, shared=shared, group=group,
                                     vectorised=vectorised, batch_size=batch_size,
                                     task_s=task_s, warm_up=warm_up):
        for i, r in zip(idx, results, strict=True):
            out[i] = r
        done += len(idx)
        progress(rate_text(done, len(items), time.perf_counter() - t0, unit="items"),
                 done / max(len(items), 1))
    return out
