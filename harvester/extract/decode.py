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

from harvester.extract.encoding_labels import CODECS, encoding_for_label

__all__ = ["decode_html", "sniff_encoding"]

_BOMS = (
    (codecs.BOM_UTF8, "utf-8"),
    (codecs.BOM_UTF16_LE, "utf-16-le"),
    (codecs.BOM_UTF16_BE, "utf-16-be"),
)
# Comments and meta tags in the first 1024 bytes, in order (HTML §13.2.3.2 prescan, in brief).
_PRESCAN_TOKEN = re.compile(rb"<!--.*?-->|<meta[\s/][^>]*>", re.I | re.S)
_ATTRIBUTE = re.compile(rb"""([^\s=/>]+)\s*(?:=\s*("[^"]*"|'[^']*'|[^\s>]+))?""")
_CHARSET_IN_CONTENT = re.compile(rb"""charset\s*=\s*["']?([^\s"';]+)""", re.I)
_WINDOWS_1252 = "harvester-windows-1252"


def _c1_passthrough(error: UnicodeError) -> tuple[str, int]:
    # Encoding Standard, index windows-1252: the five bytes Python's cp1252 leaves undefined
    # (0x81, 0x8D, 0x8F, 0x90, 0x9D) map to the C1 control with the same number.
    assert isinstance(error, UnicodeDecodeError)
    return chr(error.object[error.start]), error.start + 1


codecs.register_error(_WINDOWS_1252, _c1_passthrough)
_X_USER_DEFINED = {byte: 0xF780 + byte - 0x80 for byte in range(0x80, 0x100)}


def _normalise(label: str | None) -> str | None:
    """The codec for an Encoding Standard label (encoding_labels.py), or None if unknown."""
    encoding = encoding_for_label(label) if label else None
    return CODECS[encoding] if encoding else None


def sniff_encoding(data: bytes, declared: str | None = None) -> tuple[str, bool]:
    """The encoding to read ``data`` with, and whether a BOM must be skipped."""
    for bom, name in _BOMS:
        if data.startswith(bom):
            return name, True
    from_transport = _normalise(declared)
    if from_transport:
        return from_transport, False
    from_meta = _prescan(data[:1024])
    if from_meta:
        # §13.2.3.2: a meta naming UTF-16 means UTF-8 (the bytes were already ASCII-compatible),
        # and one naming x-user-defined means windows-1252.
        if from_meta.startswith("utf-16"):
            return "utf-8", False
        return ("windows-1252" if from_meta == "x-user-defined" else from_meta), False
    try:
        data.decode("utf-8")
    except UnicodeDecodeError:
        return "windows-1252", False
    return "utf-8", False


def _prescan(head: bytes) -> str | None:
    """The encoding a ``<meta>`` declares, skipping comments (HTML §13.2.3.2, in brief)."""
    for token in _PRESCAN_TOKEN.finditer(head):
        if token.group(0).startswith(b"<!--"):
            continue
        attributes: dict[bytes, bytes] = {}
        for name, value in _ATTRIBUTE.findall(token.group(0)[5:]):
            attributes.setdefault(name.lower(), value.strip(b"\"'"))
        label: bytes | None = attributes.get(b"charset")
        if label is None and attributes.get(b"http-equiv", b"").lower() == b"content-type":
            # The "need pragma" rule: content's charset counts only with http-equiv.
            found = _CHARSET_IN_CONTENT.search(attributes.get(b"content", b""))
            label = found.group(1) if found else None
        if label is not None:
            encoding = _normalise(label.decode("ascii", "replace"))
            if encoding:
                return encoding
    return None


def decode_html(data: bytes, declared: str | None = None) -> str:
    """Decode page bytes to text; undecodable bytes become U+FFFD rather than an error."""
    encoding, has_bom = sniff_encoding(data, declared)
    if has_bom:
        data = data[len(codecs.BOM_UTF8) if encoding == "utf-8" else 2 :]
    if encoding == "windows-1252":
        return data.decode("cp1252", errors=_WINDOWS_1252)
    if encoding == "replacement":
        # Encoding Standard §14.1: the whole input reads as one U+FFFD (these encodings were
        # used to smuggle markup past filters), and empty input as nothing.
        return "\ufffd" if data else ""
    if encoding == "x-user-defined":
        # Encoding Standard §14.5: bytes 80-FF map to U+F780-U+F7FF, ASCII stays ASCII.
        return data.decode("latin-1").translate(_X_USER_DEFINED)
    return data.decode(encoding, errors="replace")
