"""Turn a page's bytes into text the way a browser would pick the encoding, in brief.

Order (HTML §13.2.3.1 "determining the character encoding"): a byte order mark wins; then the
encoding the transport declared (HTTP ``Content-Type`` charset); then a ``<meta charset>`` or
``<meta http-equiv="Content-Type">`` in the first 1024 bytes (a simplified §13.2.3.2 prescan);
then UTF-8 if the bytes are valid UTF-8, else windows-1252 (the Encoding Standard's fallback
for Western pages).
"""

from __future__ import annotations

import codecs
import re

__all__ = ["decode_html", "sniff_encoding"]

_BOMS = (
    (codecs.BOM_UTF8, "utf-8"),
    (codecs.BOM_UTF16_LE, "utf-16-le"),
    (codecs.BOM_UTF16_BE, "utf-16-be"),
)
_META_CHARSET = re.compile(rb"<meta[^>]+charset\s*=\s*[\"']?\s*([A-Za-z0-9._:-]+)", re.I)
# Encoding Standard §4.2: these labels all mean windows-1252.
_WINDOWS_1252_LABELS = frozenset(
    {"iso-8859-1", "iso8859-1", "latin1", "latin-1", "us-ascii", "ascii"}
)


def _normalise(label: str | None) -> str | None:
    if not label:
        return None
    label = label.strip().lower()
    if label in _WINDOWS_1252_LABELS:
        return "cp1252"
    try:
        return codecs.lookup(label).name
    except LookupError:
        return None


def sniff_encoding(data: bytes, declared: str | None = None) -> tuple[str, bool]:
    """The encoding to read ``data`` with, and whether a BOM must be skipped."""
    for bom, name in _BOMS:
        if data.startswith(bom):
            return name, True
    from_transport = _normalise(declared)
    if from_transport:
        return from_transport, False
    match = _META_CHARSET.search(data[:1024])
    if match:
        from_meta = _normalise(match.group(1).decode("ascii", "replace"))
        # §13.2.3.2: a meta naming UTF-16 means UTF-8 (the bytes were already ASCII-compatible).
        if from_meta and from_meta.startswith("utf-16"):
            return "utf-8", False
        if from_meta:
            return from_meta, False
    try:
        data.decode("utf-8")
    except UnicodeDecodeError:
        return "cp1252", False
    return "utf-8", False


def decode_html(data: bytes, declared: str | None = None) -> str:
    """Decode page bytes to text; undecodable bytes become U+FFFD rather than an error."""
    encoding, has_bom = sniff_encoding(data, declared)
    if has_bom:
        data = data[len(codecs.BOM_UTF8) if encoding == "utf-8" else 2 :]
    return data.decode(encoding, errors="replace")
