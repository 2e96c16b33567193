"""Sweeps: thousands of runs from one spec, in parallel on Dask, results in Parquet.

A spec is a base scenario plus axes (lists, ranges or distributions over any scenario
field or vehicle parameter), crossed as a grid and/or drawn with a seed
(:mod:`tripsim.sweep.spec`).  The runs go to a Dask cluster in batches — a local one
by default, an existing one by address — with the shared inputs read once and sent
once (:mod:`tripsim.sweep.execute`, :mod:`tripsim.parallel`); results land as a
Parquet dataset written part by part, so a stopped sweep resumes where it stopped
(:mod:`tripsim.io.sweep_results`).

The package can be called: ``tripsim.sweep(spec, client=...)`` is
:func:`run_sweep`::

    import tripsim
    rows = tripsim.sweep("routes_demo/sweep_harbour.toml", workers=2)   # pandas
    lazy = tripsim.sweep(spec, client=client, out="sweep_out")          # Dask, resumable

To run many items of your own on the same machinery, use
:func:`tripsim.parallel.map_runs`.
"""

from __future__ import annotations

import sys
import types
from typing import Any

from tripsim.sweep.execute import execute_sweep, run_sweep
from tripsim.sweep.spec import Sweep, SweepSpec, load_spec

__all__ = ["Sweep", "SweepSpec", "execute_sweep", "load_spec", "run_sweep"]


class _CallableModule(types.ModuleType):
    """The package as a callable: ``tripsim.sweep(...)`` runs :func:`run_sweep`."""

    def __call__(self, *args: Any, **kwargs: Any) -> Any:
        return run_sweep(*args, **kwargs)


sys.modules[__name__].__class__ = _CallableModule
