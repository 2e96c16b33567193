"""How long work tells how far it has come: one small callback, shown by whoever asked.

Work that can take more than a moment (a fleet year with its sizing, a plan's rounds,
the demo) calls ``progress(stage, fraction)`` as it goes.  The command line turns the
calls into a progress bar on a terminal (:func:`terminal_bar`), the HTTP service into a
job's progress, and code that does not care passes nothing.
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from typing import Any

__all__ = ["Progress", "quiet", "terminal_bar"]

#: ``progress(stage, fraction)``: what is being done, and how far the whole is (0-1).
Progress = Callable[[str, float], None]


def quiet(stage: str, fraction: float) -> None:
    """A progress callback that shows nothing."""


class _Bar:
    """A tqdm bar on standard error that follows (stage, fraction) calls."""

    def __init__(self, title: str) -> None:
        from tqdm import tqdm

        self._bar: Any = tqdm(total=1000, desc=title, file=sys.stderr, leave=False,
                              bar_format="{desc}: {percentage:3.0f}%|{bar}| {elapsed} "
                              "{postfix}", dynamic_ncols=True)

    def __call__(self, stage: str, fraction: float) -> None:
        target = round(1000 * min(max(fraction, 0.0), 1.0))
        self._bar.set_postfix_str(stage, refresh=False)
        self._bar.update(max(target - self._bar.n, 0))

    def close(self) -> None:
        self._bar.close()


def terminal_bar(title: str, *, enabled: bool = True) -> Progress:
    """A progress bar on standard error when it is a terminal, else :func:`quiet`.

    Call ``.close()`` on the result (if it has one) when the work is done.
    """
    if not enabled or not sys.stderr.isatty():
        return quiet
    return _Bar(title)
