"""Hypothesis strategies for HTML pages that hold tables, as the bytes a site would send.

Two families:

* :func:`messy_pages` — what real pages and hostile ones do to tables: row groups in any order
  or left out, end tags left for the parser to imply (HTML §13.2.6.4.9 "in table",
  §13.2.6.4.14 "in row", §13.2.6.4.15 "in cell"), mixed-case tags, spans of every kind (0,
  huge, "3px", negative, junk), captions and column groups, character references with and
  without semicolons (§13.2.5.72), comments, whitespace of every kind, inline markup, scripts
  and styles inside cells, nested tables, text the parser fosters out of the table, tables
  inside comments, invalid UTF-8 and NUL bytes.
* :func:`plain_pages` — the well-formed simple tables a fast path is meant to read itself:
  only table, caption, thead, tbody, tfoot, tr, th and td, with simple text, a few safe
  character references and links, in valid UTF-8 — so that plain tables are well represented
  rather than a rare accident of the messy strategy.

Pages are built as text and encoded at the end with ``surrogateescape``: a lone surrogate
U+DC80..U+DCFF in the text becomes the single byte 0x80..0xFF, which is how invalid UTF-8 is
written here. Every address in a link is a loopback address or a relative one.
"""

from __future__ import annotations

from hypothesis import strategies as st

from tests.extract.cell_text_strategies import (
    COLUMN_KINDS,
    HREFS,
    INVALID_BYTES,
    TEMPLATE_IN_CELL,
    _word,
    cell_texts,
    column_values,
    number_texts,
)

__all__ = [
    "cell_texts",
    "messy_pages",
    "messy_tables",
    "number_texts",
    "plain_pages",
    "plain_tables",
]

# --- markup pieces ----------------------------------------------------------------------------


def _tag_name(name: str, *, plain: bool) -> st.SearchStrategy[str]:
    """``name`` as written: always lower case in plain markup, any case in messy markup."""
    if plain:
        return st.just(name)
    return st.sampled_from((name, name.upper(), name.capitalize()))


def _attribute(name: str, value: str) -> st.SearchStrategy[str]:
    """One attribute, quoted with ", with ', or not at all (when the value allows it)."""
    forms = [f' {name}="{value}"', f" {name}='{value}'", f' {name} = "{value}"']
    if value and not any(c in value for c in " \t\n\"'=<>`"):
        forms.append(f" {name}={value}")
    if not value:
        forms.append(f" {name}")
    return st.sampled_from(forms)


# Span values: ordinary, 0 (rowspan "to the end of the group"), values that §2.3.4.2 reads
# partly or not at all, and the clamps' edges (§4.9.12.1: colspan 1000, rowspan 65534).
ORDINARY_SPANS = ("1", "2", "3", "0")
ODD_SPANS = ("3px", " 2", "+2", "-1", "-0", "2.5", "abc", "", "00002", "\u0662", "2 3")
HUGE_SPANS = ("1000", "1001", "65534", "65535", "99999999999999999999")


@st.composite
def _span_value(draw: st.DrawFn) -> str:
    # A huge colspan makes a 1000-column grid, slow to type: drawn one time in forty.
    # Hypothesis favours both ends of a range, and shrinks towards the low end: the rare
    # choice sits in the middle, the odd ones at the top.
    bucket = draw(st.integers(0, 39))
    if bucket == 20:
        return draw(st.sampled_from(HUGE_SPANS))
    if bucket >= 27:
        return draw(st.sampled_from(ODD_SPANS))
    return draw(st.sampled_from(ORDINARY_SPANS))


_OTHER_ATTRIBUTES = (
    ("class", "num"),
    ("id", "c1"),
    ("align", "right"),
    ("style", "display:none"),
    ("style", "DISPLAY : None ;color:red"),
    ("hidden", ""),
    ("data-sort", "12"),
    ("title", "a&amp;b"),
)


