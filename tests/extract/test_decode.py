"""Page bytes to text: BOM, transport charset, meta prescan, fallback (HTML §13.2.3)."""

from __future__ import annotations

from pathlib import Path

import pytest

from harvester.extract.decode import decode_html, sniff_encoding

DATA = Path(__file__).resolve().parent.parent / "data" / "html"

# Encoding Standard §4.2 ("Names and labels"): every label of windows-1252. Cross-checked
# against several independent implementations of the Encoding Standard's label table.
WINDOWS_1252_LABELS = (
    "ansi_x3.4-1968",
    "ascii",
    "cp1252",
    "cp819",
    "csisolatin1",
    "ibm819",
    "iso-8859-1",
    "iso-ir-100",
    "iso8859-1",
    "iso88591",
    "iso_8859-1",
    "iso_8859-1:1987",
    "l1",
    "latin1",
    "us-ascii",
    "windows-1252",
    "x-cp1252",
)

# Two probes, so that no wrong reading can pass by luck: 93/94 are curly quotes in windows-1252
# but C1 controls in ISO-8859-1 (and invalid UTF-8); C3 A9 is valid UTF-8 ("é") but "Ã©" in
# windows-1252, so a label that is ignored and falls back to UTF-8 shows up too.
PROBES = (
    (b"\x93q\x94", "\u201cq\u201d"),
    (b"\xc3\xa9", "\u00c3\u00a9"),
)
PROBE, PROBE_1252 = PROBES[0]


# --- BOM -----------------------------------------------------------------------------------------


def test_utf8_bom_wins_over_meta() -> None:
    # HTML §13.2.3.1: BOM sniffing comes first and gives the encoding with certainty.
    data = (DATA / "bom_utf8_meta_1252.html").read_bytes()
    assert sniff_encoding(data) == ("utf-8", True)
    text = decode_html(data)
    assert text.startswith("<!DOCTYPE html>")  # the BOM itself is not part of the text
    assert "<p>Café</p>" in text


def test_bom_wins_over_the_transport_charset() -> None:
    # Encoding Standard "decode": a BOM overrides the encoding the caller passes in.
    data = b"\xef\xbb\xbf<p>Caf\xc3\xa9</p>"
    assert decode_html(data, "windows-1252") == "<p>Café</p>"


@pytest.mark.parametrize(("codec", "bom"), [("utf-16-le", b"\xff\xfe"), ("utf-16-be", b"\xfe\xff")])
def test_utf16_boms(codec: str, bom: bytes) -> None:
    # HTML §13.2.3.1 / Encoding Standard "BOM sniff": FF FE → UTF-16LE, FE FF → UTF-16BE.
    data = bom + '<meta charset="windows-1252"><p>Café</p>'.encode(codec)
    assert sniff_encoding(data)[1] is True
    assert decode_html(data) == '<meta charset="windows-1252"><p>Café</p>'


# --- transport ------------------------------------------------------------------------------------


def test_transport_charset_beats_meta() -> None:
    # HTML §13.2.3.1: the transport layer's encoding comes before the prescan.
    data = '<meta charset="windows-1252"><p>Café</p>'.encode()
    assert decode_html(data, "utf-8") == '<meta charset="windows-1252"><p>Café</p>'
    data = b'<meta charset="utf-8"><p>Caf\xe9</p>'
    assert decode_html(data, "windows-1252") == '<meta charset="utf-8"><p>Café</p>'


def test_unknown_transport_charset_falls_through_to_meta() -> None:
    # HTML §13.2.3.1: only a *supported* transport encoding is used.
    data = b'<meta charset="windows-1252"><p>\x93q\x94</p>'
    assert decode_html(data, "no-such-charset") == '<meta charset="windows-1252"><p>“q”</p>'


# --- meta prescan ---------------------------------------------------------------------------------


def test_meta_charset_windows_1252_page() -> None:
    data = (DATA / "windows1252_meta.html").read_bytes()
    assert sniff_encoding(data)[0] in {"cp1252", "windows-1252"}
    text = decode_html(data)
    assert "<td>Café</td><td>\u201cquoted\u201d</td><td>€ 5</td>" in text


def test_meta_http_equiv_content_type() -> None:
    # HTML §13.2.3.2: <meta http-equiv="Content-Type" content="...; charset=..."> counts too.
    data = (
        b'<meta http-equiv="Content-Type" content="text/html; charset=windows-1252">'
        b"<p>\x93q\x94</p>"
    )
    assert decode_html(data).endswith("<p>“q”</p>")


