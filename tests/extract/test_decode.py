"""Page bytes to text: BOM, transport charset, meta prescan, fallback (HTML §13.2.3)."""

from __future__ import annotations

from pathlib import Path

import pytest

from harvester.extract.decode import decode_html, sniff_encoding

DATA = Path(__file__).resolve().parent.parent / "data" / "html"

# The WHATWG Encoding Standard §4.2 ("Names and labels") table, typed from memory of the
# standard (its encodings.json), not from our code: each encoding, then all of its labels.
LABEL_TABLE: dict[str, str] = {
    "UTF-8": "unicode-1-1-utf-8 unicode11utf8 unicode20utf8 utf-8 utf8 x-unicode20utf8",
    "IBM866": "866 cp866 csibm866 ibm866",
    "ISO-8859-2": "csisolatin2 iso-8859-2 iso-ir-101 iso8859-2 iso88592 iso_8859-2 "
    "iso_8859-2:1987 l2 latin2",
    "ISO-8859-3": "csisolatin3 iso-8859-3 iso-ir-109 iso8859-3 iso88593 iso_8859-3 "
    "iso_8859-3:1988 l3 latin3",
    "ISO-8859-4": "csisolatin4 iso-8859-4 iso-ir-110 iso8859-4 iso88594 iso_8859-4 "
    "iso_8859-4:1988 l4 latin4",
    "ISO-8859-5": "csisolatincyrillic cyrillic iso-8859-5 iso-ir-144 iso8859-5 iso88595 "
    "iso_8859-5 iso_8859-5:1988",
    "ISO-8859-6": "arabic asmo-708 csiso88596e csiso88596i csisolatinarabic ecma-114 iso-8859-6 "
    "iso-8859-6-e iso-8859-6-i iso-ir-127 iso8859-6 iso88596 iso_8859-6 iso_8859-6:1987",
    "ISO-8859-7": "csisolatingreek ecma-118 elot_928 greek greek8 iso-8859-7 iso-ir-126 "
    "iso8859-7 iso88597 iso_8859-7 iso_8859-7:1987 sun_eu_greek",
    "ISO-8859-8": "csiso88598e csisolatinhebrew hebrew iso-8859-8 iso-8859-8-e iso-ir-138 "
    "iso8859-8 iso88598 iso_8859-8 iso_8859-8:1988 visual",
    "ISO-8859-8-I": "csiso88598i iso-8859-8-i logical",
    "ISO-8859-10": "csisolatin6 iso-8859-10 iso-ir-157 iso8859-10 iso885910 l6 latin6",
    "ISO-8859-13": "iso-8859-13 iso8859-13 iso885913",
    "ISO-8859-14": "iso-8859-14 iso8859-14 iso885914",
    "ISO-8859-15": "csisolatin9 iso-8859-15 iso8859-15 iso885915 iso_8859-15 l9",
    "ISO-8859-16": "iso-8859-16",
    "KOI8-R": "cskoi8r koi koi8 koi8-r koi8_r",
    "KOI8-U": "koi8-ru koi8-u",
    "macintosh": "csmacintosh mac macintosh x-mac-roman",
    "windows-874": "dos-874 iso-8859-11 iso8859-11 iso885911 tis-620 windows-874",
    "windows-1250": "cp1250 windows-1250 x-cp1250",
    "windows-1251": "cp1251 windows-1251 x-cp1251",
    "windows-1252": "ansi_x3.4-1968 ascii cp1252 cp819 csisolatin1 ibm819 iso-8859-1 iso-ir-100 "
    "iso8859-1 iso88591 iso_8859-1 iso_8859-1:1987 l1 latin1 us-ascii windows-1252 x-cp1252",
    "windows-1253": "cp1253 windows-1253 x-cp1253",
    "windows-1254": "cp1254 csisolatin5 iso-8859-9 iso-ir-148 iso8859-9 iso88599 iso_8859-9 "
    "iso_8859-9:1989 l5 latin5 windows-1254 x-cp1254",
    "windows-1255": "cp1255 windows-1255 x-cp1255",
    "windows-1256": "cp1256 windows-1256 x-cp1256",
    "windows-1257": "cp1257 windows-1257 x-cp1257",
    "windows-1258": "cp1258 windows-1258 x-cp1258",
    "x-mac-cyrillic": "x-mac-cyrillic x-mac-ukrainian",
    "GBK": "chinese csgb2312 csiso58gb231280 gb2312 gb_2312 gb_2312-80 gbk iso-ir-58 x-gbk",
    "gb18030": "gb18030",
    "Big5": "big5 big5-hkscs cn-big5 csbig5 x-x-big5",
    "EUC-JP": "cseucpkdfmtjapanese euc-jp x-euc-jp",
    "ISO-2022-JP": "csiso2022jp iso-2022-jp",
    "Shift_JIS": "csshiftjis ms932 ms_kanji shift-jis shift_jis sjis windows-31j x-sjis",
    "EUC-KR": "cseuckr csksc56011987 euc-kr iso-ir-149 korean ks_c_5601-1987 ks_c_5601-1989 "
    "ksc5601 ksc_5601 windows-949",
    "replacement": "csiso2022kr hz-gb-2312 iso-2022-cn iso-2022-cn-ext iso-2022-kr replacement",
    "UTF-16BE": "unicodefffe utf-16be",
    "UTF-16LE": "csunicode iso-10646-ucs-2 ucs-2 unicode unicodefeff utf-16 utf-16le",
    "x-user-defined": "x-user-defined",
}

