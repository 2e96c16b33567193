"""tripsim.parallel: many runs in this process or in batches on Dask, shared data sent once."""

import os
from collections import deque

import pytest
from sweep_support import cluster_client

from tripsim.parallel import FIRST_BATCH, BatchSizer, iter_batches, map_runs, rate_text


def _square_plus(x, shared):
    return x * x + shared


def _where(x, shared):
    return os.getpid(), id(shared), len(shared)


def _scaled(xs, shared):
    return [x * shared for x in xs]


def _fails_on_3(x, shared):
    if x == 3:
        raise ValueError("three")
    return x


def test_in_this_process():
    assert map_runs(_square_plus, list(range(6)), shared=1) == [1, 2, 5, 10, 17, 26]
    got = map_runs(_scaled, list(range(7)), shared=3, vectorised=True, batch_size=3)
    assert got == [0, 3, 6, 9, 12, 15, 18]
    calls = []
    map_runs(_square_plus, [1, 2, 3], shared=0, progress=lambda s, f: calls.append((s, f)))
    assert calls[-1][1] == 1.0 and calls[-1][0].startswith("3/3 items")
    with pytest.raises(ValueError, match="three"):
        map_runs(_fails_on_3, list(range(5)))


def test_groups_get_their_own_shared_object():
    items = [("a", 1), ("b", 2), ("a", 3), ("b", 4)]
    got = map_runs(lambda item, shared: item[1] * shared, items,
                   shared={"a": 10, "b": 100}, group=lambda item: item[0])
    assert got == [10, 200, 30, 400]


def test_batches_are_sized_by_measured_time():
    sizer = BatchSizer(groups={"g": deque(range(1000))}, task_s=1.0, workers=2)
    assert sizer.next_batch() == ("g", list(range(FIRST_BATCH)))
    sizer.record("g", 1, 0.01)  # 10 ms an item → 100 items a second
    _, batch = sizer.next_batch()
    assert len(batch) == 100
    sizer.record("g", 100, 4.0)  # slower than thought: the estimate moves halfway
    assert len(sizer.next_batch()[1]) == int(1.0 / (0.5 * (0.01 + 0.04)))
    tail = BatchSizer(groups={"g": deque(range(10))}, task_s=1.0, workers=2)
    tail.record("g", 1, 0.001)
    assert len(tail.next_batch()[1]) == 3  # a fair share of what is left, not all of it
    fixed = BatchSizer(groups={"g": deque(range(10))}, batch_size=4)
    assert [len(fixed.next_batch()[1]) for _ in range(3)] == [4, 4, 2]
    assert fixed.next_batch() is None


def test_rate_text():
    assert rate_text(50, 200, 10.0) == "50/200 runs, 5 runs/s, 30 s left"
    assert rate_text(0, 10, 0.0) == "0/10 runs, 0 runs/s"


def test_on_a_cluster_shared_data_goes_once_to_each_worker():
    client = cluster_client()
    assert map_runs(_square_plus, list(range(20)), shared=1, client=client) == \
        [x * x + 1 for x in range(20)]
    big = list(range(200_000))
    seen = map_runs(_where, list(range(60)), shared=big, client=client, batch_size=3)
    assert {n for _, _, n in seen} == {200_000}
    per_worker = {}
    for pid, ident, _ in seen:
        per_worker.setdefault(pid, set()).add(ident)
    counts = {pid: len(ids) for pid, ids in per_worker.items()}
    # one copy a worker, not one a task (20 tasks); a worker the scheduler lost touch with
    # under load may be sent its copy once more
    assert sum(counts.values()) <= 2 * len(counts) < 20, counts
    got = map_runs(_scaled, list(range(9)), shared=2, client=client, vectorised=True)
    assert got == [2 * x for x in range(9)]


def test_on_a_cluster_a_failed_batch_raises_or_is_handed_over():
    client = cluster_client()
    with pytest.raises(ValueError, match="three"):
        map_runs(_fails_on_3, list(range(6)), client=client)
    handed = []
    for idx, results in iter_batches(_fails_on_3, list(range(6)), client=client, batch_size=2,
                                     on_error=lambda items, exc: [str(exc)] * len(items)):
        handed.extend(zip(idx, results, strict=True))
    assert sorted(handed) == [(0, 0), (1, 1), (2, "three"), (3, "three"), (4, 4), (5, 5)]
