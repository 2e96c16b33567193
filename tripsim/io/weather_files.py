"""Read typical-year weather files (EPW, TMY3, TMY2) with pvlib's readers.

Columns are renamed to tripsim's names and converted to SI once, here:
``temp_c`` [°C], ``pressure_pa`` [Pa], ``wind_speed_mps`` [m/s at 10 m],
``wind_from_deg`` [° from north], ``ghi_w_m2``, ``dni_w_m2``, ``dhi_w_m2`` [W/m²].
"""

from __future__ import annotations

import csv
import io
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from pvlib import iotools

from tripsim.errors import TripsimInputError
from tripsim.io._files import input_file, read_text
from tripsim.io._limits import (
    LAT_DEG,
    LON_DEG,
    STATION_ELEVATION_M,
    UTC_OFFSET_H,
    WEATHER_GAP_MAX_H,
    check_coordinate,
)
from tripsim.weather import YEAR_S, Weather

__all__ = ["read_weather", "weather_kind"]

#: Year the typical-year data are placed in (not a leap year).
TYPICAL_YEAR = 2001
#: Header fields of the first line: (name, index) for EPW (LOCATION,city,state,country,
#: source,WMO,latitude,longitude,TZ,elevation) and TMY3 (USAF,Name,State,TZ,latitude,
#: longitude,altitude).
_HEADER_FIELDS = {
    "epw": {"latitude": 6, "longitude": 7, "TZ": 8, "altitude": 9},
    "tmy3": {"TZ": 3, "latitude": 4, "longitude": 5, "altitude": 6},
}
_HEADER_RANGES = {"latitude": (*LAT_DEG, "°"), "longitude": (*LON_DEG, "°"),
                  "TZ": (*UTC_OFFSET_H, " h"), "altitude": (*STATION_ELEVATION_M, " m")}
_RANGES = {  # physically possible values; outside them the file is wrong
    "temp_c": (-90.0, 60.0), "pressure_pa": (30_000.0, 110_000.0),
    "wind_speed_mps": (0.0, 75.0), "wind_from_deg": (0.0, 360.0),
    "ghi_w_m2": (0.0, 1500.0), "dni_w_m2": (0.0, 1500.0), "dhi_w_m2": (0.0, 1000.0),
}
#: Markers of missing data in EPW files (EnergyPlus Auxiliary Programs, "Weather
#: Converter": data dictionary of the EPW format).
_EPW_MISSING = {"temp_air": 99.9, "atmospheric_pressure": 999999.0, "wind_direction": 999.0,
                "wind_speed": 999.0, "ghi": 9999.0, "dni": 9999.0, "dhi": 9999.0}


def weather_kind(path: Path) -> str:
    """``"epw"``, ``"tmy3"`` or ``"tmy2"`` from the suffix (TMY3 is CSV)."""
    suffix = path.suffix.lower()
    kinds = {".epw": "epw", ".csv": "tmy3", ".tm2": "tmy2"}
    if suffix not in kinds:
        raise TripsimInputError(
            f"unknown weather format {suffix!r}; expected .epw, .csv (TMY3) or .tm2 (TMY2)", path)
    return kinds[suffix]


def _check_header(meta: dict[str, Any], path: Path) -> None:
    """Refuse a header whose position, time zone or elevation is not plausible."""
    for key, (lo, hi, unit) in _HEADER_RANGES.items():
        value = meta.get(key)
        try:
            number = float(value)
        except (TypeError, ValueError):
            raise TripsimInputError(f"header: {key} = {str(value)[:30]!r} is not a number",
                                    path) from None
        if not (np.isfinite(number) and lo <= number <= hi):
            raise TripsimInputError(f"header: {key} = {number:g} is outside {lo:g} to {hi:g}{unit}",
                                    path)
        if key in ("latitude", "longitude") and (
                reason := check_coordinate(number, key[:3])):
            raise TripsimInputError(f"header: {key} = {value} {reason}", path)


def _first_line_meta(text: str, kind: str) -> dict[str, str]:
    fields = text.split("\n", 1)[0].rstrip("\r").split(",")
    return {key: fields[i] if i < len(fields) else "(missing)"
            for key, i in _HEADER_FIELDS[kind].items()}


def _tmy2_meta(text: str) -> dict[str, Any]:
    """Position, time zone and elevation from a TMY2 header line (counted from its end).

    ``WBAN CITY STATE TZ N|S deg min E|W deg min elevation``; the city may hold spaces.
    """
    raw = text.split("\n", 1)[0].split()
    if len(raw) < 11:
        return dict.fromkeys(_HEADER_RANGES, "(missing)")
    try:
        lat = (float(raw[-6]) + float(raw[-5]) / 60.0) * (1 if raw[-7] == "N" else -1)
        lon = (float(raw[-3]) + float(raw[-2]) / 60.0) * (1 if raw[-4] == "E" else -1)
    except ValueError:
        return {"latitude": raw[-6], "longitude": raw[-3], "TZ": raw[-8], "altitude": raw[-1]}
    return {"latitude": round(lat, 6), "longitude": round(lon, 6), "TZ": raw[-8],
            "altitude": raw[-1]}


