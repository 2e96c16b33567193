"""Parse XML text safely and in bounded memory: expat with defusedxml's refusals.

The parser is Python's expat, set up the way ``defusedxml`` sets up its own expat
readers (``defusedxml.expatreader``): an entity declaration (the root of "billion
laughs" expansion), an unparsed entity or an external entity reference raises
defusedxml's own exceptions before anything is expanded or fetched.  Expat is driven
directly (no SAX layer) because the per-element cost matters for half a million track
points; the text is fed in chunks to the streaming parser, so memory holds the text and
what the handler keeps, never a tree of the document.
"""

from __future__ import annotations

import pyexpat
from pathlib import Path
from typing import Any, Protocol

from defusedxml import DefusedXmlException, EntitiesForbidden, ExternalReferenceForbidden

from tripsim.errors import TripsimInputError

__all__ = ["XmlHandler", "parse_xml_text"]

_CHUNK = 1 << 20


class XmlHandler(Protocol):
    """What :func:`parse_xml_text` calls; ``parser`` is set to the expat parser (line numbers)."""

    parser: Any

    def start(self, name: str, attrs: dict[str, str]) -> None: ...
    def end(self, name: str) -> None: ...


def _entity_decl(name: str, is_parameter: int, value: str | None, base: str | None,
                 sysid: str | None, pubid: str | None, notation: str | None) -> None:
    raise EntitiesForbidden(name, value, base, sysid, pubid, notation)


def _unparsed_entity_decl(name: str, base: str | None, sysid: str | None, pubid: str | None,
                          notation: str | None) -> None:
    raise EntitiesForbidden(name, None, base, sysid, pubid, notation)


def _external_entity_ref(context: str, base: str | None, sysid: str | None,
                         pubid: str | None) -> None:
    raise ExternalReferenceForbidden(context, base, sysid, pubid)


def parse_xml_text(text: str, handler: XmlHandler, path: str | Path, *, what: str,
                   error: type[TripsimInputError] = TripsimInputError) -> None:
    """Feed XML text to a handler's ``start``, ``end`` (and ``data``, if it has one).

    Parameters
    ----------
    text : str
        The document (decoded by :func:`tripsim.io._files.decode_text`; an encoding
        declaration in it is ignored).
    handler : XmlHandler
        Receives the events; it may raise ``error`` itself (passed through).
    path : str or Path
        For messages.
    what : str
        The format, for messages ("GPX", "OSM XML").
    error : type, default TripsimInputError
        The exception raised.
    """
    if not text.strip():
        raise error(f"is empty; expected {what}", path)
    parser = pyexpat.ParserCreate()
    parser.EntityDeclHandler = _entity_decl
    parser.UnparsedEntityDeclHandler = _unparsed_entity_decl
    parser.ExternalEntityRefHandler = _external_entity_ref
    parser.buffer_text = True
    parser.StartElementHandler = handler.start
    parser.EndElementHandler = handler.end
    if hasattr(handler, "data"):
        parser.CharacterDataHandler = handler.data
    handler.parser = parser
    try:
        for start in range(0, len(text), _CHUNK):
            parser.Parse(text[start:start + _CHUNK], False)
        parser.Parse("", True)
    except pyexpat.ExpatError as exc:
        raise error(f"not well-formed {what}: {pyexpat.ErrorString(exc.code)} at line "
                    f"{exc.lineno}, column {exc.offset}", path) from None
    except DefusedXmlException as exc:
        raise error(f"the {what} declares XML entities ({type(exc).__name__}: {exc}); tripsim "
                    "refuses entity expansion and external entities", path) from None
    finally:
        handler.parser = None
