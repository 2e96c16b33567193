"""The front-end files of the map pages: Leaflet, installed by ``make`` from the npm registry.

``make`` runs ``npm ci`` in ``web/`` and copies Leaflet's script, style and images into
``tripsim/data/leaflet`` (not committed).  :func:`read_leaflet` returns them for a page
that carries them inline (the command line's ``--map``); :func:`leaflet_files` lists them
for the service, which sends them itself.  Nothing is fetched at run time.
"""

from __future__ import annotations

import base64
import re
from pathlib import Path

from tripsim.errors import TripsimInputError

__all__ = ["leaflet_dir", "leaflet_files", "read_leaflet"]

_MEDIA = {".js": "text/javascript", ".css": "text/css", ".png": "image/png"}


def leaflet_dir() -> Path:
    """The folder of the installed Leaflet files (``tripsim/data/leaflet``)."""
    return Path(__file__).resolve().parent.parent / "data" / "leaflet"


def leaflet_files() -> dict[str, tuple[Path, str]]:
    """Every installed Leaflet file by its name in the folder (``images/layers.png``).

    Returns
    -------
    dict
        Name → (path, media type).

    Raises
    ------
    TripsimInputError
        If Leaflet is not installed (run ``make assets``).
    """
    folder = leaflet_dir()
    if not (folder / "leaflet.js").is_file() or not (folder / "leaflet.css").is_file():
        raise TripsimInputError("Leaflet is not installed for the map pages; run `make assets` "
                                "(npm install of web/package.json)", folder)
    return {p.relative_to(folder).as_posix(): (p, _MEDIA[p.suffix])
            for p in sorted(folder.rglob("*")) if p.suffix in _MEDIA}


def read_leaflet() -> tuple[str, str, dict[str, str]]:
    """Leaflet's script, style and images, the images as ``data:`` URIs.

    Returns
    -------
    tuple
        (script, style, images): the style's images are written into it, and
        ``images`` maps each image's name (``marker-icon.png``) to its ``data:`` URI;
        a page that holds them opens offline.
    """
    files = leaflet_files()
    script = files["leaflet.js"][0].read_text(encoding="utf-8")
    style = files["leaflet.css"][0].read_text(encoding="utf-8")
    uris = {name: f"data:{media};base64,{base64.b64encode(path.read_bytes()).decode()}"
            for name, (path, media) in files.items() if media.startswith("image/")}

    def inline(m: re.Match[str]) -> str:
        name = m[1].strip("'\"")
        return f"url({uris[name]})" if name in uris else m[0]

    images = {name.rpartition("/")[2]: uri for name, uri in uris.items()}
    return script, re.sub(r"url\(([^)]+)\)", inline, style), images
