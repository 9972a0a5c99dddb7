"""The WHATWG Encoding Standard's labels (§4.2 "Names and labels"), and the codec each is read with.

Browsers accept exactly these labels, compared after stripping ASCII whitespace and lowering
ASCII case ("get an encoding"); any other label is unknown and ignored. Python's codec registry
is no substitute: it knows labels no browser does (``base64``, ``utf-32``, EBCDIC) and reads
some the other way (``iso-8859-9`` is windows-1254 on the web, ``gb2312`` is GBK). Each encoding
is decoded with the nearest Python codec; three need our own handling in ``decode.py``
(windows-1252's undefined bytes, ``replacement`` and ``x-user-defined``).
"""

from __future__ import annotations

__all__ = ["CODECS", "LABELS", "encoding_for_label"]

# Encoding name → its labels (Encoding Standard §4.2, the table of encodings and labels).
LABELS: dict[str, tuple[str, ...]] = {
    "UTF-8": (
        "unicode-1-1-utf-8", "unicode11utf8", "unicode20utf8", "utf-8", "utf8", "x-unicode20utf8",
    ),
    "IBM866": ("866", "cp866", "csibm866", "ibm866"),
    "ISO-8859-2": (
        "csisolatin2", "iso-8859-2", "iso-ir-101", "iso8859-2", "iso88592", "iso_8859-2",
        "iso_8859-2:1987", "l2", "latin2",
    ),
    "ISO-8859-3": (
        "csisolatin3", "iso-8859-3", "iso-ir-109", "iso8859-3", "iso88593", "iso_8859-3",
        "iso_8859-3:1988", "l3", "latin3",
    ),
    "ISO-8859-4": (
        "csisolatin4", "iso-8859-4", "iso-ir-110", "iso8859-4", "iso88594", "iso_8859-4",
        "iso_8859-4:1988", "l4", "latin4",
    ),
    "ISO-8859-5": (
        "csisolatincyrillic", "cyrillic", "iso-8859-5", "iso-ir-144", "iso8859-5", "iso88595",
        "iso_8859-5", "iso_8859-5:1988",
    ),
    "ISO-8859-6": (
        "arabic", "asmo-708", "csiso88596e", "csiso88596i", "csisolatinarabic", "ecma-114",
        "iso-8859-6", "iso-8859-6-e", "iso-8859-6-i", "iso-ir-127", "iso8859-6", "iso88596",
        "iso_8859-6", "iso_8859-6:1987",
    ),
    "ISO-8859-7": (
        "csisolatingreek", "ecma-118", "elot_928", "greek", "greek8", "iso-8859-7", "iso-ir-126",
        "iso8859-7", "iso88597", "iso_8859-7", "iso_8859-7:1987", "sun_eu_greek",
    ),
    "ISO-8859-8": (
        "csiso88598e", "csisolatinhebrew", "hebrew", "iso-8859-8", "iso-8859-8-e", "iso-ir-138",
        "iso8859-8", "iso88598", "iso_8859-8", "iso_8859-8:1988", "visual",
    ),
    "ISO-8859-8-I": ("csiso88598i", "iso-8859-8-i", "logical"),
    "ISO-8859-10": (
        "csisolatin6", "iso-8859-10", "iso-ir-157", "iso8859-10", "iso885910", "l6", "latin6",
    ),
    "ISO-8859-13": ("iso-8859-13", "iso8859-13", "iso885913"),
    "ISO-8859-14": ("iso-8859-14", "iso8859-14", "iso885914"),
    "ISO-8859-15": ("csisolatin9", "iso-8859-15", "iso8859-15", "iso885915", "iso_8859-15", "l9"),
    "ISO-8859-16": ("iso-8859-16",),
    "KOI8-R": ("cskoi8r", "koi", "koi8", "koi8-r", "koi8_r"),
    "KOI8-U": ("koi8-ru", "koi8-u"),
    "macintosh": ("csmacintosh", "mac", "macintosh", "x-mac-roman"),
    "windows-874": ("dos-874", "iso-8859-11", "iso8859-11", "iso885911", "tis-620", "windows-874"),
    "windows-1250": ("cp1250", "windows-1250", "x-cp1250"),
    "windows-1251": ("cp1251", "windows-1251", "x-cp1251"),
    "windows-1252": (
        "ansi_x3.4-1968", "ascii", "cp1252", "cp819", "csisolatin1", "ibm819", "iso-8859-1",
        "iso-ir-100", "iso8859-1", "iso88591", "iso_8859-1", "iso_8859-1:1987", "l1", "latin1",
        "us-ascii", "windows-1252", "x-cp1252",
    ),
    "windows-1253": ("cp1253", "windows-1253", "x-cp1253"),
    "windows-1254": (
        "cp1254", "csisolatin5", "iso-8859-9", "iso-ir-148", "iso8859-9", "iso88599",
        "iso_8859-9", "iso_8859-9:1989", "l5", "latin5", "windows-1254", "x-cp1254",
    ),
    "windows-1255": ("cp1255", "windows-1255", "x-cp1255"),
    "windows-1256": ("cp1256", "windows-1256", "x-cp1256"),
    "windows-1257": ("cp1257", "windows-1257", "x-cp1257"),
    "windows-1258": ("cp1258", "windows-1258", "x-cp1258"),
    "x-mac-cyrillic": ("x-mac-cyrillic", "x-mac-ukrainian"),
    "GBK": (
        "chinese", "csgb2312", "csiso58gb231280", "gb2312", "gb_2312", "gb_2312-80", "gbk",
        "iso-ir-58", "x-gbk",
    ),
    "gb18030": ("gb18030",),
    "Big5": ("big5", "big5-hkscs", "cn-big5", "csbig5", "x-x-big5"),
    "EUC-JP": ("cseucpkdfmtjapanese", "euc-jp", "x-euc-jp"),
    "ISO-2022-JP": ("csiso2022jp", "iso-2022-jp"),
    "Shift_JIS": (
        "csshiftjis", "ms932", "ms_kanji", "shift-jis", "shift_jis", "sjis", "windows-31j",
        "x-sjis",
    ),
    "EUC-KR": (
        "cseuckr", "csksc56011987", "euc-kr", "iso-ir-149", "korean", "ks_c_5601-1987",
        "ks_c_5601-1989", "ksc5601", "ksc_5601", "windows-949",
    ),
    "replacement": (
        "csiso2022kr", "hz-gb-2312", "iso-2022-cn", "iso-2022-cn-ext", "iso-2022-kr",
        "replacement",
    ),
    "UTF-16BE": ("unicodefffe", "utf-16be"),
    "UTF-16LE": (
        "csunicode", "iso-10646-ucs-2", "ucs-2", "unicode", "unicodefeff", "utf-16", "utf-16le",
    ),
    "x-user-defined": ("x-user-defined",),
}  # fmt: skip