def test_meta_naming_utf16_means_utf8() -> None:
    # HTML §13.2.3.2 prescan: "If charset is UTF-16BE/LE, then set charset to UTF-8."
    data = '<meta charset="utf-16"><p>Café</p>'.encode()
    assert decode_html(data) == '<meta charset="utf-16"><p>Café</p>'


def test_meta_after_the_first_1024_bytes_is_not_seen() -> None:
    # HTML §13.2.3.2: the prescan looks at the first 1024 bytes only; these bytes are valid
    # UTF-8, so the fallback reads them as UTF-8.
    data = b"<!--" + b"x" * 1100 + b'--><meta charset="windows-1252"><p>Caf\xc3\xa9</p>'
    assert decode_html(data).endswith("<p>Café</p>")


def test_meta_content_without_http_equiv_is_ignored() -> None:
    # HTML §13.2.3.2 prescan: a charset found in "content" sets need pragma = true, and a meta
    # with need pragma true but no http-equiv="content-type" (got pragma false) is skipped.
    # These bytes are valid UTF-8, so the fallback reads them as UTF-8.
    data = b'<meta name="description" content="charset=windows-1251"><p>Caf\xc3\xa9</p>'
    assert decode_html(data).endswith("<p>Café</p>")


def test_meta_inside_a_comment_is_ignored() -> None:
    # HTML §13.2.3.2 prescan: "<!--" is skipped up to the end of the next "-->".
    data = b'<!-- <meta charset="windows-1251"> --><p>Caf\xc3\xa9</p>'
    assert decode_html(data).endswith("<p>Café</p>")


# --- labels --------------------------------------------------------------------------------------


@pytest.mark.parametrize(("data", "text"), PROBES, ids=["c1-bytes", "utf8-bytes"])
@pytest.mark.parametrize("label", WINDOWS_1252_LABELS)
def test_windows_1252_labels_from_transport(label: str, data: bytes, text: str) -> None:
    # Encoding Standard §4.2: all these labels name windows-1252 (latin1 and ascii included).
    assert decode_html(data, label) == text


@pytest.mark.parametrize(("data", "text"), PROBES, ids=["c1-bytes", "utf8-bytes"])
@pytest.mark.parametrize("label", WINDOWS_1252_LABELS)
def test_windows_1252_labels_from_meta(label: str, data: bytes, text: str) -> None:
    meta = f'<meta charset="{label}">'
    assert decode_html(meta.encode() + data) == meta + text


def test_labels_are_case_and_space_insensitive() -> None:
    # Encoding Standard "get an encoding": strip ASCII whitespace, match ASCII case-insensitively.
    assert decode_html(PROBE, " LATIN1 ") == PROBE_1252
    assert decode_html(PROBE, "Windows-1252") == PROBE_1252


# --- fallback ------------------------------------------------------------------------------------


def test_invalid_utf8_without_declaration_is_windows_1252() -> None:
    # decode.py docstring: valid UTF-8 is read as UTF-8, anything else as windows-1252 (the
    # Encoding Standard's fallback for Western locales, HTML §13.2.3.1 last step).
    data = (DATA / "undeclared_invalid_utf8.html").read_bytes()
    assert sniff_encoding(data) in {("cp1252", False), ("windows-1252", False)}
    assert "<p>Café €</p>" in decode_html(data)


def test_valid_utf8_without_declaration_is_utf8() -> None:
    assert decode_html("<p>Café €</p>".encode()) == "<p>Café €</p>"


def test_windows_1252_maps_every_byte() -> None:
    # Encoding Standard index-windows-1252 (from memory): the five bytes Windows leaves
    # undefined (81 8D 8F 90 9D) map to the C1 controls of the same number, so decoding
    # windows-1252 never fails and never produces U+FFFD.
    assert decode_html(b"\x80\x81\x8d\x8f\x90\x9d\x9f", "windows-1252") == (
        "\u20ac\u0081\u008d\u008f\u0090\u009d\u0178"
    )


def test_undecodable_bytes_become_replacement_characters() -> None:
    # Encoding Standard "decode" with error mode "replacement" (what a browser does).
    assert decode_html(b"<p>a\xffb</p>", "utf-8") == "<p>a\ufffdb</p>"
