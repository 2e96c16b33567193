"""How the service is set up: where the store is, where it listens, its limits.

Values come from ``tripsim serve`` flags, else from environment variables, else from
defaults: the store in the per-user data folder, 127.0.0.1, no API key (a key is
required on any other address: :func:`check_bind` refuses to start without one).
"""

from __future__ import annotations

import ipaddress
import os
from dataclasses import dataclass, field
from pathlib import Path

import platformdirs

__all__ = ["ENV", "Settings", "check_bind", "database_url", "read_api_key"]

#: Environment variables the service reads.
ENV = {"db": "TRIPSIM_DB", "api_key": "TRIPSIM_API_KEY", "api_key_file": "TRIPSIM_API_KEY_FILE",
       "tiles": "TRIPSIM_TILES", "tile_attribution": "TRIPSIM_TILE_ATTRIBUTION"}


class SettingsError(ValueError):
    """A setting that keeps the service from starting (the message names it)."""


def default_db_path() -> Path:
    """The store's default file: ``tripsim.sqlite3`` in the per-user data folder."""
    return platformdirs.user_data_path("tripsim", appauthor=False) / "tripsim.sqlite3"


def database_url(value: str | None) -> str:
    """A SQLAlchemy URL from ``--db``: a URL as it is, a path as SQLite; None: the default."""
    if value is None:
        value = os.environ.get(ENV["db"]) or str(default_db_path())
    if "://" in value:
        return value
    path = Path(value).expanduser().resolve()
    if path.is_dir():
        raise SettingsError(f"--db: {value} is a folder; give a file name (or a database URL)")
    if not path.parent.exists():
        path.parent.mkdir(parents=True, exist_ok=True)
    return f"sqlite:///{path}"


def read_api_key(key: str | None = None, key_file: str | None = None) -> str | None:
    """The API key: given, from a file (first line), or from the environment."""
    key = key or os.environ.get(ENV["api_key"]) or None
    key_file = key_file or os.environ.get(ENV["api_key_file"]) or None
    if key is None and key_file is not None:
        try:
            key = Path(key_file).read_text(encoding="utf-8").strip().splitlines()[0].strip()
        except (OSError, IndexError, UnicodeDecodeError) as exc:
            raise SettingsError(f"--api-key-file: {key_file} cannot be read ({exc})") from None
    if key is not None and len(key) < 16:
        raise SettingsError("the API key is too short: use at least 16 characters")
    return key


def is_loopback(host: str) -> bool:
    """True for an address only this machine can reach (127.0.0.0/8, ::1, localhost)."""
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def check_bind(host: str, api_key: str | None) -> None:
    """Refuse to listen beyond this machine without an API key."""
    if not is_loopback(host) and not api_key:
        raise SettingsError(f"--host {host}: listening beyond this machine needs an API key "
                            f"(--api-key-file FILE or ${ENV['api_key']}); refusing to start")


@dataclass(frozen=True)
class Settings:
    """Everything the service needs to know (see ``tripsim serve --help``)."""

    db_url: str = field(default_factory=lambda: database_url(None))
    host: str = "127.0.0.1"
    port: int = 8000
    api_key: str | None = None
    workers: int = field(default_factory=lambda: max(1, min(4, os.cpu_count() or 1)))
    queue_size: int = 32
    max_upload_bytes: int = 64 * 1024 * 1024
    sync_wait_s: float = 2.0
    request_timeout_s: float = 60.0
    job_timeout_s: float = 3600.0
    tiles: str | None = field(default_factory=lambda: os.environ.get(ENV["tiles"]) or None)
    tile_attribution: str | None = field(
        default_factory=lambda: os.environ.get(ENV["tile_attribution"]) or None)
    files_dir: Path | None = None

    def inputs_dir(self) -> Path:
        """Where stored inputs are written for runs: beside a SQLite store, else the cache."""
        if self.files_dir is not None:
            return self.files_dir
        if self.db_url.startswith("sqlite:///"):
            db = Path(self.db_url.removeprefix("sqlite:///"))
            return db.with_name(db.name + ".files")
        return platformdirs.user_cache_path("tripsim", appauthor=False) / "service-files"
