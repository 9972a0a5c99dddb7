"""Finding the table a rule names: selectors, tables kept inside comments, and error messages."""

from __future__ import annotations

from pathlib import Path

import pytest

from harvester.errors import ExtractError, TableNotFoundError
from harvester.extract.locate import Page, describe_candidates, locate_table

DATA = Path(__file__).resolve().parent.parent / "data" / "html"
COMMENT_PAGE = (DATA / "comment_table.html").read_text(encoding="utf-8")


def table_id(page: Page, select: str, index: int | None = None) -> str | None:
    return locate_table(page, select, index).node.attributes.get("id")


def test_selector_finds_a_table() -> None:
    page = Page(COMMENT_PAGE, "comments.html")
    located = locate_table(page, "#live")
    assert located.node.tag == "table"
    assert located.node.attributes.get("id") == "live"
    assert (located.index, located.in_comment) == (0, False)


def test_selector_by_class() -> None:
    page = Page(COMMENT_PAGE)
    assert table_id(page, "table.stats") == "live"


def test_table_inside_a_comment_is_found_by_its_id() -> None:
    # HTML §13.2.6.4.9: a comment in table or body context is inserted as a Comment node, so
    # the table inside it is not in the DOM; locate re-parses the page with it opened.
    page = Page(COMMENT_PAGE)
    located = locate_table(page, "#t")
    assert located.node.attributes.get("id") == "t"
    assert located.in_comment is True
    cell = located.node.css_first("td")
    assert cell is not None and cell.text() == "Vell"


def test_table_inside_a_comment_is_found_by_its_wrapper() -> None:
    page = Page(COMMENT_PAGE)
    located = locate_table(page, "#wrap")
    assert located.node.attributes.get("id") == "t"
    assert located.in_comment is True


def test_page_tables_come_before_commented_ones() -> None:
    page = Page(COMMENT_PAGE)
    found = page.tables("table")
    assert [(t.node.attributes.get("id"), t.index, t.in_comment) for t in found] == [
        ("live", 0, False),
        ("t", 1, True),
    ]
    assert [t.node.attributes.get("id") for t in page.all_tables()] == ["live", "t"]


def test_comment_without_a_table_is_not_opened() -> None:
    page = Page("<div id='d'><!-- <b>bold</b> --></div><table id='x'><tr><td>1</table>")
    assert [t.node.attributes.get("id") for t in page.all_tables()] == ["x"]


def test_each_comment_is_opened_on_its_own() -> None:
    # A comment ends at the first "-->" (HTML §13.2.5, the comment tokenizer states); text
    # between two comments is live markup and its table is a page table, not a commented one.
    page = Page(
        "<!-- <table id='a'><tr><td>1</table> --><table id='b'><tr><td>2</table>"
        "<!-- <table id='c'><tr><td>3</table> -->"
    )
    found = page.all_tables()
    assert [(t.node.attributes.get("id"), t.in_comment) for t in found] == [
        ("b", False),
        ("a", True),
        ("c", True),
    ]


def test_wrapper_selector_gives_the_outermost_tables() -> None:
    # A nested table is part of its outer table (HTML §13.2.6.4.9 keeps it inside the td).
    page = Page(
        "<div id='box'><table id='a'><tr><td><table id='n'><tr><td>x</table></table>"
        "<p><table id='b'><tr><td>y</table></p></div><table id='outside'><tr><td>z</table>"
    )
    assert [t.node.attributes.get("id") for t in page.tables("#box")] == ["a", "b"]


def test_selector_naming_a_nested_table_directly_finds_it() -> None:
    page = Page("<table id='a'><tr><td><table id='n'><tr><td>x</table></table>")
    assert table_id(page, "#n") == "n"


