"""Write results: CSV, Parquet, GeoJSON, JSON and figures, each atomically.

Every writer writes to a temporary file beside the target and renames it into
place, so a failure never leaves a half-written output.
"""

from __future__ import annotations

import contextlib
import json
import os
import tempfile
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from tripsim.errors import TripsimInputError

__all__ = ["atomic_path", "check_output", "save_figure", "to_json_text", "write_all",
           "write_json", "write_plan", "write_table", "write_text", "write_trace",
           "write_trace_geojson"]

_UMASK = os.umask(0o022)
os.umask(_UMASK)  # read once: asking again later would race with other threads
#: Prefix of temporary files and folders (short, so a long target name still fits).
_TMP = ".tripsim-"


def _temp_beside(target: Path, *, folder: bool = False) -> Path:
    """A new temporary file (or folder) in the target's folder, with the target's suffix."""
    suffix = "".join(target.suffixes[-2:])[-16:] if not folder else ""
    if folder:
        return Path(tempfile.mkdtemp(dir=target.parent, prefix=_TMP))
    fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=_TMP, suffix=suffix)
    os.close(fd)
    return Path(tmp)


def check_output(path: str | Path, flag: str, *, folder: bool = False,
                 shown: str | None = None) -> Path:
    """Check before any work that an output can be written there.

    ``shown`` is the path as the user typed it, for the message.

    Raises
    ------
    TripsimInputError
        Naming the option: the folder it goes in does not exist, is not a folder or is
        not writable; the target is a folder (or, for ``folder``, a file); its name is
        too long for the file system.
    """
    target = Path(path)
    parent = target.parent
    if shown is not None:
        path = shown
        typed_parent = Path(shown).parent
        parent_name = str(typed_parent) if str(typed_parent) != "." else str(parent)
    else:
        parent_name = str(parent)
    if not parent.exists():
        raise TripsimInputError(f"{path}: the folder {parent_name} does not exist", flag)
    if not parent.is_dir():
        raise TripsimInputError(f"{path}: {parent_name} is a file, not a folder", flag)
    if not os.access(parent, os.W_OK | os.X_OK):
        raise TripsimInputError(f"{path}: the folder {parent_name} is not writable", flag)
    try:
        limit = os.pathconf(parent, "PC_NAME_MAX")
    except (OSError, ValueError):
        limit = 255
    if len(target.name.encode()) > limit:
        raise TripsimInputError(f"the file name is longer than {limit} bytes", flag)
    if folder and target.exists() and not target.is_dir():
        raise TripsimInputError(f"{path} exists and is not a folder", flag)
    if not folder and target.is_dir():
        raise TripsimInputError(f"{path} is a folder; give a file name", flag)
    return target


@contextlib.contextmanager
def atomic_path(target: str | Path) -> Iterator[Path]:
    """Yield a temporary path beside ``target``; rename it onto ``target`` on success."""
    target = Path(target)
    if not target.parent.is_dir():
        raise TripsimInputError("the output folder does not exist", target.parent)
    tmp = _temp_beside(target)
    try:
        yield tmp
        os.chmod(tmp, 0o666 & ~_UMASK)
        os.replace(tmp, target)
    finally:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)


def write_all(items: list[tuple[Path, str, Callable[[Path], Any]]]) -> list[Path]:
    """Write several outputs all or none.

    Each item is (target, flag, writer): the writer writes the output to the path it is
    given, a staged file (or, for an existing or new folder target, a staged folder)
    beside the target.  Only when every writer has succeeded are the staged files moved
    into place; on any failure every staged file is removed and the error names the
    output's flag.

    Returns
    -------
    list of Path
        The targets written.
    """
    staged: list[tuple[Path, Path, bool]] = []
    try:
        for target, flag, writer in items:
            folder = target.is_dir() or target.suffix == ""
            tmp = _temp_beside(target, folder=folder)
            staged.append((target, tmp, folder))
            try:
                writer(tmp)
            except TripsimInputError:
                raise
            except (OSError, ValueError) as exc:
                raise TripsimInputError(f"{target}: cannot be written ({exc})", flag) from None
        for target, tmp, folder in staged:
            if not folder:
                os.chmod(tmp, 0o666 & ~_UMASK)
                os.replace(tmp, target)
            elif not target.exists():
                os.chmod(tmp, 0o777 & ~_UMASK)
                os.replace(tmp, target)
            else:  # an existing folder: its files are replaced one by one
                for child in sorted(tmp.iterdir()):
                    os.replace(child, target / child.name)
    finally:
        for _, tmp, folder in staged:
            with contextlib.suppress(FileNotFoundError, OSError):
                if folder:
                    for child in tmp.iterdir():
                        child.unlink()
                    tmp.rmdir()
                else:
                    tmp.unlink()
    return [target for target, _, _ in staged]


