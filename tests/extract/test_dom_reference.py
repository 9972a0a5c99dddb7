"""The DOM path pinned against html5lib and hand-worked rules of HTML §13.2, on both paths.

html5lib is a general-purpose implementation of the WHATWG parsing algorithm (HTML §13.2): on
the pages html_strategies.py generates, the tables it builds, formed into grids by a literal
transcription of HTML §4.9.12.1 written here, give the same cells, texts and captions as ours.
A few hand-worked examples check single rules of the tokenizer and tree builder on both paths.
"""

from __future__ import annotations

import xml.etree.ElementTree as ElementTree
from dataclasses import dataclass

import html5lib
import pytest
from hypothesis import given, settings

from harvester.extract.fastpath import forced_path
from harvester.extract.grid import build_grid
from harvester.extract.rules import ColumnRule, TableRule
from harvester.extract.table import extract_grid, extract_table, read_page
from tests.extract.html_strategies import messy_pages, plain_pages
from tests.extract.test_fast_differential import SETTINGS

HTML5LIB_MESSY_EXAMPLES = 40  # html5lib is pure Python: a messy page costs it ~0.3 s
HTML5LIB_PLAIN_EXAMPLES = 100


# --- the DOM path against html5lib (a reference implementation of HTML §13.2) -----------------

_SKIPPED = frozenset({"script", "style", "template"})


def reference_text(element: ElementTree.Element) -> str:
    """The project's cell text on an html5lib element: DOM textContent (§4.9.12 cells), with
    ``br`` as a space and script, style and template left out, whitespace collapsed."""
    parts: list[str] = []

    def walk(node: ElementTree.Element) -> None:
        for child in node:
            tag = child.tag
            if isinstance(tag, str):  # comments and processing instructions are not text
                if tag == "br":
                    parts.append(" ")
                elif tag not in _SKIPPED:
                    parts.append(child.text or "")
                    walk(child)
            parts.append(child.tail or "")

    parts.append(element.text or "")
    walk(element)
    return " ".join("".join(parts).split())  # the project's collapse, NBSP too


@dataclass(frozen=True)
class ReferenceCell:
    text: str
    header: bool


def reference_cells(table: ElementTree.Element) -> list[list[ReferenceCell]]:
    """The table's cells in the order "forming a table" (HTML §4.9.12.1) processes them:
    row groups in tree order with every tfoot last, the tr children of each, the td and th
    children of each row. (The parser puts every row in a row group, §13.2.6.4.9.)"""
    groups = [child for child in table if child.tag in ("thead", "tbody")]
    groups += [child for child in table if child.tag == "tfoot"]
    return [
        [
            ReferenceCell(reference_text(cell), cell.tag == "th")
            for cell in row
            if cell.tag in ("td", "th")
        ]
        for group in groups
        for row in group
        if row.tag == "tr"
    ]


def reference_caption(table: ElementTree.Element) -> str | None:
    captions = [child for child in table if child.tag == "caption"]
    return reference_text(captions[0]) if captions else None


def html5lib_tables(page: bytes) -> list[ElementTree.Element]:
    document = html5lib.parse(page.decode("utf-8"), namespaceHTMLElements=False)
    return list(document.iter("table"))


def our_cells(page: bytes, index: int) -> tuple[list[list[ReferenceCell]], str | None]:
    """Our grid's cells at their anchors, row by row and left to right, and its caption."""
    with forced_path("dom"):
        located = read_page(page).tables("table")[index]
        grid = build_grid(located.node)
    anchored: dict[int, list[ReferenceCell]] = {y: [] for y in range(grid.height)}
    for y, row in enumerate(grid.rows):
        for x, cell in enumerate(row):
            if cell is not None and (cell.x, cell.y) == (x, y):
                anchored[y].append(ReferenceCell(cell.text, cell.header))
    return [anchored[y] for y in range(grid.height)], grid.caption


def page_tables(page: bytes) -> int:
    with forced_path("dom"):
        return sum(1 for table in read_page(page).tables("table") if not table.in_comment)


@settings(SETTINGS, max_examples=HTML5LIB_MESSY_EXAMPLES)
@given(page=messy_pages(invalid_bytes=False, legacy=False, templates=False))
def test_messy_tables_have_the_cells_html5lib_builds(page: bytes) -> None:
    # HTML §13.2.6.4.9 "in table", §13.2.6.4.14 "in row", §13.2.6.4.15 "in cell" decide which
    # cells a table has and what text they hold; §4.9.12.1 the order the grid reads them in.
    # Every cell is anchored in our grid, even one that overlaps another, so the anchored
    # cells in reading order are exactly the cells html5lib's tree has, in its order.
    theirs = html5lib_tables(page)
    assert page_tables(page) == len(theirs)
    for index, table in enumerate(theirs):
        cells, caption = our_cells(page, index)
        expected = reference_cells(table)
        # Our grid has a row for each tr; html5lib's rows, flattened, give the same cells.
        assert [cell for row in cells for cell in row] == [c for row in expected for c in row]
        assert len(cells) == len(expected)
        assert caption == reference_caption(table)


