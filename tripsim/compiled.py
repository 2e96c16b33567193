"""Compiled twins of the physics functions, from the same source.

The physics modules are written as plain numpy functions on scalars or arrays
(:mod:`tripsim.roadload`, :mod:`tripsim.powertrain`, :mod:`tripsim.cabin`, …), the
way users call them.  The sequential passes (speed profile, energy per segment,
state of charge) need them as compiled functions on scalars.  :func:`jitted` compiles
a function with numba, first replacing every tripsim function it calls by that
function's own compiled twin, so one source serves both worlds and there is never a
second copy of a formula to drift.
"""

from __future__ import annotations

import types
from collections.abc import Callable
from typing import Any

import numba
import numpy as np

__all__ = ["curve", "jitted"]

_TWINS: dict[Callable[..., Any], Any] = {}


def curve(x: Any, xs: np.ndarray, ys: np.ndarray) -> Any:
    """A piecewise-linear curve y(x), end values held outside (:func:`numpy.interp`).

    Its compiled twin walks the (short) curve for one scalar ``x`` without allocating,
    which :func:`numpy.interp` compiled by numba does not; the two are checked equal in
    the tests.
    """
    return np.interp(x, xs, ys)


@numba.njit(cache=True, inline="always")
def _curve_scalar(x, xs, ys):  # pragma: no cover - compiled
    n = xs.size
    if x <= xs[0]:
        return ys[0] + 0.0
    if x >= xs[n - 1]:
        return ys[n - 1] + 0.0
    for i in range(1, n):
        if x < xs[i]:
            return ys[i - 1] + (ys[i] - ys[i - 1]) * (x - xs[i - 1]) / (xs[i] - xs[i - 1])
    return x  # NaN reaches here: NaN in, NaN out


_TWINS[curve] = _curve_scalar


def jitted(fn: Callable[..., Any]) -> Any:
    """The numba-compiled twin of a tripsim function (cached on disk, made once).

    Parameters
    ----------
    fn : function
        A function of a tripsim module whose body numba can compile in nopython mode
        (arithmetic, numpy ufuncs, ``np.interp``, ``np.searchsorted``, NamedTuple
        parameters).

    Returns
    -------
    numba dispatcher
        Callable from Python and from other compiled functions.
    """
    twin = _TWINS.get(fn)
    if twin is not None:
        return twin
    scope = dict(fn.__globals__)
    for name in fn.__code__.co_names:
        callee = scope.get(name)
        if (isinstance(callee, types.FunctionType) and callee is not fn
                and str(getattr(callee, "__module__", "")).startswith("tripsim.")):
            scope[name] = jitted(callee)
    clone = types.FunctionType(fn.__code__, scope, fn.__name__, fn.__defaults__,
                               fn.__closure__)
    clone.__qualname__ = fn.__qualname__
    clone.__module__ = fn.__module__
    twin = numba.njit(cache=True, inline="always")(clone)
    _TWINS[fn] = twin
    return twin
