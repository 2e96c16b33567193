"""Parse XML text safely and in bounded memory (defusedxml's SAX parser).

Entity declarations (the root of "billion laughs" expansion) and external entities
are refused by defusedxml; the text is fed in chunks to a streaming parser, so
memory holds the text and what the handler keeps, never a tree of the document.
"""

from __future__ import annotations

import xml.sax
import xml.sax.expatreader
import xml.sax.handler
from pathlib import Path

import defusedxml
import defusedxml.sax

from tripsim.errors import TripsimInputError

__all__ = ["parse_xml_text"]

_CHUNK = 1 << 20


def parse_xml_text(text: str, handler: xml.sax.handler.ContentHandler, path: str | Path, *,
                   what: str, error: type[TripsimInputError] = TripsimInputError) -> None:
    """Feed XML text to a SAX content handler.

    Parameters
    ----------
    text : str
        The document (decoded by :func:`tripsim.io._files.decode_text`).
    handler : xml.sax.handler.ContentHandler
        Receives the events; it may raise ``error`` itself (passed through).  Line
        numbers come through its ``setDocumentLocator``.
    path : str or Path
        For messages.
    what : str
        The format, for messages ("GPX", "OSM XML").
    error : type, default TripsimInputError
        The exception raised.
    """
    if not text.strip():
        raise error(f"is empty; expected {what}", path)
    parser = defusedxml.sax.make_parser()
    parser.setFeature(xml.sax.handler.feature_namespaces, False)
    parser.setContentHandler(handler)
    handler.setDocumentLocator(xml.sax.expatreader.ExpatLocator(parser))
    try:
        for start in range(0, len(text), _CHUNK):
            parser.feed(text[start:start + _CHUNK])
        parser.close()
    except xml.sax.SAXParseException as exc:
        raise error(f"not well-formed {what}: {exc.getMessage()} at line {exc.getLineNumber()}, "
                    f"column {exc.getColumnNumber()}", path) from None
    except defusedxml.DefusedXmlException as exc:
        raise error(f"the {what} declares XML entities ({type(exc).__name__}: {exc}); tripsim "
                    "refuses entity expansion and external entities", path) from None
