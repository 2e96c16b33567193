"""Errors as RFC 9457 problem documents, and the service's guards (ASGI middleware).

Every error the service sends is ``application/problem+json`` with a title, the status,
a detail and, for bad requests, ``errors``: one entry per field (a dotted path in the
body, or a form field) saying what was expected.  Messages of tripsim's option models
are worded as on the command line.  No stack trace is ever sent: an unexpected error is
logged and answered with a 500 that says so.

Guards: an API key (constant-time compare) when one is set, an upload size cap (413),
a time limit per request (503), and security headers (no framing, no sniffing, a
content security policy that lets pages load only from the service).
"""

from __future__ import annotations

import asyncio
import hmac
import json
import logging
import re
from collections.abc import Awaitable, Callable, MutableMapping
from typing import Any

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from pydantic import BaseModel, ValidationError
from starlette.exceptions import HTTPException as StarletteHTTPException

from tripsim.errors import TripsimInputError
from tripsim.options import OptionConflict, describe_error

__all__ = ["ProblemError", "add_guards", "install_handlers", "problem_response"]

log = logging.getLogger("tripsim.api")

Scope = MutableMapping[str, Any]
Message = MutableMapping[str, Any]
Receive = Callable[[], Awaitable[Message]]
Send = Callable[[Message], Awaitable[None]]
ASGIApp = Callable[[Scope, Receive, Send], Awaitable[None]]

PROBLEM_JSON = "application/problem+json"
_TITLES = {400: "Bad request", 401: "Unauthorized", 404: "Not found",
           405: "Method not allowed", 406: "Not acceptable", 409: "Conflict",
           413: "Content too large", 415: "Unsupported media type",
           422: "Unprocessable content", 429: "Too many requests", 500: "Internal error",
           503: "Service unavailable"}


class ProblemError(Exception):
    """Answer with a problem document.

    Parameters
    ----------
    status : int
        HTTP status.
    detail : str
        What happened and what was expected.
    field : str, optional
        The field to blame (``errors`` then names it).
    headers : dict, optional
        Extra headers (``Retry-After``, ``Location``).
    """

    def __init__(self, status: int, detail: str, *, field: str | None = None,
                 headers: dict[str, str] | None = None, title: str | None = None,
                 errors: list[dict[str, str]] | None = None) -> None:
        super().__init__(detail)
        self.status, self.detail, self.headers = status, detail, headers or {}
        self.title = title or _TITLES.get(status, "Error")
        self.errors = errors or ([{"field": field, "detail": detail}] if field else None)


def problem_body(status: int, detail: str | None, *, title: str | None = None,
                 instance: str | None = None,
                 errors: list[dict[str, str]] | None = None) -> dict[str, Any]:
    """The JSON of a problem document."""
    doc: dict[str, Any] = {"type": "about:blank", "title": title or _TITLES.get(status, "Error"),
                           "status": status}
    if detail:
        doc["detail"] = detail
    if instance:
        doc["instance"] = instance
    if errors:
        doc["errors"] = errors
    return doc


def problem_response(status: int, detail: str | None, *, title: str | None = None,
                     instance: str | None = None, errors: list[dict[str, str]] | None = None,
                     headers: dict[str, str] | None = None) -> JSONResponse:
    """A problem document as a response."""
    return JSONResponse(problem_body(status, detail, title=title, instance=instance,
                                     errors=errors),
                        status_code=status, media_type=PROBLEM_JSON, headers=headers)


# --- field names --------------------------------------------------------------------------

_TAG = re.compile(r"^(str|int|float|bool|dict|list|none|literal|function|constrained|tagged)"
                  r"|[\[\]A-Z-]")


def _clean_loc(loc: tuple[Any, ...]) -> tuple[Any, ...]:
    """A pydantic location without union member tags (``route.RouteRef.id`` → ``route.id``)."""
    return tuple(p for p in loc if isinstance(p, int) or not _TAG.search(str(p)))