_CLOCK = (("month", 1, 12), ("day", 1, 31), ("hour", 0, 24))


def _check_clock(text: str, kind: str, path: Path) -> None:
    """Refuse data rows whose month, day or hour is impossible (before pandas sees them).

    EPW: data from line 9, month, day and hour in fields 2-4; TMY3: data from line 3,
    ``MM/DD/YYYY`` and ``HH:MM`` in fields 1-2.
    """
    skip = 8 if kind == "epw" else 2
    for row, line in enumerate(text.splitlines()[skip:], start=1):
        fields = line.split(",", 5)
        if len(fields) < 5:
            continue  # short rows are reported by the parser
        if kind == "epw":
            parts = fields[1:4]
        else:
            parts = [*fields[0].split("/")[:2], fields[1].split(":")[0]]
        for text_value, (what, lo, hi) in zip(parts, _CLOCK, strict=False):
            try:
                value = int(text_value)
            except ValueError:
                raise TripsimInputError(f"data row {row} (line {row + skip}): {what} "
                                        f"{text_value[:20]!r} is not a whole number",
                                        path) from None
            if not lo <= value <= hi:
                raise TripsimInputError(f"data row {row} (line {row + skip}): {what} {value} "
                                        f"is outside {lo} to {hi}", path)


def _read_epw(path: Path) -> tuple[pd.DataFrame, dict[str, Any], pd.Timedelta]:
    text = read_text(path, "weather")
    _check_header(_first_line_meta(text, "epw"), path)
    _check_clock(text, "epw", path)
    data, meta = iotools.read_epw(io.StringIO(text), coerce_year=TYPICAL_YEAR)
    data = _numeric(data[list(_EPW_MISSING)], path)
    for col, marker in _EPW_MISSING.items():
        data[col] = data[col].where(~np.isclose(data[col], marker))
    frame = pd.DataFrame({
        "temp_c": data["temp_air"], "pressure_pa": data["atmospheric_pressure"],
        "wind_speed_mps": data["wind_speed"], "wind_from_deg": data["wind_direction"],
        "ghi_w_m2": data["ghi"], "dni_w_m2": data["dni"], "dhi_w_m2": data["dhi"]})
    meta = {"latitude": meta["latitude"], "longitude": meta["longitude"],
            "altitude": meta["altitude"], "TZ": meta["TZ"], "name": meta.get("city", "")}
    return frame, meta, pd.Timedelta(hours=1)  # pvlib stamps the start of the hour


def _read_tmy3(path: Path) -> tuple[pd.DataFrame, dict[str, Any], pd.Timedelta]:
    text = read_text(path, "weather")
    _check_header(_first_line_meta(text, "tmy3"), path)
    _check_clock(text, "tmy3", path)
    data, meta = iotools.read_tmy3(io.StringIO(text), coerce_year=TYPICAL_YEAR,
                                   map_variables=True)
    frame = pd.DataFrame({
        "temp_c": data["temp_air"], "pressure_pa": data["pressure"] * 100.0,
        "wind_speed_mps": data["wind_speed"], "wind_from_deg": data["wind_direction"],
        "ghi_w_m2": data["ghi"], "dni_w_m2": data["dni"], "dhi_w_m2": data["dhi"]})
    meta = {**meta, "name": str(meta.get("Name", "")).strip('"')}
    return frame, meta, pd.Timedelta(0)  # TMY3 stamps the end of the hour


def _read_tmy2(path: Path) -> tuple[pd.DataFrame, dict[str, Any], pd.Timedelta]:
    text = read_text(path, "weather")  # regular, within the cap, UTF-8; pvlib opens the path
    _check_header(_tmy2_meta(text), path)
    data, meta = iotools.read_tmy2(path)
    frame = pd.DataFrame({
        "temp_c": data["DryBulb"] / 10.0, "pressure_pa": data["Pressure"] * 100.0,
        "wind_speed_mps": data["Wspd"] / 10.0, "wind_from_deg": data["Wdir"],
        "ghi_w_m2": data["GHI"], "dni_w_m2": data["DNI"], "dhi_w_m2": data["DHI"]},
        index=data.index)
    frame.index = frame.index.map(lambda t: t.replace(year=TYPICAL_YEAR))
    meta = {**meta, "name": str(meta.get("City", ""))}
    return frame, meta, pd.Timedelta(hours=1)  # pvlib stamps the start of the hour


_READERS = {"epw": _read_epw, "tmy3": _read_tmy3, "tmy2": _read_tmy2}


