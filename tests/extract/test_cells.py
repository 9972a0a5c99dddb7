"""Which children of a row are cells, and what text a cell has (HTML §4.9.12.1, DOM textContent).

Expected values are worked out by hand from the markup; the rule each checks is named beside it.
"""

from __future__ import annotations

from selectolax.lexbor import LexborHTMLParser

from harvester.extract.cells import clean_href, link_of
from harvester.extract.grid import Grid, build_grid, cell_text


def grid_of(html: str, select: str = "table") -> Grid:
    node = LexborHTMLParser(html).css_first(select)
    assert node is not None, f"no {select} in the test markup"
    return build_grid(node)


# --- only td and th children are cells -------------------------------------------------------


def test_comment_between_cells_of_a_plain_row_is_no_cell() -> None:
    # HTML §4.9.12.1 "cells": only td and th children of a tr are cells; a Comment node is not.
    grid = grid_of("<table><tr><td>1</td><!-- note --><td>2</td></tr></table>")
    assert grid.texts() == [["1", "2"]]
    assert grid.width == 2


def test_comment_between_cells_of_a_row_with_th_is_no_cell() -> None:
    # HTML §4.9.12.1 "cells", in a row that needs care (a th cell): the same two cells.
    grid = grid_of("<table><tr><th>h</th><!-- note --><td>2</td></tr></table>")
    assert grid.texts() == [["h", "2"]]


def test_comments_whitespace_and_script_are_never_cells() -> None:
    # HTML §4.9.12.1 "cells": whitespace text, comments and a script element among the cells
    # of a row are no cells; each row below has exactly the two cells a and b.
    html = (
        "<table>"
        "<tr> <!--x--> <td>a</td>\n<!--y--><td>b</td> <!--z--></tr>"
        "<tr><td>a</td><script>var s = 1;</script><!--y--><td>b</td></tr>"
        "<tr><th>a</th> <!--x--> <td rowspan='1'>b</td><!--z--></tr>"
        "</table>"
    )
    assert grid_of(html).texts() == [["a", "b"], ["a", "b"], ["a", "b"]]


def test_node_of_a_plain_row_skips_comments() -> None:
    # Slot (1, 0) is covered by the second td, not by the comment before it (§4.9.12.1).
    grid = grid_of('<table><tr><td>1</td><!-- note --><td><a href="/two">2</a></td></tr></table>')
    assert grid.link(1, 0) == "/two"
    node = grid.node(1, 0)
    assert node is not None and node.tag == "td"
    assert grid.node(2, 0) is None


# --- a cell's text ---------------------------------------------------------------------------


def test_cell_text_includes_a_nested_table() -> None:
    # DOM Standard "descendant text content" (textContent): every Text descendant in tree
    # order, the nested table's included: "x " + "y" + "w" + " z".
    node = LexborHTMLParser(
        "<table><tr><td>x <table><tr><td>y</td><td>w</td></tr></table> z</td></tr></table>"
    ).css_first("td")
    assert node is not None
    assert cell_text(node) == "x yw z"


def test_outer_cell_text_holds_nested_table_text_but_not_its_cells() -> None:
    # HTML §4.9.12.1 walks only the outer table's own rows, so the outer grid has one row of
    # two cells; the first cell's text content includes the inner table's text.
    html = (
        '<table id="outer"><tr><td>o1 <table id="inner"><tr><td>i1</td><td>i2</td></tr>'
        "</table> o2</td><td>c</td></tr></table>"
    )
    assert grid_of(html, "#outer").texts() == [["o1 i1i2 o2", "c"]]
    assert grid_of(html, "#inner").texts() == [["i1", "i2"]]


def test_nested_table_text_keeps_br_as_space_and_skips_its_scripts() -> None:
    # Inside the nested table the same rules hold: <br> reads as a space, and script and
    # style content is no text a reader sees (common practice, no published source).
    html = (
        "<table><tr><td>a<table><tr><td>b<br>c<script>s()</script></td>"
        "<td><style>p{}</style>d</td></tr></table></td></tr></table>"
    )
    assert grid_of(html).texts() == [["ab cd"]]


def test_style_script_and_template_content_is_left_out() -> None:
    # textContent would include style and script text; a reader never sees it, nor the
    # template's contents (HTML §4.12.3: the contents are a separate DocumentFragment).
    html = (
        "<table><tr><td>1<style>td{}</style>2</td>"
        "<td>3<script>x = 4</script></td>"
        "<td><template>hidden</template>5</td></tr></table>"
    )
    assert grid_of(html).texts() == [["12", "3", "5"]]


# URL Standard §4.4 (basic URL parser; from memory): leading and trailing C0 controls and
# spaces are removed, and every ASCII tab or newline; other white space such as NBSP is kept.
HREFS = {
    " /p/1 ": "/p/1",
    "\t/p/1\n": "/p/1",
    "/p/\r\n1": "/p/1",
    "\u00a0/p/1\u00a0": "\u00a0/p/1\u00a0",
    "/p/1?q=a b": "/p/1?q=a b",
}


def test_link_hrefs_are_cleaned_as_a_url_parser_cleans_them() -> None:
    for written, expected in HREFS.items():
        assert clean_href(written) == expected, repr(written)
        html = f'<table><tr><td><a href="{written}">x</a></table>'
        td = LexborHTMLParser(html).css_first("td")
        assert td is not None and link_of(td) == expected, repr(written)
    assert clean_href("") is None and clean_href(None) is None  # no address at all