def test_no_match_lists_the_candidates() -> None:
    page = Page(COMMENT_PAGE, "comments.html")
    with pytest.raises(TableNotFoundError) as caught:
        locate_table(page, "#nothing")
    message = str(caught.value)
    assert isinstance(caught.value, LookupError)  # errors.py: TableNotFoundError(LookupError)
    assert isinstance(caught.value, ExtractError)
    assert "\n" not in message  # DEVELOPERS.md: one-line messages
    assert message.startswith("comments.html")
    assert "'#nothing'" in message
    # Worked from the page: table#live has classes stats, main, a caption, 2 rows × 2 columns;
    # table#t (in the comment) has class hidden-stats and 2 rows × 1 column.
    assert "table#live.stats.main" in message
    assert "caption 'Live'" in message
    assert "'Club', 'Pts'" in message
    assert "2×2" in message
    assert "table#t.hidden-stats" in message
    assert "'Player'" in message
    assert "2×1" in message
    assert "inside a comment" in message


def test_several_matches_without_index_is_an_error() -> None:
    page = Page(COMMENT_PAGE, "comments.html")
    with pytest.raises(TableNotFoundError) as caught:
        locate_table(page, "table")
    message = str(caught.value)
    assert "matched 2 tables" in message
    assert "table#live" in message and "table#t" in message


def test_index_picks_among_matches() -> None:
    page = Page(COMMENT_PAGE)
    assert table_id(page, "table", 0) == "live"
    located = locate_table(page, "table", 1)
    assert located.node.attributes.get("id") == "t"
    assert (located.index, located.in_comment) == (1, True)


def test_index_out_of_range() -> None:
    page = Page(COMMENT_PAGE, "comments.html")
    with pytest.raises(TableNotFoundError) as caught:
        locate_table(page, "table", 2)
    message = str(caught.value)
    assert "index 2" in message
    assert "matched 2 table" in message


def test_negative_index_is_an_error() -> None:
    page = Page(COMMENT_PAGE, "comments.html")
    with pytest.raises(ExtractError, match="-1"):
        locate_table(page, "table", -1)


def test_invalid_css_names_the_selector() -> None:
    page = Page(COMMENT_PAGE, "comments.html")
    with pytest.raises(ExtractError) as caught:
        locate_table(page, "table[")
    assert not isinstance(caught.value, TableNotFoundError)
    assert "'table['" in str(caught.value)
    assert str(caught.value).startswith("comments.html")


def test_page_without_tables_says_so() -> None:
    page = Page("<p>no tables here</p>", "empty.html")
    with pytest.raises(TableNotFoundError, match="the page has no tables"):
        locate_table(page)


def test_first_cells_are_the_first_four_non_empty() -> None:
    # Worked by hand: row 0 is a, "", b, c, d, e → the first four non-empty texts.
    page = Page("<table id='w'><tr><td>a<td><td>b<td>c<td>d<td>e<tr><td>f</table>")
    listing = describe_candidates(page.all_tables())
    assert "table#w" in listing
    assert "first cells 'a', 'b', 'c', 'd'" in listing
    assert "'e'" not in listing
    assert "2×6" in listing


def test_describe_no_tables() -> None:
    assert describe_candidates([]) == "the page has no tables"


# --- many tables ---------------------------------------------------------------------------

MANY = "".join(f'<table class="t"><tr><td>{i}</td></tr></table>' for i in range(50_000))
FIRST_20 = " | ".join(f"[{i}] table.t first cells '{i}' 1×1" for i in range(20))


def test_no_match_on_a_page_of_50000_tables_lists_20_and_counts_the_rest() -> None:
    page = Page(MANY, "many.html")
    with pytest.raises(TableNotFoundError) as raised:
        locate_table(page, "table#missing")
    assert str(raised.value) == (
        f"many.html: selector 'table#missing' matched no table; tables: {FIRST_20} | "
        "… and 49,980 more — pick a selector from the tables listed"
    )


def test_several_matches_on_a_page_of_50000_tables_list_20() -> None:
    page = Page(MANY, "many.html")
    with pytest.raises(TableNotFoundError) as raised:
        locate_table(page, "table.t")
    message = str(raised.value)
    assert message.startswith(
        f"many.html: selector 'table.t' matched 50000 tables; tables: {FIRST_20} | "
        "… and 49,980 more — "
    )
    assert len(message) < 2_000  # one readable line, not megabytes


def test_a_listing_of_exactly_the_limit_has_no_more_part() -> None:
    page = Page(MANY[: MANY.index('<table class="t"><tr><td>20<')], "twenty.html")
    assert describe_candidates(page.all_tables()) == f"tables: {FIRST_20}"
