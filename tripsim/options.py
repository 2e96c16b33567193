"""How every option is validated: pydantic models with stated finite ranges, one way.

Driver, air, sun, parking, schedule, charging policy and plan options are
:class:`Options` models.  Each field carries its range and, in its metadata, the name
the user typed it by on the command line (``--stop-minutes``) and the factor between
the field's unit and the option's (``--pressure-hpa`` fills ``pressure_pa``), so an
error says ``--pressure-hpa = nan: expected a finite number`` whether the value came
from a flag, a scenario file (``[conditions] pressure_pa``) or a web request.

Numbers are numbers: booleans are refused where a number is expected, and NaN and
infinity are refused everywhere.
"""

from __future__ import annotations

import contextlib
import contextvars
from collections.abc import Iterator
from typing import Annotated, Any

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, ValidationError

from tripsim.errors import TripsimInputError

__all__ = ["Count", "Number", "OptionConflict", "Options", "describe_error", "option",
           "options_error", "raw_errors"]

_RAW = contextvars.ContextVar("tripsim_raw_option_errors", default=False)


@contextlib.contextmanager
def raw_errors() -> Iterator[None]:
    """Let validation errors of nested options through as pydantic raised them.

    A scenario is validated as a whole, and its errors are described by their location
    in it (a flag, or a table and key in a file); options made on their own describe
    their errors by flag at once.
    """
    token = _RAW.set(True)
    try:
        yield
    finally:
        _RAW.reset(token)


def _no_bool(value: Any) -> Any:
    if isinstance(value, bool):
        raise ValueError("expected a number, not true/false")
    return value


#: A finite real number (booleans refused).
Number = Annotated[float, BeforeValidator(_no_bool)]
#: A whole number (booleans refused).
Count = Annotated[int, BeforeValidator(_no_bool)]


class OptionConflict(Exception):  # noqa: N818 - a refusal, raised through pydantic untouched
    """Options that contradict each other, with the flag to blame (from model validators).

    Not a ValueError, so pydantic passes it through unchanged.
    """

    def __init__(self, where: str, what: str) -> None:
        super().__init__(f"{where}: {what}")
        self.where, self.what = where, what


class Options(BaseModel):
    """Base of every option model: unknown keys refused, numbers finite, values frozen."""

    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False,
                              str_strip_whitespace=True)

    def __init__(self, **data: Any) -> None:
        if _RAW.get():
            super().__init__(**data)
            return
        try:
            super().__init__(**data)
        except ValidationError as exc:
            raise options_error(exc, type(self)) from None
        except OptionConflict as exc:
            raise TripsimInputError(exc.what, exc.where) from None

    def replace(self, **changes: Any) -> Options:
        """A copy with some fields changed, validated again."""
        return type(self)(**{**self.model_dump(), **changes})


def option(default: Any = ..., *, cli: str | None = None, scale: float = 1.0,
           description: str = "", **limits: Any) -> Any:
    """A field with its limits (``ge``, ``gt``, ``le``, ``lt``), its flag and unit factor.

    ``scale`` converts the field's value to the flag's unit for messages (a field in Pa
    filled from ``--pressure-hpa`` has ``scale=0.01``).
    """
    extra = {"cli": cli, "scale": scale}
    return Field(default, description=description, json_schema_extra=extra, **limits)


def _range(ctx: dict[str, Any], scale: float) -> str:
    words = {"ge": "≥", "gt": ">", "le": "≤", "lt": "<"}
    parts = [f"{words[k]} {v * scale:g}" for k, v in ctx.items() if k in words]
    return " and ".join(parts)


def _field_info(model: type[BaseModel], loc: tuple[Any, ...]
                ) -> tuple[str | None, float, str, dict[str, float]]:
    """The flag, scale, dotted name and limits of the field at a pydantic location."""
    current: Any = model
    flag, scale = None, 1.0
    limits: dict[str, float] = {}
    names = []
    for part in loc:
        if isinstance(part, int):
            names.append(f"#{part + 1}")
            continue
        names.append(str(part))
        fields = getattr(current, "model_fields", {})
        info = fields.get(part) if isinstance(part, str) else None
        if info is None:
            current = None
            continue
        extra = info.json_schema_extra if isinstance(info.json_schema_extra, dict) else {}
        flag = extra.get("cli") or flag
        scale = float(extra.get("scale", 1.0))
        limits = {k: getattr(m, k) for m in info.metadata for k in ("ge", "gt", "le", "lt")
                  if hasattr(m, k)}
        annotation = info.annotation
        models = [a for a in getattr(annotation, "__args__", (annotation,))
                  if isinstance(a, type) and issubclass(a, BaseModel)]
        current = models[0] if models else None
    return flag, scale, ".".join(names), limits


def _shown(value: Any, scale: float) -> Any:
    if isinstance(value, float | int) and not isinstance(value, bool):
        return value * scale
    return value


def describe_error(err: dict[str, Any], model: type[BaseModel], *,
                   flags: bool = True) -> tuple[str, str]:
    """(where, what) of one pydantic error: ``where`` names the flag (or the field)."""
    flag, scale, dotted, limits = _field_info(model, tuple(err.get("loc", ())))
    where = flag if flags and flag else (dotted or "options")
    kind = err.get("type", "")
    ctx = err.get("ctx") or {}
    value = _shown(err.get("input"), scale)
    if kind == "extra_forbidden":
        return where, "unknown option (check its spelling)"
    if kind == "missing":
        return where, "required"
    if kind == "finite_number":
        span = f" within {_range(limits, scale)}" if limits else ""
        return where, f"{value!r} is not a finite number{span}"
    if kind in ("greater_than", "greater_than_equal", "less_than", "less_than_equal"):
        return where, f"{value:g} is out of range (expected {_range(limits or ctx, scale)})"
    error = ctx.get("error")
    if isinstance(error, TripsimInputError):
        return where, error.problem
    msg = str(err.get("msg", "invalid value")).removeprefix("Value error, ")
    return where, msg if isinstance(value, dict) else f"{value!r}: {msg}"


def options_error(exc: ValidationError, model: type[BaseModel], *,
                  flags: bool = True) -> TripsimInputError:
    """A one-line :class:`TripsimInputError` for the first problem of a validation error."""
    where, what = describe_error(exc.errors()[0], model, flags=flags)
    return TripsimInputError(what, where)