@st.composite
def _cell_attributes(draw: st.DrawFn) -> str:
    out = ""
    if draw(st.integers(0, 3)) == 3:
        name = draw(_tag_name("colspan", plain=False))
        out += draw(_attribute(name, draw(_span_value())))
    if draw(st.integers(0, 3)) == 3:
        name = draw(_tag_name("rowspan", plain=False))
        out += draw(_attribute(name, draw(_span_value())))
    if draw(st.integers(0, 4)) == 4:
        name, value = draw(st.sampled_from(_OTHER_ATTRIBUTES))
        out += draw(_attribute(name, value))
    return out


@st.composite
def _inline(draw: st.DrawFn, depth: int) -> str:
    """One piece of messy cell content: text, inline markup, a script, a nested table."""
    kind = draw(st.integers(0, 15))
    text = draw(cell_texts(plain=False))
    if kind <= 5:
        return text
    if kind == 6:
        return draw(st.sampled_from(INVALID_BYTES))
    if kind == 7:
        return f'<a href="{draw(st.sampled_from(HREFS))}">{text}</a>'
    if kind == 8:
        tag = draw(st.sampled_from(("span", "b", "i", "em", "strong", "small", "sup", "p")))
        tag = draw(_tag_name(tag, plain=False))
        return f"<{tag}>{text}</{tag}>"
    if kind == 9:
        return draw(st.sampled_from(("<br>", "<BR/>", "<br />", "</br>")))
    if kind == 10:
        return draw(st.sampled_from(('<img src="x.png" alt="pic">', "<img alt=y>", "<wbr>")))
    if kind == 11:
        return draw(
            st.sampled_from(
                (
                    '<script>var cell = "<td>no</td>";</script>',
                    "<style>td { color: red }</style>",
                    TEMPLATE_IN_CELL,
                    "<noscript>ns</noscript>",
                )
            )
        )
    if kind == 12:
        return f"<!-- {text} -->" if "--" not in text else "<!---->"
    if kind == 13:
        return f'<span style="display:none">{text}</span>'
    if kind == 14 and depth < 1 and draw(st.integers(0, 4)) == 4:
        # A nested table now and then (one in eighty pieces: each one is a table to read).
        return draw(messy_tables(depth=depth + 1))
    tag = draw(_tag_name("a", plain=False))
    return f"<{tag} href={draw(st.sampled_from(HREFS)) or 'x'}>{text}</{tag}>"


@st.composite
def _messy_cell(draw: st.DrawFn, depth: int) -> str:
    tag = draw(_tag_name(draw(st.sampled_from(("td", "td", "th"))), plain=False))
    content = "".join(draw(st.lists(_inline(depth), max_size=3)))
    end = draw(st.sampled_from((f"</{tag}>", f"</{tag}>", "")))  # §13.2.6.4.15 implies it
    return f"<{tag}{draw(_cell_attributes())}>{content}{end}"


@st.composite
def _between(draw: st.DrawFn) -> str:
    """What sits between table parts: mostly whitespace, sometimes a comment or stray text
    that the parser fosters out of the table (§13.2.6.4.9 "anything else")."""
    kind = draw(st.integers(0, 9))
    if kind <= 5:
        return draw(st.sampled_from(("", "", "\n", "\n  ", "\t", " \r\n")))
    if kind == 6:
        return "<!-- between -->"
    if kind == 7:
        return draw(st.sampled_from(("stray text", "<div>stray div</div>", "\u00a0", "<b>b</b>")))
    if kind == 8:
        return draw(st.sampled_from(("<script>1</script>", "<style>x{}</style>", "<form></form>")))
    return '<input type="hidden" name="k" value="v">'


@st.composite
def _messy_row(draw: st.DrawFn, depth: int) -> str:
    cells = draw(st.lists(_messy_cell(depth), max_size=5))
    if not cells and draw(st.booleans()):
        return draw(st.sampled_from(("<tr></tr>", "<tr>", "<TR/>")))
    body = "".join(cell + draw(_between()) for cell in cells)
    start = draw(st.sampled_from(("<tr>", "<TR>", "<tr class=r>", '<tr style="display:none">', "")))
    end = draw(st.sampled_from(("</tr>", "</tr>", "")))  # §13.2.6.4.14 implies it
    return f"{start}{body}{end}"