def field_problems(errors: list[dict[str, Any]], model: type[BaseModel] | None,
                   *, prefix: bool = True) -> list[dict[str, str]]:
    """Pydantic errors as ``errors`` entries: one per field, worded as tripsim words them.

    ``prefix``: locations start with where the value came from (FastAPI's ``body``,
    ``query``, ...).
    """
    out: dict[str, str] = {}
    for err in errors:
        loc = tuple(err.get("loc", ()))
        source = loc[0] if loc and prefix else "body"
        if prefix and source in ("body", "query", "path", "header", "cookie"):
            loc = loc[1:]
        loc = _clean_loc(loc)
        clean = {**err, "loc": loc}
        error = (err.get("ctx") or {}).get("error")
        if isinstance(error, TripsimInputError) and (error.source or "").startswith("--"):
            where = ".".join(str(p) for p in loc)  # an option model named its flag: the field
            mapped = flag_field(error.source)  # type: ignore[arg-type]
            where = mapped if mapped and mapped.startswith(where) else where or "body"
            what = error.problem
        elif model is not None and source == "body" and not isinstance(err.get("input"), str):
            where, what = describe_error(clean, model, flags=False)
            where = ".".join(str(p) for p in loc) or where
        else:
            where = ".".join(str(p) for p in loc) or str(source)
            what = str(err.get("msg", "invalid value")).removeprefix("Value error, ")
        if source in ("query", "path", "header") and where != str(source):
            where = f"{where} ({source})"
        out.setdefault(where or "body", what)
    return [{"field": k, "detail": v} for k, v in out.items()]


def flag_field(flag: str) -> str | None:
    """The scenario field a flag fills (``--reserve`` → ``plan.options.reserve_soc``)."""
    from tripsim.scenario import scenario_error

    source = scenario_error(OptionConflict(flag, ""), flags=False).source or ""
    if source.startswith("["):
        table, _, key = source[1:].partition("] ")
        return f"{table}.{key}"
    return None if source.startswith("--") else source or None


def conflict_problem(exc: OptionConflict | ValidationError) -> ProblemError:
    """A conflict between options (or a scenario's validation error) as a 422."""
    from tripsim.scenario import scenario_error

    err = scenario_error(exc, flags=False)
    field = err.source or "body"
    if field.startswith("["):
        table, _, key = field[1:].partition("] ")
        field = f"{table}.{key}"
    return ProblemError(422, err.problem, field=_REQUEST_FIELDS.get(field, field))


#: Scenario fields that a run request gives under another name.
_REQUEST_FIELDS = {"weather.source": "weather", "route.file": "route",
                   "route.waypoints": "route", "route.dem": "route"}


def _body_model(request: Request) -> type[BaseModel] | None:
    route = request.scope.get("route")
    body = getattr(route, "body_field", None)
    annotation = getattr(getattr(body, "field_info", None), "annotation", None)
    return annotation if isinstance(annotation, type) and issubclass(annotation,
                                                                     BaseModel) else None


def install_handlers(app: FastAPI) -> None:
    """Answer every error with a problem document."""

    @app.exception_handler(ProblemError)
    async def _problem(request: Request, exc: ProblemError) -> JSONResponse:
        return problem_response(exc.status, exc.detail, title=exc.title,
                                instance=request.url.path, errors=exc.errors,
                                headers=exc.headers)

    @app.exception_handler(RequestValidationError)
    async def _invalid(request: Request, exc: RequestValidationError) -> JSONResponse:
        errors = field_problems(list(exc.errors()), _body_model(request))
        first = errors[0] if errors else {"field": "body", "detail": "invalid request"}
        return problem_response(422, f"{first['field']}: {first['detail']}",
                                instance=request.url.path, errors=errors)

    @app.exception_handler(OptionConflict)
    async def _conflict(request: Request, exc: OptionConflict) -> JSONResponse:
        p = conflict_problem(exc)
        return problem_response(422, f"{p.errors[0]['field']}: {p.detail}" if p.errors
                                else p.detail, instance=request.url.path, errors=p.errors)

    @app.exception_handler(TripsimInputError)
    async def _input(request: Request, exc: TripsimInputError) -> JSONResponse:
        errors = [{"field": exc.source, "detail": exc.problem}] if exc.source else None
        return problem_response(422, str(exc), instance=request.url.path, errors=errors)

    @app.exception_handler(StarletteHTTPException)
    async def _http(request: Request, exc: StarletteHTTPException) -> JSONResponse:
        detail = exc.detail if isinstance(exc.detail, str) else None
        if exc.status_code == 404 and detail in (None, "Not Found"):
            detail = f"nothing at {request.url.path}"
        if exc.status_code == 405:
            detail = f"{request.method} is not allowed on {request.url.path}"
        return problem_response(exc.status_code, detail, instance=request.url.path,
                                headers=getattr(exc, "headers", None))

    @app.exception_handler(Exception)
    async def _crash(request: Request, exc: Exception) -> JSONResponse:
        log.error("%s %s failed", request.method, request.url.path, exc_info=exc)
        return problem_response(500, "the service failed on this request; its log has the "
                                "details", instance=request.url.path)


