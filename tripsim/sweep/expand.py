"""The runs of a sweep: the grid crossed with seeded draws, one row a run.

Grid axes give their listed values; the grid's points are in order, the first axis
changing slowest.  Drawn axes take ``n`` points of the unit hypercube — a Latin
hypercube (:class:`scipy.stats.qmc.LatinHypercube`: each axis's draws fall once into
each of ``n`` equal strata) or independent uniform numbers (plain Monte Carlo) — each
mapped through its distribution's inverse cumulative distribution function
(:meth:`tripsim.sweep.spec.Distribution.ppf`).  Both are seeded by the spec's
``seed``, so the same spec gives the same runs.  Run ``g·n + i`` is grid point ``g``
with draw ``i``.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

if TYPE_CHECKING:
    from tripsim.sweep.spec import Sweep

__all__ = ["expand", "unit_draws"]


def unit_draws(n: int, d: int, *, method: str, seed: int) -> np.ndarray:
    """``n`` seeded points in the unit hypercube [0, 1)^d, shape (n, d)."""
    if method == "lhs":
        from scipy.stats import qmc

        try:
            sampler = qmc.LatinHypercube(d, rng=np.random.default_rng(seed))
        except TypeError:  # scipy < 1.15 names it seed
            sampler = qmc.LatinHypercube(d, seed=np.random.default_rng(seed))
        return sampler.random(n)
    return np.random.default_rng(seed).random((n, d))


def _column(values: list | np.ndarray) -> np.ndarray:
    """Values as a column: numbers as numbers, anything else kept as objects."""
    if isinstance(values, np.ndarray):
        return values
    if all(isinstance(v, int) and not isinstance(v, bool) for v in values):
        return np.asarray(values, dtype=np.int64)
    if all(isinstance(v, int | float) and not isinstance(v, bool) for v in values):
        return np.asarray(values, dtype=float)
    out = np.empty(len(values), dtype=object)
    out[:] = values
    return out


def expand(sweep: Sweep) -> pd.DataFrame:
    """Every run of a sweep: index ``run`` (0, 1, …), one column an axis."""
    grid = sweep.grid_axes
    drawn = sweep.drawn_axes
    sizes = [len(a.values or ()) for a in grid]
    n_grid = math.prod(sizes)
    n = sweep.n_draws
    columns: dict[str, np.ndarray] = {}
    if grid:
        index = np.unravel_index(np.arange(n_grid), sizes)
        for axis, idx in zip(grid, index, strict=True):
            values = _column(list(axis.values or ()))
            columns[axis.name] = np.repeat(values[idx], n)
    if drawn:
        method = sweep.spec.draws.method if sweep.spec.draws else "lhs"
        u = unit_draws(n, len(drawn), method=method, seed=sweep.spec.seed)
        for j, axis in enumerate(drawn):
            values = _column(axis.dist.ppf(u[:, j]))  # type: ignore[union-attr]
            columns[axis.name] = np.tile(values, n_grid)
    frame = pd.DataFrame({a.name: columns[a.name] for a in sweep.axes},
                         index=pd.RangeIndex(n_grid * n, name="run"))
    return frame