def _plain(value: Any) -> Any:
    if isinstance(value, (np.floating, np.integer)):
        return value.item()
    if isinstance(value, float) and not np.isfinite(value):
        return None
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, pd.Timestamp):
        return value.isoformat()
    return value


def to_json_text(obj: Any) -> str:
    """JSON text with numpy scalars converted and non-finite floats as null."""
    return json.dumps(_plain(obj), indent=2, ensure_ascii=False)


def write_json(obj: Any, path: str | Path) -> Path:
    """Write an object as JSON."""
    with atomic_path(path) as tmp:
        tmp.write_text(to_json_text(obj) + "\n", encoding="utf-8")
    return Path(path)


def _dense(frame: pd.DataFrame) -> pd.DataFrame:
    """The frame with columns stored once (sparse, one value) written out in full."""
    sparse = [c for c in frame.columns if isinstance(frame[c].dtype, pd.SparseDtype)]
    if not sparse:
        return frame
    return frame.assign(**{c: frame[c].sparse.to_dense() for c in sparse})


def _trace_for_files(trace: pd.DataFrame) -> pd.DataFrame:
    out = _dense(trace).reset_index()
    out["clock"] = out["clock"].map(lambda t: t.isoformat(timespec="seconds"))
    return out


_WRITERS: dict[str, Callable[[pd.DataFrame, Path], None]] = {
    ".csv": lambda df, p: _trace_for_files(df).to_csv(p, index=False, float_format="%.6g"),
    ".parquet": lambda df, p: _dense(df).reset_index().to_parquet(p, index=False),
}


def write_trace(trace: pd.DataFrame, path: str | Path) -> Path:
    """Write a trace as CSV, Parquet or GeoJSON, chosen by the file's suffix."""
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix in (".geojson", ".json"):
        return write_trace_geojson(trace, path)
    if suffix not in _WRITERS:
        raise TripsimInputError(
            f"unknown trace format {suffix!r}; expected .csv, .parquet or .geojson", path)
    with atomic_path(path) as tmp:
        _WRITERS[suffix](trace, tmp)
    return path


_GEOJSON_PROPS = ("start_m", "speed_kph", "speed_limit_kph", "grade", "elevation_m",
                  "battery_wh", "cum_battery_wh", "soc", "reached")


def write_trace_geojson(trace: pd.DataFrame, path: str | Path) -> Path:
    """Write a trace as a GeoJSON FeatureCollection, one LineString a segment."""
    lat = trace["lat_deg"].to_numpy()
    lon = trace["lon_deg"].to_numpy()
    end_lat = trace["lat_end_deg"].to_numpy()
    end_lon = trace["lon_end_deg"].to_numpy()
    clock = trace["clock"].map(lambda t: t.isoformat(timespec="seconds")).to_list()
    cols = {c: trace[c].to_numpy() for c in _GEOJSON_PROPS}
    features = []
    for i in range(len(trace)):
        props: dict[str, Any] = {c: cols[c][i].item() for c in _GEOJSON_PROPS}
        props["clock"] = clock[i]
        features.append({
            "type": "Feature",
            "geometry": {"type": "LineString",
                         "coordinates": [[lon[i], lat[i]], [end_lon[i], end_lat[i]]]},
            "properties": props,
        })
    doc = {"type": "FeatureCollection", "features": features}
    with atomic_path(path) as tmp:
        tmp.write_text(json.dumps(doc, separators=(",", ":")), encoding="utf-8")
    return Path(path)


def save_figure(fig: Any, path: str | Path, *, dpi: int = 120) -> Path:
    """Save a matplotlib figure (format from the suffix)."""
    path = Path(path)
    with atomic_path(path) as tmp:
        fig.savefig(tmp, dpi=dpi, format=path.suffix.lstrip(".") or "png")
    return path


def write_table(frame: pd.DataFrame, path: str | Path) -> Path:
    """Write a table as CSV or Parquet, chosen by the suffix."""
    path = Path(path)
    with atomic_path(path) as tmp:
        if path.suffix.lower() == ".parquet":
            frame.to_parquet(tmp, index=False)
        else:
            frame.to_csv(tmp, index=False, float_format="%.6g")
    return path


def write_text(text: str, path: str | Path) -> Path:
    """Write a text file (HTML pages, for example)."""
    with atomic_path(path) as tmp:
        Path(tmp).write_text(text, encoding="utf-8")
    return Path(path)


def write_plan(payload: dict[str, Any], stops: pd.DataFrame, geojson: dict[str, Any] | None,
               *, json_path: str | Path | None = None, stops_csv: str | Path | None = None,
               geojson_path: str | Path | None = None) -> None:
    """Write a plan's JSON, the CSV of its stops and its GeoJSON (each when a path is given)."""
    if json_path is not None:
        write_json(payload, json_path)
    if stops_csv is not None:
        write_table(stops, stops_csv)
    if geojson_path is not None and geojson is not None:
        write_json(geojson, geojson_path)