@st.composite
def _messy_section(draw: st.DrawFn, depth: int) -> str:
    kind = draw(st.sampled_from(("thead", "tbody", "tbody", "tfoot", "")))
    header = draw(_messy_row(depth))
    rows: list[str] = []
    for _ in range(draw(st.integers(0, 5))):
        # A copy of the first row now and then: a repeated header row in the body.
        rows.append(header if draw(st.integers(0, 4)) == 4 else draw(_messy_row(depth)))
    body = "".join(row + draw(_between()) for row in [header, *rows])
    if not kind:
        return body
    tag = draw(_tag_name(kind, plain=False))
    start = f"<{tag}>" if kind != "tbody" or draw(st.booleans()) else ""
    end = draw(st.sampled_from((f"</{tag}>", "")))
    return f"{start}{body}{end}"


@st.composite
def _column_groups(draw: st.DrawFn) -> str:
    kind = draw(st.integers(0, 4))
    span = draw(_span_value())
    if kind == 0:
        return f"<colgroup span={span}></colgroup>"
    if kind == 1:
        return f"<colgroup><col span={span}><col></colgroup>"
    if kind == 2:
        return f'<col span="{span}">'
    if kind == 3:
        return "<colgroup>"
    return ""


@st.composite
def messy_tables(draw: st.DrawFn, depth: int = 0) -> str:
    """One messy ``<table>`` as markup (``depth`` > 0 inside a cell of another table)."""
    tag = draw(_tag_name("table", plain=False))
    attributes = draw(st.sampled_from(("", ' id="t"', " class=stats", ' border="1"', " hidden")))
    parts = [f"<{tag}{attributes}>", draw(_between())]
    if draw(st.integers(0, 2)) == 0:
        caption = draw(cell_texts(plain=False))
        parts.append(f"<caption>{caption}</caption>")
    parts.append(draw(_column_groups()))
    for section in draw(st.lists(_messy_section(depth), max_size=3)):
        parts.append(section + draw(_between()))
    if draw(st.integers(0, 5)) == 5:
        parts.append(f"<td>{draw(cell_texts(plain=False))}")  # a td directly in the table
    parts.append(draw(st.sampled_from((f"</{tag}>", f"</{tag}>", "</TABLE>", ""))))
    return "".join(parts)


@st.composite
def _messy_block(draw: st.DrawFn, invalid_bytes: bool) -> str:
    kind = draw(st.integers(0, 9))
    if kind <= 4:
        return draw(messy_tables())
    if kind == 5:
        return f"<p>{draw(cell_texts(plain=False))}</p>"
    if kind == 6:
        return f"<!-- {draw(messy_tables()).replace('--', '')} -->"  # a table in a comment
    if kind == 7:
        return f'<div id="wrap">{draw(messy_tables())}</div>'
    if kind == 8 and invalid_bytes:
        return draw(st.sampled_from(INVALID_BYTES))
    return "<!-- just a comment -->"


@st.composite
def messy_pages(
    draw: st.DrawFn, *, invalid_bytes: bool = True, legacy: bool = True, templates: bool = True
) -> bytes:
    """A messy page's bytes, holding zero or more tables (usually one to three).

    ``invalid_bytes`` allows bytes that are not UTF-8 (and so a page read as windows-1252,
    HTML §13.2.3.1); ``legacy`` allows a ``<meta charset="windows-1252">``. Turn both off
    for a page whose text is exactly its bytes read as UTF-8. ``templates`` allows a
    ``<template>`` holding a cell inside a cell (html5lib 1.1 predates template parsing).
    """
    head = draw(st.sampled_from(("<!DOCTYPE html>", "<!doctype HTML>\n", "")))
    charsets = ['<meta charset="utf-8">', ""]
    if legacy:
        charsets.append('<meta charset="windows-1252">')
    head += draw(st.sampled_from(charsets))
    head += draw(st.sampled_from(("<title>t</title>", "")))
    blocks = draw(st.lists(_messy_block(invalid_bytes), min_size=1, max_size=3))
    text = head + "\n".join(blocks)
    if not invalid_bytes:
        text = "".join(c for c in text if not "\udc80" <= c <= "\udcff")
    if not templates:
        text = text.replace(TEMPLATE_IN_CELL, "")
    return text.encode("utf-8", "surrogateescape")


