"""What goes on a label, independent of how it is drawn.

A label carries the item's public ID twice: in a QR code (ISO/IEC 18004) for
scanners and in text for people, with the two or three facts a person needs at
the bench. The QR payload is the ID itself, upper case, so that the code uses
the compact alphanumeric mode; a lab may put a URI prefix in front of it
(``HTTPS://LAB.EXAMPLE/T/``), at the price of a longer payload and a larger
symbol.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

# RFC 3986: a scheme, a colon, then only characters a URI may hold. The prefix must
# end where the ID begins: after "/", "=", "#" or ":".
_URI_PREFIX = re.compile(r"^[A-Za-z][A-Za-z0-9+.\-]*:[A-Za-z0-9\-._~:/?#\[\]@!$&'()*+,;=%]*[/=#:]$")
URI_PREFIX_MAX = 120
# A sheet preview is looked at on a screen. An A4 or US Letter sheet at the highest
# resolution a preview may ask (1200 dpi) is 139 or 135 million pixels, one byte each in
# grey; a lab's own stock may be up to two metres a side, which at that resolution would
# be billions. Previews are capped just above a full office sheet at 1200 dpi.
MAX_PREVIEW_PIXELS = 150_000_000


@dataclass(frozen=True)
class LabelFacts:
    """One label's content: the ID, what it is, the lines of text and the QR payload.

    ``lines`` come most important first: a small label drops lines from the end.
    """

    item: str
    kind: str
    lines: tuple[str, ...]
    payload: str


@dataclass(frozen=True)
class PrintBatch:
    """What a renderer is asked to draw: one print job's labels, in order."""

    job: str
    labels: tuple[LabelFacts, ...]


@dataclass(frozen=True)
class Rendered:
    """A rendered print job: the document's bytes (their SHA-256 goes in the ledger)."""

    content: bytes
    pages: int


def qr_payload(item: str, uri_prefix: str | None) -> str:
    """The QR content for an item: its ID, behind the lab's URI prefix if one is set."""
    return f"{uri_prefix}{item}" if uri_prefix else item


def uri_prefix_problem(prefix: str) -> str | None:
    """Why ``prefix`` cannot be a label URI prefix, or None when it can."""
    if len(prefix) > URI_PREFIX_MAX:
        return f"is longer than {URI_PREFIX_MAX} characters"
    if not _URI_PREFIX.match(prefix):
        return (
            "is not a URI prefix: start with a scheme (https:, urn:), use no spaces, "
            "and end with '/', '=', '#' or ':' so that the ID follows it"
        )
    return None
