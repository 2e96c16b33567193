"""Time bookkeeping shared by every feature: epoch seconds, weekdays, clock strings.

One place for the small conversions that were easy to write several times: clock
times to seconds since the Unix epoch, day-of-week ranges (``Mon-Fri``, ``Mo-Fr``,
``Sa,Su``), ``HH:MM`` strings and ``HH:MM-HH:MM`` windows.
"""

from __future__ import annotations

import datetime as dt
import re

import numpy as np
import pandas as pd

from tripsim.errors import TripsimInputError

__all__ = [
    "DAY_S",
    "EPOCH",
    "WEEK_S",
    "epoch_seconds",
    "fixed_zone",
    "parse_hhmm_s",
    "parse_weekdays",
    "parse_window_h",
]

#: The Unix epoch, time-zone aware.
EPOCH = pd.Timestamp("1970-01-01", tz="UTC")
DAY_S = 86400.0
WEEK_S = 7 * DAY_S
_DAY_NAMES = ("monday", "tuesday", "wednesday", "thursday", "friday", "saturday", "sunday")
_HHMM = re.compile(r"(\d{1,2}):(\d{2})")


def epoch_seconds(times: pd.DatetimeIndex | pd.Timestamp) -> np.ndarray | float:
    """Seconds since 1970-01-01 UTC of time-zone-aware clock times.

    Raises
    ------
    TripsimInputError
        For naive times: a clock without a zone cannot be placed in time.
    """
    if isinstance(times, pd.Timestamp):
        if times.tzinfo is None:
            raise TripsimInputError("a clock time needs a time zone", "time")
        return times.as_unit("ns").value / 1e9
    if times.tz is None:
        raise TripsimInputError("clock times need a time zone", "time")
    return times.as_unit("ns").asi8 / 1e9


def fixed_zone(offset_h: float) -> dt.timezone:
    """A fixed-offset time zone (a weather file's standard time, for example)."""
    return dt.timezone(dt.timedelta(hours=offset_h))


def _day(token: str, option: str, text: str) -> int:
    t = token.strip().lower()
    for i, name in enumerate(_DAY_NAMES):
        if len(t) >= 2 and name.startswith(t):
            return i
    raise TripsimInputError(f"{text!r}: unknown day {token.strip()!r}; use Mo..Su or Mon..Sun",
                            option)


def parse_weekdays(text: str, option: str) -> frozenset[int]:
    """Days of the week from ``"Mon-Fri"``, ``"Mo-Fr,Su"`` or ``"Sa-Mo"`` (0 = Monday).

    Each day is a prefix of its English name of at least two letters; a range may wrap
    past Sunday.
    """
    days: set[int] = set()
    for part in filter(None, (p.strip() for p in text.split(","))):
        lo, sep, hi = part.partition("-")
        a = _day(lo, option, text)
        b = _day(hi, option, text) if sep else a
        days.update(range(a, b + 1) if a <= b else [*range(a, 7), *range(0, b + 1)])
    if not days:
        raise TripsimInputError(f"{text!r}: no days given", option)
    return frozenset(days)


def parse_hhmm_s(text: str, option: str, *, allow_24: bool = False) -> float:
    """Seconds after midnight of ``"HH:MM"`` (00:00-23:59, and 24:00 when allowed)."""
    m = _HHMM.fullmatch(text.strip())
    if m is None:
        raise TripsimInputError(f"{text.strip()!r} is not a time HH:MM", option)
    h, mi = int(m[1]), int(m[2])
    if mi > 59 or h > 24 or (h == 24 and (mi or not allow_24)):
        raise TripsimInputError(f"{text.strip()!r} is not a time of day (00:00-23:59"
                                f"{' or 24:00' if allow_24 else ''})", option)
    return h * 3600.0 + mi * 60.0


def parse_window_h(text: str, option: str) -> tuple[float, float]:
    """A daily window ``"08:00-19:00"`` as (start, end) hours, start before end."""
    start, sep, end = text.strip().partition("-")
    if not sep:
        raise TripsimInputError(f"{text!r} is not a window HH:MM-HH:MM", option)
    try:
        a = parse_hhmm_s(start, option) / 3600.0
        b = parse_hhmm_s(end, option, allow_24=True) / 3600.0
    except TripsimInputError as exc:
        raise TripsimInputError(f"{text!r} is not a window HH:MM-HH:MM: {exc.problem}",
                                option) from None
    if b <= a:
        raise TripsimInputError(f"{text!r}: the window must end after it starts", option)
    return a, b