# --- guards -------------------------------------------------------------------------------

async def _send_problem(send: Send, status: int, detail: str,
                        headers: dict[str, str] | None = None) -> None:
    body = json.dumps(problem_body(status, detail)).encode()
    raw = [(b"content-type", PROBLEM_JSON.encode()), (b"content-length", str(len(body)).encode())]
    raw += [(k.lower().encode(), v.encode()) for k, v in (headers or {}).items()]
    await send({"type": "http.response.start", "status": status, "headers": raw})
    await send({"type": "http.response.body", "body": body})


class _TooLarge(StarletteHTTPException):
    """Raised while a body is read past the cap (an HTTP error, so FastAPI passes it on)."""

    def __init__(self, limit: int) -> None:
        super().__init__(413, f"the request body is larger than {limit} bytes")


class _Guards:
    """API key, body size cap, time limit and security headers, as one ASGI wrapper."""

    def __init__(self, app: ASGIApp, *, api_key: str | None, max_body: int, timeout_s: float,
                 tile_origin: str | None) -> None:
        self.app, self.max_body, self.timeout_s = app, max_body, timeout_s
        self.key = api_key.encode() if api_key else None
        img = "'self' data:" + (f" {tile_origin}" if tile_origin else "")
        self.csp = (f"default-src 'self'; img-src {img}; style-src 'self' 'unsafe-inline'; "
                    "script-src 'self' 'unsafe-inline'; connect-src 'self'; "
                    "frame-ancestors 'none'; base-uri 'none'; form-action 'self'").encode()

    def _authorized(self, scope: Scope) -> bool:
        if self.key is None:
            return True
        headers = dict(scope.get("headers") or [])
        given = headers.get(b"x-api-key", b"")
        auth = headers.get(b"authorization", b"")
        if not given and auth[:7].lower() == b"bearer ":
            given = auth[7:].strip()
        return hmac.compare_digest(given, self.key)

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:  # noqa: C901
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        if not self._authorized(scope):
            await _send_problem(send, 401, "an API key is required: send it in the X-API-Key "
                                "header (or Authorization: Bearer KEY)",
                                {"WWW-Authenticate": 'Bearer realm="tripsim"'})
            return
        length = dict(scope.get("headers") or []).get(b"content-length")
        if length is not None and length.isdigit() and int(length) > self.max_body:
            await _send_problem(send, 413, f"the request body is larger than "
                                f"{self.max_body} bytes")
            return
        started = False
        received = 0

        async def limited_receive() -> Message:
            nonlocal received
            message = await receive()
            if message["type"] == "http.request":
                received += len(message.get("body", b""))
                if received > self.max_body:
                    raise _TooLarge(self.max_body)
            return message

        async def guarded_send(message: Message) -> None:
            nonlocal started
            if message["type"] == "http.response.start":
                started = True
                headers = list(message.get("headers") or [])
                headers += [(b"x-content-type-options", b"nosniff"),
                            (b"referrer-policy", b"no-referrer"),
                            (b"content-security-policy", self.csp)]
                message = {**message, "headers": headers}
            await send(message)

        try:
            await asyncio.wait_for(self.app(scope, limited_receive, guarded_send),
                                   timeout=self.timeout_s)
        except _TooLarge:
            if not started:
                await _send_problem(send, 413, f"the request body is larger than "
                                    f"{self.max_body} bytes")
        except TimeoutError:
            if not started:
                await _send_problem(send, 503, f"the request took longer than "
                                    f"{self.timeout_s:g} s", {"Retry-After": "5"})


def add_guards(app: FastAPI, *, api_key: str | None, max_body: int, timeout_s: float,
               tile_origin: str | None) -> None:
    """Wrap the app in the guards (outermost, so they see every request)."""
    app.add_middleware(_Guards, api_key=api_key, max_body=max_body, timeout_s=timeout_s,
                       tile_origin=tile_origin)
