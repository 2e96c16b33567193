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
from tripsim.weather import YEAR_S, Weather

__all__ = ["read_weather", "weather_kind"]

#: Year the typical-year data are placed in (not a leap year).
TYPICAL_YEAR = 2001
_MAX_GAP_H = 6
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


def _read_epw(path: Path) -> tuple[pd.DataFrame, dict[str, Any], pd.Timedelta]:
    data, meta = iotools.read_epw(path, coerce_year=TYPICAL_YEAR)
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
    data, meta = iotools.read_tmy3(path, coerce_year=TYPICAL_YEAR, map_variables=True)
    frame = pd.DataFrame({
        "temp_c": data["temp_air"], "pressure_pa": data["pressure"] * 100.0,
        "wind_speed_mps": data["wind_speed"], "wind_from_deg": data["wind_direction"],
        "ghi_w_m2": data["ghi"], "dni_w_m2": data["dni"], "dhi_w_m2": data["dhi"]})
    meta = {**meta, "name": str(meta.get("Name", "")).strip('"')}
    return frame, meta, pd.Timedelta(0)  # TMY3 stamps the end of the hour


def _read_tmy2(path: Path) -> tuple[pd.DataFrame, dict[str, Any], pd.Timedelta]:
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


def _check(frame: pd.DataFrame, path: Path) -> pd.DataFrame:
    if len(frame) not in (8760, 8784):
        raise TripsimInputError(f"holds {len(frame)} hourly rows; a typical year has 8760 "
                                "(the file may be truncated)", path)
    frame = frame.interpolate(limit=_MAX_GAP_H, limit_direction="both")
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
    path = Path(path)
    kind = weather_kind(path)
    if not path.is_file():
        raise TripsimInputError("no such file", path)
    try:
        frame, meta, state_shift = _READERS[kind](path)
    except (ValueError, KeyError, IndexError, TypeError, csv.Error, io.UnsupportedOperation,
            pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise TripsimInputError(f"not a readable {kind.upper()} file: {exc}", path) from None
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
