"""tripsim's HTTP service (installed as ``tripsim_api``): ``tripsim serve``.

The service sits on top of tripsim: it stores inputs (vehicles, routes, charger sets,
lodgings, weather) and runs (simulations, plans, fleet years) and computes them with
:mod:`tripsim.runner` in worker processes.  Nothing in tripsim imports it.

Modules: :mod:`~tripsim_api.app` (routes), :mod:`~tripsim_api.service` (what a request
does), :mod:`~tripsim_api.store` (SQLite or PostgreSQL through SQLAlchemy Core),
:mod:`~tripsim_api.jobs` (worker pool and bounded queue), :mod:`~tripsim_api.work` (what a
worker runs), :mod:`~tripsim_api.problems` (RFC 9457 errors and guards),
:mod:`~tripsim_api.pages` (HTML), :mod:`~tripsim_api.settings`, :mod:`~tripsim_api.server`
(uvicorn) and :mod:`~tripsim_api.bench` (a load benchmark).
"""

from __future__ import annotations

__all__ = ["create_app", "serve"]


def __getattr__(name: str) -> object:
    if name == "create_app":
        from tripsim_api.app import create_app

        return create_app
    if name == "serve":
        from tripsim_api.server import serve

        return serve
    raise AttributeError(name)
