"""Hypothesis strategies for the texts of table cells: words, numbers of every shape, nulls,
character references (safe and tricky), white space of every kind, invalid bytes and links.

Used by html_strategies.py, which puts them into table markup. Invalid UTF-8 is written as lone
surrogates U+DC80..U+DCFF, which the page's ``surrogateescape`` encoding turns into bytes.
"""

from __future__ import annotations

from hypothesis import strategies as st

WORDS = (
    "Lea Varn",
    "Osk Belund",
    "Mira Tavik",
    "Café",
    "Ærøskøbing",
    "naïve",
    "Zoë",
    "São Tomé",
    "東京",
    "Łódź",
    "Player",
    "Club",
    "Goals",
    "Pts",
    "Team",
    "Season",
    "⚽ 😀",
    "a b",
    "x",
)

# Values by the column type they suggest, as sites write them (common practice, no published
# source): thousands separators, U+2212 MINUS SIGN, percent and currency signs, clock
# durations, comma decimals, and footnote markers after a number ("12*", "7†").
COLUMN_VALUES: dict[str, tuple[str, ...]] = {
    "integer": ("0", "42", "-3", "−3", "1,250,000", "+7", "0042", "12*", "7†", "1204", "1 250"),
    "decimal": ("3.14", ".5", "5.", "-0.25", "1,234.5", "12", "1e3"),
    "percent": ("12.5%", "0%", "-3%", "100%", "7.25 %"),
    "currency": ("$1,200", "$0.99", "€5", "-$3", "$12", "(5)"),
    "duration": ("3:45", "1:02:03", "0:07", "12:00"),
    "date": ("2026-01-31", "2025-12-01", "31/01/2026"),
    "comma_decimal": ("1.234,5", "0,5", "12,25"),
    "boolean": ("yes", "no", "true", "false"),
    "text": WORDS,
}
COLUMN_KINDS = tuple(COLUMN_VALUES)
# Texts sites write for "no value" (common practice, no published source).
NULL_TEXTS = ("", "—", "–", "-", "N/A", "n/a")
NUMBERS = (
    tuple(value for kind, values in COLUMN_VALUES.items() if kind != "text" for value in values)
    + NULL_TEXTS
)

# References a fast path could safely decode (the five markup ones and NBSP).
SAFE_REFERENCES = ("&amp;", "&lt;", "&gt;", "&quot;", "&#39;", "&#x27;", "&nbsp;", "&#160;")

# Every other kind HTML §13.2.5.72-80 treats specially: no semicolon (legacy names), a longest
# match inside a longer word, unknown names, and numeric ones the spec replaces (0, C1
# controls, surrogates, beyond U+10FFFF) or keeps (a CR, a noncharacter).
TRICKY_REFERENCES = (
    "&amp",
    "&ampx",
    "&AMP;",
    "&nbsp",
    "&lt",
    "&copy;",
    "&copy",
    "&notin;",
    "&notin",
    "&notit;",
    "&not",
    "&mdash;",
    "&mdash",
    "&bogus;",
    "&",
    "& ",
    "&#;",
    "&#x;",
    "&#0;",
    "&#x80;",
    "&#x9F;",
    "&#128;",
    "&#xD800;",
    "&#xDFFF;",
    "&#x110000;",
    "&#99999999999;",
    "&#x0D;",
    "&#xFFFE;",
    "&#65",
    "&#X41;",
    "&#x2212;",
    "&#8212;",
    "&#128512;",
)

WHITESPACE = (" ", "  ", "\t", "\n", "\r", "\r\n", "\f", "\u00a0", "\u3000", "\u2009", "\u200b")

# Bytes that are not UTF-8, written as surrogateescape code points (see the module docstring):
# a lone 0xFF, a cut-off two-byte sequence, an encoded surrogate, an overlong "/" and a stray
# continuation byte; and NUL, which the parser drops from text (§13.2.6.4.7 "in body").
INVALID_BYTES = ("\udcff", "\udcc3", "\udced\udca0\udc80", "\udcc0\udcaf", "\udc80", "\x00")

# A template holding a cell: its content is a separate fragment (HTML §4.12.3), so the cell is
# no cell of the table.
TEMPLATE_IN_CELL = "<template><td>tpl</td></template>"

HREFS = (
    "/players/p0007.html",
    "players/p0012.html",
    "../teams/hrn.html",
    "?season=2026&amp;page=2",
    "?a=1&copy=2",  # §13.2.5.72: in an attribute, "&copy=" is kept as written
    "#top",
    "",
    "  /padded.html  ",
    "http://127.0.0.1:8650/seasons/2026/",
    "https://127.0.0.1/x?y=1",
    "//127.0.0.1/protocol-relative",
    "javascript:void(0)",
)


def number_texts() -> st.SearchStrategy[str]:
    """One number-shaped cell text (as source: already safe to write in markup)."""
    return st.sampled_from(NUMBERS)


def _word() -> st.SearchStrategy[str]:
    return st.sampled_from(WORDS)


@st.composite
def column_values(draw: st.DrawFn, kind: str, *, plain: bool) -> str:
    """One cell text for a column of ``kind``: mostly a value of that kind, now and then a
    "no value" text or a value of another kind, padded with whitespace now and then."""
    bucket = draw(st.integers(0, 19))
    if bucket == 19:
        value = draw(st.sampled_from(NUMBERS + WORDS))
    elif bucket >= 17:
        value = draw(st.sampled_from(NULL_TEXTS))
    else:
        value = draw(st.sampled_from(COLUMN_VALUES[kind]))
    if draw(st.integers(0, 4)) == 0:
        spaces = (" ", "\n    ") if plain else WHITESPACE
        value = draw(st.sampled_from(spaces)) + value + draw(st.sampled_from(spaces))
    return value


def cell_texts(*, plain: bool) -> st.SearchStrategy[str]:
    """Cell text as markup source: one value, or a run of words, numbers, references and
    whitespace."""
    references = SAFE_REFERENCES if plain else SAFE_REFERENCES + TRICKY_REFERENCES
    spaces = (" ", "  ", "\n", "\n    ") if plain else WHITESPACE
    part = st.one_of(
        _word(),
        number_texts(),
        st.sampled_from(references),
        st.sampled_from(spaces),
    )
    one_value = st.sampled_from(COLUMN_KINDS).flatmap(lambda kind: column_values(kind, plain=plain))
    return one_value | st.lists(part, max_size=4).map("".join)
