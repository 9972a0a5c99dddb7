"""The grid-slot budget: a table whose grid would pass it is an error before its slots are made.

The budget is a project decision (harvester/extract/grid.py, MAX_GRID_SLOTS), not part of
HTML §4.9.12.1; the slot counts below follow from the table model worked by hand: rowspans are
cut at their row group's end, so a grid has one row per tr, and every row has the full width.
"""

from __future__ import annotations

import pytest
from selectolax.lexbor import LexborHTMLParser

from harvester import ExtractError, TableNotFoundError, TableRule, extract_table
from harvester.extract.grid import MAX_GRID_SLOTS, Grid, build_grid
from harvester.extract.locate import locate_table
from harvester.extract.table import extract_grid, read_page

HINT = (
    "check that the selector names the table you want; a table this large is likely broken or "
    "hostile. To read it anyway, pass a larger max_grid_slots to extract_table"
)


def grid_of(html: str, max_slots: int) -> Grid:
    node = LexborHTMLParser(html).css_first("table")
    assert node is not None
    return build_grid(node, max_slots=max_slots)


def rows(row: str, count: int) -> str:
    return "<table>" + row * count + "</table>"


def test_a_huge_colspan_on_many_rows_stops_at_the_first_row() -> None:
    # HTML §4.9.12.1: colspan 1000000000 is read as 1000, so 20 such rows need
    # 1,000 × 20 = 20,000 slots, over a budget of 10,000; the first cell already passes it.
    html = rows('<tr><td colspan="1000000000">x</td></tr>', 20)
    with pytest.raises(ExtractError) as raised:
        grid_of(html, max_slots=10_000)
    assert str(raised.value) == (
        "table: the grid would have 20,000 slots (1,000 columns × 20 rows), over the budget of "
        '10,000; the td at grid row 1, column 1 (colspan="1000000000") passed it — ' + HINT
    )


def test_a_grid_of_exactly_the_budget_is_formed() -> None:
    # 1,000 columns × 10 rows = 10,000 slots: at the budget, not over it.
    grid = grid_of(rows('<tr><td colspan="1000">x</td></tr>', 10), max_slots=10_000)
    assert (grid.width, grid.height) == (1000, 10)


def test_rowspan_zero_on_every_row_is_stopped_where_the_width_passes_the_budget() -> None:
    # §4.9.12.1 rowspan 0: each cell grows to the end of the row group, so row y (from 0)
    # holds the y cells from above and its own cell at column y + 1: 20 rows end 20 columns
    # wide. With a budget of 100 slots, 6 columns × 20 rows = 120 first passes it, at the
    # sixth row's cell.
    html = rows('<tr><td rowspan="0">x</td></tr>', 20)
    with pytest.raises(ExtractError) as raised:
        grid_of(html, max_slots=100)
    assert str(raised.value).startswith(
        "table: the grid would have 120 slots (6 columns × 20 rows), over the budget of 100; "
        'the td at grid row 6, column 6 (rowspan="0") passed it — '
    )
    assert (grid_of(html, max_slots=400).width, grid_of(html, max_slots=400).height) == (20, 20)


def test_a_wide_plain_row_is_named_by_its_row() -> None:
    # Ten rows; the third has 30 td cells: 30 × 10 = 300 slots, over 200.
    html = "<table>" + "<tr><td>a</td></tr>" * 2 + "<tr>" + "<td>b</td>" * 30 + "</tr>"
    html += "<tr><td>c</td></tr>" * 7 + "</table>"
    with pytest.raises(
        ExtractError,
        match=r"300 slots \(30 columns × 10 rows\), over the budget of 200; grid row 3 \(30 cells",
    ):
        grid_of(html, max_slots=200)


def test_a_wide_row_of_th_cells_is_named_by_its_row_and_cell() -> None:
    # 25 th cells over 4 rows: the 21st cell makes 21 × 4 = 84 slots, over 80.
    html = "<table><tr>" + "<th>h</th>" * 25 + "</tr>" + "<tr><td>1</td></tr>" * 3 + "</table>"
    with pytest.raises(
        ExtractError,
        match=r"84 slots \(21 columns × 4 rows\).*; grid row 1 \(its cell 21\) passed",
    ):
        grid_of(html, max_slots=80)


def test_column_groups_count_before_any_row() -> None:
    # §4.9.12.1 column groups: span 1000 twice makes the table 2,000 columns wide before the
    # rows; 3 rows → 6,000 slots.
    html = '<table><colgroup span="1000"></colgroup><colgroup span="1000"></colgroup>'
    html += "<tr><td>a</td></tr>" * 3 + "</table>"
    with pytest.raises(
        ExtractError,
        match=r"6,000 slots \(2,000 columns × 3 rows\).*; the column groups \(colgroup",
    ):
        grid_of(html, max_slots=5_000)


def test_extract_table_names_the_page_table_and_selector() -> None:
    html = '<table id="wide">' + '<tr><td colspan="50">x</td></tr>' * 4 + "</table>"
    rule = TableRule(name="scores", select="table#wide")
    with pytest.raises(ExtractError) as raised:
        extract_table(html, rule, source="page.html", max_grid_slots=100)
    assert str(raised.value).startswith(
        "page.html: table 'scores' (table#wide): the grid would have 200 slots "
        "(50 columns × 4 rows), over the budget of 100; the td at grid row 1, column 1 "
        '(colspan="50") passed it — '
    )
    with pytest.raises(ExtractError, match=r"^page.html: table \(table#wide\): the grid would"):
        extract_grid(html, "table#wide", source="page.html", max_grid_slots=100)


def test_the_default_budget_stops_a_hostile_table_and_a_listing_survives_it() -> None:
    # 1,000 columns × 10,001 rows = 10,001,000 slots: just over the default of 10 million.
    assert MAX_GRID_SLOTS == 10_000_000
    hostile = '<table id="big">' + '<tr><td colspan="1000">x' * 10_001 + "</table>"
    page = read_page(hostile + '<table id="small"><tr><td>a</td></tr></table>', "page.html")
    with pytest.raises(ExtractError, match=r"10,001,000 slots \(1,000 columns × 10,001 rows\)"):
        extract_table(page, TableRule(select="#big"))
    with pytest.raises(TableNotFoundError) as raised:
        locate_table(page)
    assert str(raised.value).startswith(
        "page.html: selector 'table' matched 2 tables; tables: [0] table#big (too large to read)"
        " | [1] table#small first cells 'a' 1×1"
    )