def _fill_gaps(frame: pd.DataFrame, path: Path) -> pd.DataFrame:
    """Interpolate runs of at most :data:`WEATHER_GAP_MAX_H` missing hours; refuse longer ones.

    Pressure may be missing for longer (it is then taken from elevation).
    """
    out = {}
    for col in frame.columns:
        series = frame[col]
        missing = series.isna().to_numpy()
        if not missing.any():
            out[col] = series
            continue
        edges = np.diff(np.r_[0, missing.astype(np.int8), 0])
        starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
        long = (ends - starts) > WEATHER_GAP_MAX_H
        if long.any() and col != "pressure_pa" and not missing.all():
            k = int(np.flatnonzero(long)[0])
            raise TripsimInputError(
                f"column {col}: {ends[k] - starts[k]} consecutive hours missing from data row "
                f"{starts[k] + 1} ({frame.index[starts[k]]}); gaps of up to "
                f"{WEATHER_GAP_MAX_H} h are interpolated", path)
        filled = series.interpolate(limit_area="inside").ffill().bfill()
        keep_missing = np.zeros(len(series), dtype=bool)
        for a, b in zip(starts[long], ends[long], strict=True):
            keep_missing[a:b] = True
        out[col] = filled.mask(keep_missing)
    return pd.DataFrame(out, index=frame.index)


def _numeric(frame: pd.DataFrame, path: Path) -> pd.DataFrame:
    """Refuse cells that are not numbers (pandas keeps such a column as text)."""
    out = {}
    for col in frame.columns:
        values = pd.to_numeric(frame[col], errors="coerce")
        bad = values.isna() & frame[col].notna()
        if bad.any():
            row = int(np.flatnonzero(bad.to_numpy())[0])
            raise TripsimInputError(f"column {col}: {str(frame[col].iloc[row])[:20]!r} at data "
                                    f"row {row + 1} is not a number", path)
        out[col] = values.astype(float)
    return pd.DataFrame(out, index=frame.index)


def _check(frame: pd.DataFrame, path: Path) -> pd.DataFrame:
    if len(frame) not in (8760, 8784):
        raise TripsimInputError(f"holds {len(frame)} hourly rows; a typical year has 8760 "
                                "(the file may be truncated)", path)
    frame = _numeric(frame, path)
    frame = _fill_gaps(frame, path)
    for col, (lo, hi) in _RANGES.items():
        values = frame[col].to_numpy(dtype=float)
        bad = ~np.isfinite(values) | (values < lo) | (values > hi)
        if col == "pressure_pa":
            bad &= np.isfinite(values)  # pressure may be missing: taken from elevation
        if bad.any():
            row = int(np.flatnonzero(bad)[0])
            raise TripsimInputError(
                f"column {col}: {int(bad.sum())} values missing or outside {lo:g} to {hi:g}, "
                f"first at data row {row + 1} ({frame.index[row]})", path)
    return frame


def _seconds(index: pd.DatetimeIndex, offset: pd.Timedelta, utc_offset_h: float) -> np.ndarray:
    local = (index.tz_convert("UTC") + pd.Timedelta(hours=utc_offset_h)).tz_localize(None)
    start = pd.Timestamp(year=TYPICAL_YEAR, month=1, day=1)
    return ((local + offset) - start).total_seconds().to_numpy() % YEAR_S


def read_weather(path: str | Path) -> Weather:
    """Read an EPW, TMY3 (.csv) or TMY2 (.tm2) file as a periodic typical year.

    Parameters
    ----------
    path : str or Path
        The weather file.

    Returns
    -------
    Weather
        State quantities at their stamps, irradiance at the middle of its hour,
        in seconds of a 365-day year in the file's standard time.

    Raises
    ------
    TripsimInputError
        If the file is missing, malformed, truncated, or holds impossible values
        (the message names the column and the first bad row).
    """
    kind = weather_kind(Path(path))
    path = input_file(path, "weather")
    try:
        frame, meta, state_shift = _READERS[kind](path)
    except TripsimInputError:
        raise
    except (ValueError, KeyError, IndexError, TypeError, AttributeError, OverflowError,
            csv.Error, io.UnsupportedOperation, pd.errors.ParserError, UnicodeDecodeError,
            pd.errors.OutOfBoundsDatetime) as exc:
        detail = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
        detail = detail.split(" You might want to try")[0][:200]  # pandas' hint
        raise TripsimInputError(f"not a readable {kind.upper()} file: {detail}", path) from None
    frame = _check(frame[~frame.index.duplicated()], path)
    tz = float(meta["TZ"])
    irr_shift = state_shift - pd.Timedelta(minutes=30)
    s_state = _seconds(frame.index, state_shift, tz)
    s_irr = _seconds(frame.index, irr_shift, tz)
    o_state, o_irr = np.argsort(s_state, kind="stable"), np.argsort(s_irr, kind="stable")
    cols = {c: frame[c].to_numpy(dtype=float) for c in frame.columns}
    return Weather(
        state_s=s_state[o_state],
        state={c: cols[c][o_state] for c in ("temp_c", "pressure_pa", "wind_speed_mps",
                                            "wind_from_deg")},
        irradiance_s=s_irr[o_irr],
        irradiance={c: cols[c][o_irr] for c in ("ghi_w_m2", "dni_w_m2", "dhi_w_m2")},
        periodic=True, utc_offset_h=tz, latitude=float(meta["latitude"]),
        longitude=float(meta["longitude"]), elevation_m=float(meta["altitude"]),
        source=f"{path} ({meta.get('name') or kind.upper()})",
    )