# One probe per encoding and the text it reads as, worked out by hand from the standard's
# index for that encoding (from memory; each is a well-known character): every label of the
# encoding must read its probe so.
ENCODING_PROBES: dict[str, tuple[bytes, str]] = {
    "UTF-8": (b"\xc3\xa9\xe9", "\u00e9\ufffd"),  # é, then a lone E9: invalid, not é (1252)
    "IBM866": (b"\x80", "\u0410"),  # А
    "ISO-8859-2": (b"\xb1", "\u0105"),  # ą
    "ISO-8859-3": (b"\xa1", "\u0126"),  # Ħ
    "ISO-8859-4": (b"\xa2", "\u0138"),  # ĸ
    "ISO-8859-5": (b"\xb0", "\u0410"),  # А
    "ISO-8859-6": (b"\xc7", "\u0627"),  # ا
    "ISO-8859-7": (b"\xe1", "\u03b1"),  # α
    "ISO-8859-8": (b"\xe0", "\u05d0"),  # א
    "ISO-8859-8-I": (b"\xe0", "\u05d0"),  # א
    "ISO-8859-10": (b"\xa1", "\u0104"),  # Ą
    "ISO-8859-13": (b"\xa1", "\u201d"),  # ”
    "ISO-8859-14": (b"\xa1", "\u1e02"),  # Ḃ
    "ISO-8859-15": (b"\xa4", "\u20ac"),  # €
    "ISO-8859-16": (b"\xa4", "\u20ac"),  # €
    "KOI8-R": (b"\xc1", "\u0430"),  # а
    "KOI8-U": (b"\xa4", "\u0454"),  # є
    "macintosh": (b"\x8e", "\u00e9"),  # é
    "windows-874": (b"\x80\xa1", "\u20ac\u0e01"),  # € ก
    "windows-1250": (b"\x8a", "\u0160"),  # Š
    "windows-1251": (b"\xc0", "\u0410"),  # А
    "windows-1252": (b"\x93q\x94", "\u201cq\u201d"),  # “q”
    "windows-1253": (b"\xe1", "\u03b1"),  # α
    "windows-1254": (b"\x80\xd0", "\u20ac\u011e"),  # € Ğ (ISO-8859-9 would read 80 as C1)
    "windows-1255": (b"\xe0", "\u05d0"),  # א
    "windows-1256": (b"\xc7", "\u0627"),  # ا
    "windows-1257": (b"\xc0", "\u0104"),  # Ą
    "windows-1258": (b"\xc3", "\u0102"),  # Ă
    "x-mac-cyrillic": (b"\x80", "\u0410"),  # А
    "GBK": (b"\xb0\xa1", "\u554a"),  # 啊
    "gb18030": (b"\x81\x30\x81\x30", "\u0080"),  # the first four-byte sequence
    "Big5": (b"\xa4\x40", "\u4e00"),  # 一
    "EUC-JP": (b"\xa4\xa2", "\u3042"),  # あ
    "ISO-2022-JP": (b'\x1b$B$"\x1b(B', "\u3042"),  # あ between the JIS X 0208 escapes
    "Shift_JIS": (b"\x82\xa0", "\u3042"),  # あ
    "EUC-KR": (b"\xb0\xa1", "\uac00"),  # 가
    "replacement": (b"<p>x</p>", "\ufffd"),  # Encoding Standard §14.1: all of it, one U+FFFD
    "UTF-16BE": (b"\x00a", "a"),
    "UTF-16LE": (b"a\x00", "a"),
    "x-user-defined": (b"a\x80\xff", "a\uf780\uf7ff"),  # §14.5: 80-FF → U+F780-U+F7FF
}
LABELS = [(encoding, label) for encoding, labels in LABEL_TABLE.items() for label in labels.split()]
WINDOWS_1252_LABELS = tuple(LABEL_TABLE["windows-1252"].split())

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


def test_the_label_table_has_every_encoding_and_no_label_twice() -> None:
    # Encoding Standard §4.2: 40 encodings (UTF-8, 28 legacy single-byte ones, 7 legacy
    # multi-byte ones, and replacement, UTF-16BE, UTF-16LE and x-user-defined) with 228 labels
    # (both counted by hand in the table above), each label naming one encoding.
    assert len(LABEL_TABLE) == 40
    labels = [label for _, label in LABELS]
    assert len(labels) == len(set(labels)) == 228


@pytest.mark.parametrize(("encoding", "label"), LABELS, ids=[label for _, label in LABELS])
def test_every_label_reads_its_encoding_from_the_transport(encoding: str, label: str) -> None:
    # Encoding Standard "get an encoding": the label names the encoding; HTML §13.2.3.1: the
    # transport's encoding is used as given.
    data, text = ENCODING_PROBES[encoding]
    assert decode_html(data, label) == text


@pytest.mark.parametrize("label", ["base64", "rot13", "utf-32", "cp037", "latin-1", "koi8-t"])
def test_labels_outside_the_standard_are_ignored(label: str) -> None:
    # Encoding Standard "get an encoding" returns failure for any other label (Python's codec
    # registry knows these), so the page falls back: valid UTF-8 here reads as UTF-8.
    assert decode_html(b"<p>Caf\xc3\xa9</p>", label) == "<p>Café</p>"
    assert decode_html(f'<meta charset="{label}"><p>Caf\u00e9</p>'.encode()).endswith("é</p>")


def test_meta_x_user_defined_means_windows_1252() -> None:
    # HTML §13.2.3.2 prescan: "If charset is x-user-defined, then set charset to windows-1252."
    assert decode_html(b'<meta charset="x-user-defined"><p>\x93q\x94</p>').endswith("“q”</p>")


def test_a_label_with_a_non_ascii_letter_names_nothing() -> None:
    # "get an encoding" lowers ASCII case only: KELVIN SIGN is no "k" (Python's lower() folds it).
    assert decode_html(b"\xc1", "\u212aoi8-r") == "\u00c1"  # not а: windows-1252 fallback


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