@settings(SETTINGS, max_examples=HTML5LIB_PLAIN_EXAMPLES)
@given(page=plain_pages())
def test_plain_grids_are_html5lib_tables_formed_by_hand(page: bytes) -> None:
    # HTML §4.9.12.1 on a table without spans: row y holds row y's cells from x = 0, and every
    # slot no cell covers (a short row) is empty; the grid is as wide as the widest row.
    theirs = html5lib_tables(page)
    assert page_tables(page) == len(theirs)
    for index, table in enumerate(theirs):
        rows = [[cell.text for cell in row] for row in reference_cells(table)]
        width = max((len(row) for row in rows), default=0)
        expected = [row + [""] * (width - len(row)) for row in rows]
        for path in ("dom", "auto"):
            with forced_path(path):
                assert extract_grid(page, "table", index) == expected, path


# --- single rules, worked by hand, on both paths ------------------------------------------------

# Each: a page, then the grid rows expected, worked out from the section named.
HAND_WORKED: list[tuple[str, bytes, list[list[str]]]] = [
    (
        # §13.2.6.4.9 "in table": a td start tag inserts tbody and tr; §13.2.6.4.15 "in cell":
        # a td or tr start tag closes the open cell.
        "implied row group, row and cell ends",
        b"<table><td>1<td>2<tr><td>3</table>",
        [["1", "2"], ["3", ""]],
    ),
    (
        # §13.2.6.4.9 "anything else": text in the table is foster-parented out of it.
        "foster-parented text",
        b"<table>stray<tr><td>a</td></tr>more</table>",
        [["a"]],
    ),
    (
        # §13.2.5.72-73: "&notin;" is one reference; "&notit;" matches the legacy "&not"
        # (no semicolon) and keeps "it;"; "&amp" without a semicolon is "&".
        "named references with and without semicolons",
        b"<table><tr><td>&notin;</td><td>&notit;</td><td>&amp x</td><td>&ampx</td></tr></table>",
        [["\u2209", "\u00acit;", "& x", "&x"]],
    ),
    (
        # §13.2.5.80 "numeric character reference end state": 0 and surrogates and values past
        # U+10FFFF become U+FFFD; 0x80 maps to U+20AC by the table there; a decimal reference
        # without its semicolon still counts.
        "numeric references the tokenizer replaces",
        b"<table><tr><td>&#0;</td><td>&#x80;</td><td>&#xD800;</td><td>&#x110000;</td>"
        b"<td>&#65</td></tr></table>",
        [["\ufffd", "\u20ac", "\ufffd", "\ufffd", "A"]],
    ),
    (
        # §13.2.6.4.7 "in body" (cell content is parsed in body): a U+0000 NULL character
        # token is ignored.
        "NUL in a cell is dropped",
        b"<table><tr><td>a\x00b</td></tr></table>",
        [["ab"]],
    ),
    (
        # §13.2.6.4.15 "in cell": </table> closes the cell, and so the row and the table.
        "an end tag of the table closes the open cell",
        b"<table><tr><td>a<td>b</table><p>after</p>",
        [["a", "b"]],
    ),
    (
        # §13.2.6.4.9: a comment inside the table is a comment node, not text of any cell.
        "comments are no text",
        b"<table><tr><td>1<!-- x --></td><!-- y --><td>2</td></tr></table>",
        [["1", "2"]],
    ),
]


@pytest.mark.parametrize("path", ["dom", "auto"])
@pytest.mark.parametrize(
    ("page", "expected"),
    [(page, expected) for _, page, expected in HAND_WORKED],
    ids=[name for name, _, _ in HAND_WORKED],
)
def test_hand_worked_parsing_rules(page: bytes, expected: list[list[str]], path: str) -> None:
    with forced_path(path):
        assert extract_grid(page) == expected


@pytest.mark.parametrize("path", ["dom", "auto"])
def test_a_reference_in_an_attribute_followed_by_equals_is_kept(path: str) -> None:
    # §13.2.5.73 "named character reference state": in an attribute value, a match without a
    # semicolon followed by "=" or an alphanumeric is flushed as written ("&copy=2" stays).
    page = (
        b'<table><tr><th>player</th></tr><tr><td><a href="?a=1&copy=2&amp;b">x</a></td></tr>'
        b"</table>"
    )
    rule = TableRule(columns=(ColumnRule(name="url", link_of="player"),))
    with forced_path(path):
        table = extract_table(page, rule).table
    assert table.column("url").to_pylist() == ["?a=1&copy=2&b"]


# Bytes that are not UTF-8 in a page declared UTF-8: the Encoding Standard's UTF-8 decoder
# (§8.1.1) gives one U+FFFD per maximal ill-formed subpart (Unicode §3.9, "U+FFFD
# substitution of maximal subparts"), which is also what Python's "replace" handler does.
INVALID_UTF8 = [
    b"\xed\xa0\x80",  # an encoded surrogate: three U+FFFD
    b"\xc0\xaf",  # an overlong "/": two
    b"\xf0\x9f\x98",  # a four-byte sequence cut short: one
    b"\xf4\x90\x80\x80",  # past U+10FFFF: four
    b"\x80\x80",  # stray continuation bytes: two
    b"\xc3",  # a lead byte before ASCII: one
]


@pytest.mark.parametrize("path", ["dom", "auto"])
@pytest.mark.parametrize("sequence", INVALID_UTF8, ids=[s.hex() for s in INVALID_UTF8])
def test_invalid_utf8_in_a_cell_decodes_as_the_encoding_standard_says(
    sequence: bytes, path: str
) -> None:
    page = b'<meta charset="utf-8"><table><tr><td>a' + sequence + b"b</td></tr></table>"
    with forced_path(path):
        assert extract_grid(page) == [[(b"a" + sequence + b"b").decode("utf-8", "replace")]]
