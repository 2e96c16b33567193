"""Start the service with uvicorn (``tripsim serve``)."""

from __future__ import annotations

import logging

from tripsim_api.settings import Settings, check_bind

__all__ = ["serve"]


def serve(settings: Settings, *, log_level: str = "info") -> None:
    """Run the service until interrupted.

    Raises
    ------
    tripsim_api.settings.SettingsError
        When the address is beyond this machine and no API key is set.
    """
    import uvicorn
    from tripsim_api.app import create_app

    check_bind(settings.host, settings.api_key)
    logging.basicConfig(level=log_level.upper(), format="%(asctime)s %(name)s %(message)s")
    app = create_app(settings)
    uvicorn.run(app, host=settings.host, port=settings.port, log_level=log_level,
                timeout_keep_alive=5, limit_concurrency=256, server_header=False,
                h11_max_incomplete_event_size=64 * 1024)
