"""One way to open input files: regular files only, a size cap, one text decoding.

Every reader goes through :func:`input_file` (for libraries that open the path
themselves) or :func:`read_text` / :func:`read_bytes`.  Problems end in a one-line
:class:`~tripsim.errors.TripsimInputError` (or the subclass the reader passes) that
names the file as the user gave it:

* a missing path, a folder, a device or FIFO (``/dev/zero``, a named pipe: never
  opened for reading, so nothing blocks), a file over its size cap
  (:data:`tripsim.io._limits.SIZE_CAP_MB`);
* ``.gz`` / ``.bz2`` that are corrupt or truncated, or decompress past the cap;
* text that is not UTF-8 (the byte and its offset are named), UTF-16 outside XML,
  and NUL bytes (binary files given as text).  A UTF-8 byte-order mark is dropped.
  XML honours its encoding declaration (``<?xml ... encoding="ISO-8859-1"?>``) and a
  UTF-16 byte-order mark.
"""

from __future__ import annotations

import bz2
import codecs
import errno
import gzip
import os
import re
import stat
import tomllib
import zlib
from collections.abc import Callable
from pathlib import Path
from typing import Any, BinaryIO

from tripsim.errors import TripsimInputError
from tripsim.io._limits import size_cap_bytes

__all__ = ["decode_text", "input_file", "read_bytes", "read_text", "read_toml"]

_CHUNK = 1 << 20
_XML_DECL = re.compile(rb"""^<\?xml[^>]*?\bencoding\s*=\s*["']([A-Za-z][A-Za-z0-9._:-]*)["']""")


def _size_text(n: float) -> str:
    for unit in ("bytes", "kB", "MB", "GB", "TB"):
        if n < 1024 or unit == "TB":
            return f"{n:.0f} {unit}" if unit == "bytes" else f"{n:.1f} {unit}"
        n /= 1024.0
    return f"{n:.1f} TB"  # pragma: no cover


_KIND_NAMES = {"vehicle": "a vehicle file", "trips": "a trip list",
               "scenario": "a scenario file", "gpx": "a GPX file",
               "geojson": "a GeoJSON file", "osm": "an OSM file", "weather": "a weather file",
               "csv": "a CSV file", "dem": "an elevation raster"}


def _too_big(size: str, kind: str, cap: int, what: str = "is") -> str:
    return (f"{what} {size}; {_KIND_NAMES.get(kind, kind)} is at most {_size_text(cap)} (raise "
            f"the limit with TRIPSIM_MAX_{kind.upper()}_MB for a larger input)")


def _check_stat(st: os.stat_result, path: Path, kind: str,
                error: type[TripsimInputError]) -> None:
    if stat.S_ISDIR(st.st_mode):
        raise error("is a folder, expected a file", path)
    if not stat.S_ISREG(st.st_mode):
        raise error("is not a regular file (a device, pipe or socket); give a file", path)
    cap = size_cap_bytes(kind)
    if st.st_size > cap:
        raise error(_too_big(_size_text(st.st_size), kind, cap), path)


def _os_problem(exc: OSError) -> str:
    if exc.errno == errno.ENOENT:
        return "no such file"
    if exc.errno == errno.ENOTDIR:
        return "no such file (a part of the path is not a folder)"
    return f"cannot read the file ({exc.strerror or exc})"


def input_file(path: str | Path, kind: str, *,
               error: type[TripsimInputError] = TripsimInputError) -> Path:
    """Check that ``path`` is a regular file within the size cap of ``kind``.

    For readers whose library opens the path itself (rasters).  The file is not opened.

    Parameters
    ----------
    path : str or Path
        As the user gave it.
    kind : str
        A key of :data:`tripsim.io._limits.SIZE_CAP_MB`.
    error : type, default TripsimInputError
        The exception raised.

    Returns
    -------
    Path
    """
    path = Path(path)
    try:
        st = path.stat()
    except OSError as exc:
        raise error(_os_problem(exc), path) from None
    _check_stat(st, path, kind, error)
    return path


def _decompressor(name: str) -> tuple[str, Callable[[BinaryIO], BinaryIO]] | None:
    if name.endswith(".gz"):
        return "gzip", lambda fh: gzip.GzipFile(fileobj=fh, mode="rb")
    if name.endswith(".bz2"):
        return "bzip2", lambda fh: bz2.BZ2File(fh, mode="rb")
    return None


