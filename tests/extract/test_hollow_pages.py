"""Pages parsed without their large plain tables' content (plain_grid.parsed_page).

Leaving a plain table's content out of lexbor's DOM must change no result: every extraction of
a hollowed page equals the DOM path's on the whole page. The size from which a table is left
out is lowered to 0 here, so that every plain table of these small pages is left out.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pyarrow as pa
import pytest

import harvester.extract.plain_grid as plain_grid_module
from harvester.errors import HarvesterError, TableNotFoundError
from harvester.extract.fastpath import forced_path
from harvester.extract.rules import TableRule
from harvester.extract.table import extract_table, read_page

from .test_plain_reader import ACCEPTED, DECLINED

DATA = Path(__file__).resolve().parent.parent / "data" / "html"
PAGES = {
    **{f"accepted: {name}": html for name, html in ACCEPTED.items()},
    **{f"declined: {name}": html for name, html in DECLINED.items()},
    **{f"corpus: {path.name}": path.read_bytes() for path in sorted(DATA.glob("*.html"))},
}


@pytest.fixture(autouse=True)
def hollow_everything(monkeypatch: pytest.MonkeyPatch) -> Iterator[None]:
    """Every plain table left out, and the fast path on even where HARVESTER_EXTRACT_PATH=dom
    (CI's second run): these tests are about it. Tests that want the DOM path force it."""
    monkeypatch.setattr(plain_grid_module, "HOLLOW_MIN_CONTENT", 0)
    with forced_path("auto"):
        yield


def outcome(html: str | bytes, rule: TableRule) -> tuple[object, ...]:
    try:
        found = extract_table(read_page(html), rule)
    except HarvesterError as error:
        return (type(error).__name__, str(error))
    return (found.table, found.caption, found.overlaps, found.source_rows, found.index)


def assert_same(dom: tuple[object, ...], fast: tuple[object, ...]) -> None:
    if isinstance(dom[0], pa.Table) and isinstance(fast[0], pa.Table):
        assert fast[0].schema == dom[0].schema and fast[0].equals(dom[0])
        assert fast[1:] == dom[1:]
    else:
        assert fast == dom


@pytest.mark.parametrize("html", PAGES.values(), ids=PAGES.keys())
@pytest.mark.parametrize("select", ["table", "table:not(:empty)", "body :has(td)"])
@pytest.mark.parametrize("hidden", ["keep", "drop"])
def test_a_hollowed_page_gives_the_dom_paths_results(
    html: str | bytes, select: str, hidden: str
) -> None:
    with forced_path("dom"):
        count = len(read_page(html).all_tables())
    for index in [*range(count), count]:  # the last one is out of range: the same error
        rule = TableRule(select=select, index=index, hidden=hidden)  # type: ignore[arg-type]
        with forced_path("dom"):
            dom = outcome(html, rule)
        with forced_path("auto"):
            fast = outcome(html, rule)
        assert_same(dom, fast)


def test_a_plain_tables_content_is_left_out_of_the_dom() -> None:
    page = read_page("<div id=a><table id=t><tr><td>1<td>2</table></div><p>after</p>")
    assert page.hollow == {0}
    assert page.document.css("table#t tr") == []  # only the start and end tags were parsed
    after = page.document.css_first("p")
    assert after is not None and after.text() == "after"  # the rest of the page as before
    assert extract_table(page, TableRule(select="#a", header_rows=0)).table.to_pylist() == [
        {"column_1": 1, "column_2": 2}  # typed as integers (values.py)
    ]
    assert page.full().document.css("table#t td")[1].text() == "2"


def test_a_table_inside_another_is_left_whole() -> None:
    # DOM textContent: the outer cell's text holds the inner table's text.
    html = "<table><tr><td>out <table><tr><td>in</table></td></tr></table>"
    page = read_page(html)
    assert 1 not in page.hollow
    grid = extract_table(page, TableRule(header_rows=0, index=0)).table
    assert grid.column(0).to_pylist() == ["out in"]


def test_an_error_lists_the_tables_as_they_are() -> None:
    html = "<table id=t><tr><th>A<th>B<tr><td>1<td>2</table>"
    with pytest.raises(TableNotFoundError) as raised:
        extract_table(read_page(html), TableRule(select="table.missing"))
    assert "[0] table#t first cells 'A', 'B' 2×2" in str(raised.value)
