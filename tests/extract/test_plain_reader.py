"""The compiled reader of plain tables (fast path) against the DOM path, the reference.

Each accepted page must give the DOM path's grid slot for slot — text, th flag, covering cell,
owner and link — and each page the reader cannot read exactly must go to the DOM path. The DOM
path itself follows HTML's parsing rules through lexbor; where the rule is worth naming, it is
cited beside the case. html5lib (an implementation of the WHATWG parsing algorithm) checks the
cell texts of the accepted pages independently. These tests need the extension built (CI builds
it; ``harvester --version`` says whether it is).
"""

from __future__ import annotations

import html5lib
import pytest

from harvester.errors import ExtractError
from harvester.extract.fastpath import fast_module, forced_path, path_status
from harvester.extract.grid import build_grid
from harvester.extract.grid_model import Grid
from harvester.extract.locate import locate_table
from harvester.extract.plain_grid import PlainGrid, plain_grid
from harvester.extract.table import extract_grid, read_page


def both(html: str | bytes, index: int = 0, drop_hidden: bool = False) -> tuple[Grid | None, Grid]:
    """The fast path's grid (None if it declined) and the DOM path's, for table ``index``."""
    page = read_page(html)
    located = locate_table(page, "table", index)
    with forced_path("auto"):
        fast = plain_grid(page, located, drop_hidden=drop_hidden, max_slots=10_000_000)
    return fast, build_grid(located.node, drop_hidden=drop_hidden)


def slots(grid: Grid) -> list[list[tuple[object, ...]]]:
    """Everything the later steps read of each slot."""
    return [
        [
            (
                grid.text_rows[y][x],
                grid.is_header(x, y),
                grid.has_cell(x, y),
                grid.owner(x, y),
                grid.link(x, y),
                grid.owners.get((x, y)),
            )
            for x in range(grid.width)
        ]
        for y in range(grid.height)
    ]


def assert_same(fast: Grid | None, dom: Grid) -> None:
    assert isinstance(fast, PlainGrid), "the fast path declined a plain table"
    assert (fast.width, fast.height, fast.caption) == (dom.width, dom.height, dom.caption)
    assert fast.row_groups == dom.row_groups
    assert fast.overlaps == dom.overlaps
    assert slots(fast) == slots(dom)


ACCEPTED = {
    # §13.2.6.4.14 "in row" / §13.2.6.4.15 "in cell": a td or tr start tag closes the open cell
    "implied end tags": "<table><tr><td>1<td>2<tr><td>3<td>4</table>",
    # §13.2.6.4.9 "in table": a td directly in the table gets a tbody and a tr
    "cells directly in the table": "<table><td>a<td>b</table>",
    # §4.9.12.1: every tfoot is processed last, whatever its place in the source
    "tfoot first": "<table><tfoot><tr><td>F</tfoot><thead><tr><th>H</thead><tr><td>B</table>",
    "spans": (
        "<table><tr><th rowspan=2>Player<th colspan=2>Shooting</tr>"
        "<tr><th>Goals<th>Pct</tr><tr><td>Ada<td>12<td>50%</tr></table>"
    ),
    # §4.9.12.1: rowspan=0 grows to the end of its row group; colspan is clamped to 1000
    "rowspan zero and junk spans": (
        '<table><tbody><tr><td rowspan="0">g<td colspan="3px">x<tr><td>y<tr><td>z</tbody>'
        '<tbody><tr><td rowspan="-2">w<td colspan=" 2">v</tbody></table>'
    ),
    "rowspan cut at the group's end": "<table><tr><td rowspan=9>a<td>b<tr><td>c</table>",
    "overlapping cells": "<table><tr><td>1<td rowspan=2>2<tr><td colspan=3>3</table>",
    "column groups": (
        "<table><colgroup><col span=2><col></colgroup><colgroup span=3></colgroup>"
        "<col><tr><td>1</table>"
    ),
    "caption": "<table><caption> Season  <b>2026</b> </caption><tr><td>1</table>",
    # §13.5: named references with their semicolons; numeric ones
    "character references": (
        "<table><tr><td>A&amp;B<td>1&nbsp;250&nbsp;000<td>&#8722;3<td>&#x2014;<td>x &amp; z"
        "<td>x < y<td>&lt;td&gt;</table>"
    ),
    "white space of every kind": "<table><tr><td>\t a\r\n b \u00a0c\u3000<td>\r</table>",
    "br reads as a space": "<table><tr><td>one<br>two<br/>three</table>",
    "links": (
        '<table><tr><td><a href=" /p/1 ">Ada</a><td><a name=x>no</a><a href="b?x=1&amp;y=2">'
        'B</a><td><a href="">empty</a><td><A HREF=/c>C</A></table>'
    ),
    "inline markup": "<table><tr><td><span><b>7</b>*</span><td><abbr title=x>GP</abbr></table>",
    "unclosed inline at the cell's end": "<table><tr><td><b>bold<td>plain</table>",
    "upper-case tags and attributes": "<TABLE ID=t><TR><TH COLSPAN=2>A</TH></TR></TABLE>",
    "utf-8 text": "<table><tr><td>Jörg Ødegård<td>👍</table>",
    "empty table": "<table></table>",
}


@pytest.mark.parametrize("html", ACCEPTED.values(), ids=ACCEPTED.keys())
def test_plain_tables_give_the_dom_paths_grid(html: str) -> None:
    assert_same(*both(html))
    assert_same(*both(html.encode("utf-8")))