def read_bytes(path: str | Path, kind: str, *, error: type[TripsimInputError] = TripsimInputError,
               decompress: bool = False) -> bytes:
    """The bytes of a regular file, at most the size cap of ``kind``.

    The file is opened without blocking and checked again once open, so a FIFO or device
    swapped in after the check is refused too.

    Parameters
    ----------
    path : str or Path
        As the user gave it.
    kind : str
        A key of :data:`tripsim.io._limits.SIZE_CAP_MB`.
    error : type, default TripsimInputError
        The exception raised.
    decompress : bool, default False
        Decompress ``.gz`` and ``.bz2`` files (the cap holds for the decompressed size).

    Returns
    -------
    bytes
    """
    path = input_file(path, kind, error=error)  # never open a device or FIFO
    cap = size_cap_bytes(kind)
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0))
    except OSError as exc:
        if exc.errno == errno.EISDIR:
            raise error("is a folder, expected a file", path) from None
        raise error(_os_problem(exc), path) from None
    with os.fdopen(fd, "rb") as fh:
        st = os.fstat(fh.fileno())
        _check_stat(st, path, kind, error)
        packed = _decompressor(path.name.lower()) if decompress else None
        if packed is None:
            try:  # the size known, read at once (read(cap) would allocate the whole cap)
                return _read_capped(fh, st.st_size + 1, cap, lambda: error(
                    _too_big(f"over {_size_text(cap)}", kind, cap), path))
            except OSError as exc:
                raise error(_os_problem(exc), path) from None
        fmt, opener = packed
        try:
            with opener(fh) as unpacked:
                return _read_capped(unpacked, _CHUNK, cap, lambda: error(
                    _too_big(f"over {_size_text(cap)}", kind, cap, "decompresses to"), path))
        except TripsimInputError:
            raise
        except (OSError, EOFError, zlib.error, ValueError) as exc:
            detail = str(exc) or type(exc).__name__
            raise error(f"is not a readable {fmt} file ({detail})", path) from None


def _read_capped(fh: BinaryIO, first: int, cap: int,
                 too_big: Callable[[], TripsimInputError]) -> bytes:
    """Read to the end in chunks, refusing more than ``cap`` bytes."""
    parts: list[bytes] = []
    total, size = 0, min(first, cap + 1)
    while chunk := fh.read(size):
        total += len(chunk)
        if total > cap:
            raise too_big()
        parts.append(chunk)
        size = min(_CHUNK, cap + 1 - total)
    return parts[0] if len(parts) == 1 else b"".join(parts)


def _line_of(data: bytes, offset: int) -> int:
    return data.count(b"\n", 0, offset) + 1


def _decode(data: bytes, encoding: str, path: Path, error: type[TripsimInputError],
            name: str = "UTF-8") -> str:
    try:
        return data.decode(encoding)
    except UnicodeDecodeError as exc:
        bad = exc.object[exc.start:exc.start + 1].hex()
        raise error(f"is not {name} text: byte 0x{bad} at offset {exc.start} (line "
                    f"{_line_of(data, exc.start)}); save the file as UTF-8", path) from None


def decode_text(data: bytes, path: str | Path, *, xml: bool = False,
                error: type[TripsimInputError] = TripsimInputError) -> str:
    """Decode the bytes of a text file the one way tripsim reads text.

    UTF-8, with an optional byte-order mark (dropped).  For XML, a UTF-16 byte-order mark
    or an encoding declaration is honoured.  NUL characters are refused (a binary file).

    Returns
    -------
    str
        The text, without a byte-order mark.
    """
    path = Path(path)
    encoding, name = "utf-8", "UTF-8"
    if data.startswith(codecs.BOM_UTF8):
        data = data[len(codecs.BOM_UTF8):]
    elif data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        if not xml:
            raise error("is UTF-16 text; save it as UTF-8", path)
        encoding, name = "utf-16", "UTF-16"
    elif xml and (m := _XML_DECL.match(data[:256])):
        declared = name = m[1].decode("ascii")
        try:
            encoding = codecs.lookup(declared).name
        except LookupError:
            raise error(f"declares the unknown encoding {declared!r}", path) from None
        if encoding.startswith("utf-16") or encoding.startswith("utf-32"):
            raise error(f"declares {declared} but has no byte-order mark", path)
    text = _decode(data, encoding, path, error, name)
    if encoding == "utf-16":
        text = text.removeprefix("\ufeff")
    nul = text.find("\x00")
    if nul >= 0:
        raise error(f"holds a NUL character at line {text.count(chr(10), 0, nul) + 1}: a "
                    "binary file, not text", path)
    return text


def read_text(path: str | Path, kind: str, *, xml: bool = False, decompress: bool = False,
              error: type[TripsimInputError] = TripsimInputError) -> str:
    """Read a text file: :func:`read_bytes`, then :func:`decode_text`.

    Parameters
    ----------
    path : str or Path
        As the user gave it.
    kind : str
        A key of :data:`tripsim.io._limits.SIZE_CAP_MB`.
    xml : bool, default False
        Honour an XML encoding declaration and UTF-16 byte-order marks.
    decompress : bool, default False
        Decompress ``.gz`` and ``.bz2`` files.
    error : type, default TripsimInputError
        The exception raised.

    Returns
    -------
    str
    """
    data = read_bytes(path, kind, error=error, decompress=decompress)
    return decode_text(data, path, xml=xml, error=error)


def read_toml(path: str | Path, kind: str, *,
              error: type[TripsimInputError] = TripsimInputError) -> dict[str, Any]:
    """Read a TOML file: :func:`read_text`, then :mod:`tomllib`, errors on one line."""
    text = read_text(path, kind, error=error)
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise error(f"not valid TOML: {exc}", path) from None
    except RecursionError:
        raise error("not valid TOML: arrays or tables nested too deeply to read", path) from None
    except ValueError as exc:  # integers of thousands of digits
        raise error(f"not valid TOML: {str(exc).splitlines()[0]}", path) from None