# --- plain tables -----------------------------------------------------------------------------


@st.composite
def _plain_cell_content(draw: st.DrawFn, kind: str) -> str:
    text = draw(
        column_values(kind, plain=True) if draw(st.integers(0, 5)) != 5 else cell_texts(plain=True)
    )
    if draw(st.integers(0, 5 if kind == "text" else 20)) == 5:
        href = draw(st.sampled_from(HREFS))
        return f'<a href="{href}">{text or draw(_word())}</a>'
    return text


@st.composite
def _plain_row(draw: st.DrawFn, tag: str, kinds: tuple[str, ...], close: bool) -> str:
    cells = [draw(_plain_cell_content(kind)) for kind in kinds]
    end = f"</{tag}>" if close else ""
    return "<tr>" + "".join(f"<{tag}>{cell}{end}" for cell in cells) + ("</tr>" if close else "")


@st.composite
def plain_tables(draw: st.DrawFn) -> str:
    """One plain table: one header row, body rows with a repeated header now and then."""
    kinds = tuple(draw(st.lists(st.sampled_from(COLUMN_KINDS), min_size=1, max_size=6)))
    width = len(kinds)
    close = draw(st.integers(0, 4)) != 4  # mostly every end tag written
    newline = draw(st.sampled_from(("", "\n", "\n  ")))
    header_cells = [draw(cell_texts(plain=True).filter(bool) | _word()) for _ in range(width)]
    cell_end = "</th>" if close else ""
    header = "<tr>" + "".join(f"<th>{text}{cell_end}" for text in header_cells)
    header += "</tr>" if close else ""
    rows: list[str] = []
    for _ in range(draw(st.integers(0, 12))):
        if draw(st.integers(0, 7)) == 7:
            rows.append(header)  # the header repeated in the body
            continue
        # A short or long row now and then (the grid pads it, HTML §4.9.12.1).
        row_kinds = kinds if draw(st.integers(0, 9)) != 9 else kinds[: draw(st.integers(0, width))]
        if draw(st.integers(0, 19)) == 19:
            row_kinds += ("text",)
        tag = "th" if draw(st.integers(0, 9)) == 9 else "td"
        rows.append(draw(_plain_row(tag, row_kinds, close)))
    body = newline.join(rows)
    layout = draw(st.sampled_from(("thead", "tbody", "bare", "tfoot-last", "tfoot-first")))
    footer = draw(_plain_row("td", kinds, True)) if layout.startswith("tfoot") else ""
    if layout == "bare":
        sections = [header, body]
    elif layout == "tbody":
        sections = ["<tbody>", header, body, "</tbody>"]
    else:
        sections = ["<thead>", header, "</thead>", "<tbody>", body, "</tbody>"]
    if layout == "tfoot-last":
        sections += ["<tfoot>", footer, "</tfoot>"]
    if layout == "tfoot-first":
        sections[3:3] = ["<tfoot>", footer, "</tfoot>"]
    attributes = draw(st.sampled_from(("", ' id="stats"', ' class="wikitable sortable"')))
    caption = ""
    if draw(st.integers(0, 3)) == 0:
        caption = f"<caption>{draw(cell_texts(plain=True))}</caption>"
    return f"<table{attributes}>{caption}{newline}" + newline.join(sections) + "</table>"


@st.composite
def plain_pages(draw: st.DrawFn) -> bytes:
    """A well-formed page in UTF-8 holding one to three plain tables among ordinary markup."""
    tables = draw(st.lists(plain_tables(), min_size=1, max_size=3))
    blocks: list[str] = []
    for table in tables:
        blocks.append(draw(st.sampled_from(("", "<h2>Standings</h2>", "<p>Updated daily.</p>"))))
        blocks.append(table)
    head = '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8"><title>Season</title>'
    page = head + "</head>\n<body>\n" + "\n".join(blocks) + "\n</body></html>\n"
    return page.encode("utf-8")
