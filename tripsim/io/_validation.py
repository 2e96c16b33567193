"""One-line messages from pydantic validation errors, naming table, key and range."""

from __future__ import annotations

import reprlib
from typing import Any

__all__ = ["format_validation_error"]

_REPR = reprlib.Repr()
_REPR.maxlevel = 2
_REPR.maxstring = 60
_REPR.maxother = 60
_REPR.maxlist = 6


def _where(loc: tuple[Any, ...], table: bool = False) -> str:
    """Turn a pydantic location like ('body', 'cd') into '[body] cd'.

    ``table``: the error is about a whole table (a check across its keys).
    """
    parts = [str(p) for p in loc]
    if not parts:
        return "file"
    if len(parts) == 1:
        return f"[{parts[0]}]" if table else parts[0]
    table = parts[0]
    rest = parts[1:]
    if table in ("panels", "trip", "fleet", "plan") and rest and rest[0].isdigit():
        table, rest = f"{table} #{int(rest[0]) + 1}", rest[1:]
    return f"[{table}] {'.'.join(rest)}" if rest else f"[{table}]"


def format_validation_error(err: dict[str, Any]) -> str:
    kind = err.get("type", "")
    ctx = err.get("ctx") or {}
    value = err.get("input")
    where = _where(tuple(err.get("loc", ())), table=isinstance(value, dict))
    if kind == "extra_forbidden":
        return f"{where}: unknown key (check its spelling against DEVELOPERS.md)"
    if kind == "missing":
        return f"{where}: required key is missing"
    bounds = {"greater_than": ">", "greater_than_equal": "≥", "less_than": "<",
              "less_than_equal": "≤"}
    if kind in bounds:
        limit = next(iter(ctx.values()), "?")
        return f"{where} = {_REPR.repr(value)} is out of range (expected {bounds[kind]} {limit})"
    msg = err.get("msg", "invalid value").removeprefix("Value error, ")
    shown = "" if isinstance(value, dict) else f" = {_REPR.repr(value)}"
    return f"{where}{shown}: {msg}"
