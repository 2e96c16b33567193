"""A sweep's results on disk: a Parquet dataset written part by part, and its totals.

The folder a sweep writes (``tripsim sweep SPEC --out DIR``)::

    DIR/sweep.json          what the sweep is (its spec's fingerprint, axes, run count)
    DIR/runs/part-*.parquet one file per finished task: a row a run
    DIR/traces/run-*.parquet the per-run traces, when the spec asks for them
    DIR/totals.json         counts, timings and the range of each result

Each part is written to a temporary file and renamed into place, so a part is either
whole or absent: a sweep killed at any moment leaves only whole parts (and perhaps a
temporary file, removed when the sweep is started again).  The parts together are one
dataset: every part has the columns ``run``, the axes, ``ok`` and ``error``, and the
results of its runs.  While a sweep runs, a part of failed runs only lacks the results'
columns; when the sweep ends, such parts are rewritten with every column
(:func:`conform_parts`), so that any Parquet reader reads the folder as one table.  Read
it with :func:`read_results` (pandas), :func:`results_dask` (a Dask DataFrame, one
partition a part) or any Parquet reader.
"""

from __future__ import annotations

import contextlib
import json
from pathlib import Path
from typing import Any

import pandas as pd

from tripsim.errors import TripsimInputError
from tripsim.io.export import atomic_path, check_output, write_json

__all__ = ["MANIFEST", "RUNS", "TOTALS", "TRACES", "conform_parts", "done_runs",
           "open_sweep_folder",
           "part_files", "read_part", "read_results", "results_dask", "results_schema",
           "write_part", "write_sweep_totals", "write_sweep_trace"]

MANIFEST = "sweep.json"
TOTALS = "totals.json"
RUNS = "runs"
TRACES = "traces"
_TMP_PREFIX = ".tripsim-"  # tripsim.io.export's temporary files


def open_sweep_folder(folder: str | Path, manifest: dict[str, Any], *,
                      flag: str = "--out") -> bool:
    """Make the folder ready for a sweep (or for resuming one); True when resuming.

    The folder is created if its parent exists.  A folder holding another sweep (a
    different ``manifest["fingerprint"]``), or other files, is refused.  Temporary files
    left by a killed sweep are removed.
    """
    folder = Path(folder)
    check_output(folder, flag, folder=True)
    folder.mkdir(exist_ok=True)
    path = folder / MANIFEST
    resuming = path.is_file()
    if resuming:
        try:
            old = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError) as exc:
            raise TripsimInputError(f"{path.name} cannot be read ({exc}); remove the folder "
                                    "or give another", flag) from None
        if old.get("fingerprint") != manifest.get("fingerprint"):
            if part_files(folder):
                raise TripsimInputError(f"{folder} holds the results of another sweep (its "
                                        "spec or seed differ); give a new folder to start "
                                        "afresh, or the same spec to resume", flag)
            resuming = False  # a sweep that stopped before its first part: start afresh
    elif any(p.name not in (RUNS, TRACES) for p in folder.iterdir()):
        raise TripsimInputError(f"{folder} is not empty and holds no sweep; give a new or "
                                "empty folder", flag)
    for sub in (RUNS, TRACES):
        (folder / sub).mkdir(exist_ok=True)
        for leftover in (folder / sub).glob(f"{_TMP_PREFIX}*"):
            with contextlib.suppress(OSError):
                leftover.unlink()
    if not resuming:
        write_json(manifest, path)
    return resuming


def part_files(folder: str | Path) -> list[Path]:
    """The finished part files, in name order."""
    return sorted((Path(folder) / RUNS).glob("part-*.parquet"))


def write_part(folder: str | Path, frame: pd.DataFrame, name: str) -> Path:
    """Write one part (``runs/part-NAME.parquet``) atomically."""
    target = Path(folder) / RUNS / f"part-{name}.parquet"
    with atomic_path(target) as tmp:
        frame.to_parquet(tmp, index=False)
    return target


def write_sweep_trace(folder: str | Path, run: int, trace: pd.DataFrame) -> Path:
    """Write a run's trace (or a fleet year's daily table) as ``traces/run-N.parquet``."""
    from tripsim.io.export import write_trace

    return write_trace(trace, Path(folder) / TRACES / f"run-{run:08d}.parquet")


def write_sweep_totals(folder: str | Path, totals: dict[str, Any]) -> Path:
    """Write ``totals.json`` atomically."""
    return write_json(totals, Path(folder) / TOTALS)


def done_runs(folder: str | Path) -> set[int]:
    """Run numbers that have a row in the folder already."""
    import pyarrow.parquet as pq

    done: set[int] = set()
    for path in part_files(folder):
        done.update(pq.read_table(path, columns=["run"]).column("run").to_pylist())
    return done


def results_schema(files: list[Path]) -> Any:
    """One Arrow schema for all parts (a column missing from a part reads as null)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    schemas = [pq.read_schema(p).remove_metadata() for p in files]
    return pa.unify_schemas(schemas, promote_options="permissive") if schemas else pa.schema([])


def _conform(table: Any, schema: Any) -> Any:
    import pyarrow as pa

    columns = []
    for f in schema:
        if f.name in table.column_names:
            columns.append(table.column(f.name).cast(f.type))
        else:
            columns.append(pa.nulls(table.num_rows, type=f.type))
    return pa.Table.from_arrays(columns, schema=schema)


def conform_parts(folder: str | Path) -> int:
    """Give every part the columns and types of all (rewritten atomically); how many were.

    A part of failed runs only lacks the results' columns, and a column may be null in
    one part and numbers in another: after this, any Parquet reader reads the folder as
    one table (``pandas.read_parquet(DIR / "runs")``).
    """
    import pyarrow.parquet as pq

    files = part_files(folder)
    schema = results_schema(files)
    changed = 0
    for path in files:
        if pq.read_schema(path).remove_metadata().equals(schema):
            continue
        table = _conform(pq.read_table(path), schema)
        with atomic_path(path) as tmp:
            pq.write_table(table, tmp)
        changed += 1
    return changed


def read_part(path: str | Path, schema: Any = None, *, arrow_dtypes: bool = False
              ) -> pd.DataFrame:
    """One part as a DataFrame, with the columns of ``schema`` (when given)."""
    import pyarrow.parquet as pq

    table = pq.read_table(path)
    if schema is not None:
        table = _conform(table, schema)
    return table.to_pandas(types_mapper=pd.ArrowDtype if arrow_dtypes else None)


def read_results(folder: str | Path) -> pd.DataFrame:
    """Every row of a sweep folder, by run number."""
    import pyarrow as pa

    files = part_files(folder)
    if not files:
        raise TripsimInputError("holds no results yet", Path(folder) / RUNS)
    schema = results_schema(files)
    import pyarrow.parquet as pq

    table = pa.concat_tables([_conform(pq.read_table(p), schema) for p in files])
    frame = table.to_pandas()
    return frame.sort_values("run", kind="stable").reset_index(drop=True)


def results_dask(folder: str | Path) -> Any:
    """The rows of a sweep folder as a Dask DataFrame: one partition a part file.

    Columns are Arrow-backed (``pandas.ArrowDtype``), so a column that is missing or
    null in one part has the same type in every partition.
    """
    import dask.dataframe as dd

    files = part_files(folder)
    if not files:
        raise TripsimInputError("holds no results yet", Path(folder) / RUNS)
    schema = results_schema(files)
    meta = schema.empty_table().to_pandas(types_mapper=pd.ArrowDtype)
    return dd.from_map(read_part, files, schema=schema, arrow_dtypes=True, meta=meta,
                       enforce_metadata=False)