# Encoding name → the Python codec that reads it (nearest fit: the web's Big5, Shift_JIS and
# EUC-KR are the Microsoft and HKSCS supersets Python names big5hkscs, cp932 and cp949).
# "windows-1252", "replacement" and "x-user-defined" are handled by name in decode.py.
CODECS: dict[str, str] = {
    "UTF-8": "utf-8",
    "IBM866": "cp866",
    **{f"ISO-8859-{n}": f"iso8859-{n}" for n in (2, 3, 4, 5, 6, 7, 8, 10, 13, 14, 15, 16)},
    "ISO-8859-8-I": "iso8859-8",  # the same characters; -I only says the order is logical
    "KOI8-R": "koi8-r",
    "KOI8-U": "koi8-u",
    "macintosh": "mac-roman",
    "windows-874": "cp874",
    **{f"windows-125{n}": f"cp125{n}" for n in range(9)},
    "x-mac-cyrillic": "mac-cyrillic",
    "GBK": "gb18030",  # Encoding Standard: GBK's decoder is gb18030's decoder
    "gb18030": "gb18030",
    "Big5": "big5hkscs",
    "EUC-JP": "euc-jp",
    "ISO-2022-JP": "iso2022-jp",
    "Shift_JIS": "cp932",
    "EUC-KR": "cp949",
    "UTF-16BE": "utf-16-be",
    "UTF-16LE": "utf-16-le",
    "replacement": "replacement",
    "x-user-defined": "x-user-defined",
}
CODECS["windows-1252"] = "windows-1252"

_BY_LABEL = {label: name for name, labels in LABELS.items() for label in labels}


def encoding_for_label(label: str) -> str | None:
    """The encoding a label names ("get an encoding"), or None for a label browsers ignore."""
    label = label.strip("\t\n\f\r ")
    # ASCII case only: str.lower() would also fold KELVIN SIGN (U+212A) to "k".
    return _BY_LABEL.get(label.lower()) if label.isascii() else None