@pytest.mark.parametrize("html", ACCEPTED.values(), ids=ACCEPTED.keys())
def test_cell_texts_agree_with_html5lib(html: str) -> None:
    fast, _ = both(html)
    assert fast is not None
    tree = html5lib.parse(html, namespaceHTMLElements=False)
    table = tree.find(".//table")
    assert table is not None
    for br in table.iter("br"):
        br.text = " "  # our cell text reads br as a space (cells.py); textContent has nothing
    for tr in table.iter("tr"):  # tree order; the grid puts tfoot rows last
        for cell in tr:
            if cell.tag not in ("td", "th"):
                continue
            text = " ".join("".join(cell.itertext()).split())
            assert any(text in row for row in fast.text_rows), text


def test_the_fast_path_also_reads_the_second_table_of_a_page() -> None:
    html = "<p>x<table id=a><tr><td>1</table><!-- <table> --><table id=b><tr><td>2</table>"
    fast, dom = both(html, index=1)
    assert_same(fast, dom)
    assert fast is not None and fast.text_rows == [["2"]]


DECLINED = {
    # Each of these the reader leaves to the DOM path; the table it declines is table#t.
    "comment in the table": "<table id=t><tr><!-- x --><td>1</table>",
    "nested table": "<table id=t><tr><td><table><tr><td>in</table></td></tr></table>",
    # §13.2.6.4.10 "in table text": other text is foster-parented out of the table
    "text outside cells": "<table id=t>stray<tr><td>1</table>",
    "nbsp outside cells": "<table id=t>&nbsp;<tr><td>1</table>",
    # §13.2.5.73: a legacy reference without its semicolon ("&amp b", "&copy 2026")
    "reference without semicolon": "<table id=t><tr><td>a &amp b</table>",
    "legacy reference": "<table id=t><tr><td>&copy 2026</table>",
    "unknown named reference": "<table id=t><tr><td>&notin;</table>",
    # §13.2.5.80: NUL and C1 numeric references are replaced
    "numeric reference to NUL": "<table id=t><tr><td>&#0;</table>",
    "numeric reference in the C1 range": "<table id=t><tr><td>&#x80;</table>",
    "NUL in text": "<table id=t><tr><td>a\x00b</table>",
    "script in a cell": "<table id=t><tr><td>1<script>x</script></table>",
    "paragraph in a cell": "<table id=t><tr><td><p>1</table>",
    "misnested inline": "<table id=t><tr><td><b><i>1</b></i></table>",
    "link in a link": "<table id=t><tr><td><a href=1>a<a href=2>b</a></table>",
    "stray end tag": "<table id=t><tr></td><td>1</table>",
    "unclosed table": "<table id=t><tr><td>1",
    "table in a select": "<select><table></table></select><table id=t><tr><td>1</table>",
    "template": "<template><table></table></template><table id=t><tr><td>1</table>",
    "style in svg": "<svg><style><table></table></style></svg><table id=t><tr><td>1</table>",
    "invalid utf-8 declared as utf-8": b'<meta charset="utf-8"><table id=t><tr><td>caf\xe9</table>',
}


@pytest.mark.parametrize("html", DECLINED.values(), ids=DECLINED.keys())
def test_what_the_reader_cannot_read_exactly_goes_to_the_dom_path(html: str | bytes) -> None:
    page = read_page(html)
    located = locate_table(page, "table#t")
    with forced_path("auto"):
        assert plain_grid(page, located, drop_hidden=False, max_slots=10_000) is None


def test_hidden_cells_go_to_the_dom_path_only_when_dropped() -> None:
    html = '<table><tr><td style="display:none">x<td>y</table>'
    assert both(html, drop_hidden=True)[0] is None
    assert_same(*both(html, drop_hidden=False))


def test_tables_in_comments_scripts_and_text_are_not_counted() -> None:
    # §13.2.5.43 comments, §13.2.6.2 raw text (script, style, textarea, title)
    html = (
        "<title><table></title><script>'<table>'</script><textarea><table></textarea>"
        '<!-- <table> --><div data-x="<table>"></div><style>table{}</style>'
        "<table><tr><td>only</table>"
    )
    fast, dom = both(html)
    assert_same(fast, dom)
    assert fast is not None and fast.text_rows == [["only"]]


def test_a_table_from_a_comment_is_read_from_the_opened_page() -> None:
    # The page is parsed again with the comment opened (locate.py); the reader reads that text.
    html = '<div><!-- <table class="late"><tr><th>A<td><a href=/x>1</a></table> --></div>'
    page = read_page(html)
    located = locate_table(page, "table.late")
    assert located.in_comment
    with forced_path("auto"):
        fast = plain_grid(page, located, drop_hidden=False, max_slots=100)
    assert_same(fast, build_grid(located.node))


def test_over_the_slot_budget_the_dom_path_raises() -> None:
    html = "<table>" + "<tr><td colspan=1000>x" * 50 + "</table>"
    page = read_page(html)
    located = locate_table(page, "table")
    assert plain_grid(page, located, drop_hidden=False, max_slots=10_000) is None
    with pytest.raises(ExtractError, match="over the budget of 10,000"):
        extract_grid(html, max_grid_slots=10_000)


def test_forcing_the_dom_path() -> None:
    page = read_page("<table><tr><td>1</table>")
    located = locate_table(page, "table")
    with forced_path("dom"):
        assert fast_module() is None
        assert plain_grid(page, located, drop_hidden=False, max_slots=100) is None
        assert "DOM path only" in path_status()
    with pytest.raises(ValueError, match="'dom' or 'auto'"), forced_path("fast"):
        pass
