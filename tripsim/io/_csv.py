"""Column tables in CSV: the one way the readers of runs and logs take them.

Comment lines (``#``) and blank lines are skipped, the header is read in lower case,
every data row must have one field a header column, no column may be named twice, and
numbers are checked cell by cell with the file's line in the message.
"""

from __future__ import annotations

import csv
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from tripsim.errors import TripsimInputError
from tripsim.io._files import read_text

__all__ = ["CsvTable", "number_column", "read_table"]


@dataclass(frozen=True)
class CsvTable:
    """A CSV file's header, and its data rows with their line numbers in the file."""

    header: list[str]
    lines: list[int]
    rows: list[list[str]]

    def columns(self) -> dict[str, list[str]]:
        """Column name → its cells, in row order."""
        return {h: [cells[j] for cells in self.rows] for j, h in enumerate(self.header)}


def read_table(path: Path, *, min_rows: int = 1, what: str = "a table") -> CsvTable:
    """Read a CSV column table (see the module notes); ``what`` needs ``min_rows`` rows.

    Raises
    ------
    TripsimInputError
        No header, no data rows, a row with another number of fields than the header,
        a column named twice, or text that is not CSV; naming the file and line.
    """
    text = read_text(path, "csv")
    numbered = [(i, line) for i, line in enumerate(text.splitlines(), start=1)
                if line.strip() and not line.lstrip().startswith("#")]
    if not numbered:
        raise TripsimInputError("no header and no data", path)
    try:
        parsed = list(csv.reader(line for _, line in numbered))
    except csv.Error as exc:
        raise TripsimInputError(f"not valid CSV ({exc})", path) from None
    header = [h.strip().lower() for h in parsed[0]]
    lines = [n for n, _ in numbered[1:]]
    rows = parsed[1:]
    if not rows:
        raise TripsimInputError("no data rows", path)
    if len(rows) < min_rows:
        raise TripsimInputError(f"{len(rows)} data rows; {what} needs {min_rows} or more", path)
    for n, cells in zip(lines, rows, strict=True):
        if len(cells) != len(header):
            raise TripsimInputError(f"line {n}: {len(cells)} fields, expected {len(header)} "
                                    "(one for each header column)", path)
    dupes = sorted({h for h in header if header.count(h) > 1})
    if dupes:
        raise TripsimInputError(f"column(s) {', '.join(dupes)} appear twice in the header", path)
    return CsvTable(header, lines, rows)


def number_column(cells: Sequence[str], lines: Sequence[int], column: str, path: Path, *,
                  factor: float, lo: float, hi: float, required: bool) -> np.ndarray:
    """A column as finite floats within [lo, hi] (as written), times ``factor``.

    Empty cells of an optional column become NaN; of a required one, an error.
    """
    out = np.empty(len(cells))
    for i, text in enumerate(cells):
        text = text.strip()
        if not text:
            if required:
                raise TripsimInputError(f"line {lines[i]}, column {column}: empty (expected a "
                                        "number)", path)
            out[i] = np.nan
            continue
        try:
            x = float(text)
        except ValueError:
            raise TripsimInputError(f"line {lines[i]}, column {column}: {text!r} is not a "
                                    "number", path) from None
        if not (np.isfinite(x) and lo <= x <= hi):
            raise TripsimInputError(f"line {lines[i]}, column {column}: {x:g} is out of range "
                                    f"(expected {lo:g} to {hi:g})", path)
        out[i] = x
    return out * factor
