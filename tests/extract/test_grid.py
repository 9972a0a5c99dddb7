"""Worked cases for the table grid: HTML §4.9.12.1 "forming a table", checked by hand.

Every expected grid below was worked out on paper from the markup and the spec text quoted in
the comment beside it (REFERENCES §6), never copied from a run of the code.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from selectolax.lexbor import LexborHTMLParser

from harvester.extract.grid import (
    MAX_COLSPAN,
    MAX_ROWSPAN,
    Cell,
    Grid,
    build_grid,
    cell_text,
    parse_span,
)

DATA = Path(__file__).resolve().parent.parent / "data" / "html"


def grid_of(html: str, select: str = "table", *, drop_hidden: bool = False) -> Grid:
    """The grid of the first element ``select`` names in ``html``."""
    node = LexborHTMLParser(html).css_first(select)
    assert node is not None, f"no {select} in the test markup"
    return build_grid(node, drop_hidden=drop_hidden)


def texts_of(html: str, select: str = "table", *, drop_hidden: bool = False) -> list[list[str]]:
    return grid_of(html, select, drop_hidden=drop_hidden).texts()


def data_file(name: str) -> str:
    return (DATA / name).read_text(encoding="utf-8")


def anchored(grid: Grid) -> list[Cell]:
    """The distinct cells of the grid, in the order of their anchor slots."""
    seen: dict[int, Cell] = {}
    for row in grid.rows:
        for cell in row:
            if cell is not None and id(cell) not in seen:
                seen[id(cell)] = cell
    return sorted(seen.values(), key=lambda cell: (cell.y, cell.x))


# --- constants ----------------------------------------------------------------------------


def test_span_limits_are_the_spec_limits() -> None:
    # HTML §4.9.12.1 steps 8-9 (colspan above 1000 → 1000, rowspan above 65534 → 65534)
    assert MAX_COLSPAN == 1000
    assert MAX_ROWSPAN == 65534


# --- colspan clamping -----------------------------------------------------------------------


@pytest.mark.parametrize("value", ["0", "abc", "", "-2", "-0", "\u00a02", "\u0662"])
def test_colspan_error_or_zero_gives_one(value: str) -> None:
    # HTML §4.9.12.1 step "colspan": "if parsing ... is not an error and not zero, that value,
    # otherwise 1". §2.3.4.2: "-2" is an error, "-0" is zero; NBSP is not ASCII whitespace and
    # U+0662 (Arabic-Indic two) is not an ASCII digit, so both are errors.
    grid = grid_of(f'<table><tr><td colspan="{value}">a<td>b</table>')
    assert grid.width == 2
    assert grid.texts() == [["a", "b"]]
    assert grid.rows[0][0] is not None and grid.rows[0][0].width == 1


def test_colspan_5000_is_clamped_to_1000() -> None:
    # HTML §4.9.12.1 step "colspan": "if colspan is greater than 1000, let it be 1000 instead"
    grid = grid_of('<table><tr><td colspan="5000">a<td>b</table>')
    assert grid.width == 1001
    assert grid.texts() == [["a"] * 1000 + ["b"]]
    first = grid.rows[0][0]
    assert first is not None and first.width == 1000


def test_colspan_with_more_digits_than_python_converts_is_clamped() -> None:
    # HTML §2.3.4.1 reads *all* leading digits; any value above 1000 is then 1000 (§4.9.12.1).
    # A 5000-digit value is still just "greater than 1000" — it must not raise.
    grid = grid_of('<table><tr><td colspan="' + "9" * 5000 + '">a<td>b</table>')
    assert grid.width == 1001
    assert grid.rows[0][1000] is not None and grid.rows[0][1000].text == "b"


@pytest.mark.parametrize(
    ("value", "expected"),
    [
        ("3px", 3),  # HTML §2.3.4.1: digits are read up to the first non-digit
        (" 2", 2),  # §2.3.4.1: leading ASCII whitespace is skipped
        ("\t\n2", 2),  # §2.3.4.1: TAB and LF are ASCII whitespace
        ("+2", 2),  # §2.3.4.1: a leading "+" is ignored (non-conforming but accepted)
        ("2.9", 2),  # §2.3.4.1: stops at ".", no rounding
        ("-2", 1),  # §2.3.4.2: a negative value is an error → the default, 1
    ],
)
def test_colspan_integer_parsing(value: str, expected: int) -> None:
    html = f'<table><tr><td colspan="{value}">a<td>b</table>'
    assert texts_of(html) == [["a"] * expected + ["b"]]


# --- rowspan clamping and the row-group cut ---------------------------------------------------


@pytest.mark.parametrize(
    ("value", "default", "minimum", "maximum", "expected"),
    [
        ("70000", 1, 0, 65534, 65534),  # HTML §4.9.12.1 step "rowspan": above 65534 → 65534
        ("0", 1, 0, 65534, 0),  # §4.9.12.1: rowspan 0 is allowed (grows downward)
        ("-0", 1, 0, 65534, 0),  # §2.3.4.1: "-0" is 0 - 0 = 0, not negative
        ("0", 1, 1, 1000, 1),  # §4.9.12.1 step "colspan": zero gives 1
        ("abc", 1, 0, 65534, 1),  # §2.3.4.2: an error gives the default
        (None, 1, 0, 65534, 1),  # §4.9.12.1: absence gives the default
        ("  \f\r7 rows", 1, 0, 65534, 7),  # §2.3.4.1: FF, CR, SPACE skipped; stop at " "
        ("\v7", 1, 0, 65534, 1),  # §2.3.4.1: VT is not ASCII whitespace (Infra) → error
    ],
)
def test_parse_span(
    value: str | None, default: int, minimum: int, maximum: int, expected: int
) -> None:
    assert parse_span(value, default, minimum, maximum) == expected


def test_rowspan_70000_is_clamped_to_65534_in_a_longer_group() -> None:
    # HTML §4.9.12.1 step "rowspan": 70000 → 65534. The tbody has 65536 rows, so the clamp (and
    # not the row-group cut) is what stops the cell: rows 0..65533 hold "a", rows 65534 and
    # 65535 put their own cell in column 0. A second tbody follows and is untouched.
    html = (
        '<table><tbody><tr><td rowspan="70000">a<td>b'
        + "<tr><td>c" * 65535
        + "</tbody><tbody><tr><td>z</table>"
    )
    grid = grid_of(html)
    assert grid.height == 65537
    first = grid.rows[0][0]
    assert first is not None and first.height == 65534
    assert all(grid.rows[y][0] is first for y in range(65534))
    assert grid.row_texts(65533) == ("a", "c")
    assert grid.row_texts(65534) == ("c", "")
    assert grid.row_texts(65535) == ("c", "")
    assert grid.row_texts(65536) == ("z", "")


def test_rowspan_70000_in_a_short_group_is_cut_at_the_group_end() -> None:
    # HTML §4.9.12.1 clamps to 65534; harvester's documented departure (CSS 2.1 §17.5: a cell
    # box cannot extend beyond the last row box of its row group) cuts it at the tbody's 2nd row.
    grid = grid_of('<table><tr><td rowspan="70000">a<td>b<tr><td>c</table>')
    assert grid.texts() == [["a", "b"], ["a", "c"]]
    first = grid.rows[0][0]
    assert first is not None and first.height == 2


def test_rowspan_65534_in_two_row_tbody_adds_no_rows() -> None:
    # Departure from the literal §4.9.12.1 (which would make 65534 rows): CSS 2.1 §17.5 —
    # the cell stops at the last row of its row group, and no rows are added.
    grid = grid_of(
        '<table><tbody><tr><td rowspan="65534">a<td>b<tr><td>c</tbody>'
        "<tbody><tr><td>d<td>e</tbody></table>"
    )
    assert grid.height == 3
    assert grid.texts() == [["a", "b"], ["a", "c"], ["d", "e"]]
    assert grid.overlaps == []


def test_rowspan_integer_parsing() -> None:
    # HTML §2.3.4.1: "2px" → 2; " 2" → 2; §2.3.4.2: "-2" is an error → 1.
    html = '<table><tr><td rowspan="2px">a<td rowspan=" 2">b<td rowspan="-2">c<tr><td>d</table>'
    # Row 1: slots 0 and 1 are covered by a and b, so d goes to slot 2 (§4.9.12.1 "cells" step).
    assert texts_of(html) == [["a", "b", "c"], ["a", "b", "d"]]


# --- rowspan = 0 and row groups ----------------------------------------------------------------


def test_rowspan_zero_stops_at_end_of_tbody_and_thead() -> None:
    # HTML §4.9.12.1 step "rowspan": 0 sets "cell grows downward"; "ending a row group" stops it
    # at the end of its own group, so it neither leaves thead nor enters the second tbody.
    grid = grid_of(data_file("rowspan_zero_groups.html"))
    assert grid.texts() == [
        ["h", "x"],
        ["h", "y"],
        ["a", "b"],
        ["a", "c"],
        ["d", "e"],
    ]
    assert grid.row_groups == ["thead", "thead", "tbody", "tbody", "tbody"]
    header = grid.rows[0][0]
    body = grid.rows[2][0]
    assert header is not None and (header.y, header.height) == (0, 2)
    assert body is not None and (body.y, body.height) == (2, 2)
    assert grid.rows[4][0] is not None and grid.rows[4][0].text == "d"


def test_rowspan_zero_on_last_row_of_group_covers_one_row() -> None:
    # HTML §4.9.12.1: a downward-growing cell in the group's last row has nothing to grow into.
    grid = grid_of(
        '<table><tbody><tr><td>a<tr><td rowspan="0">b</tbody><tbody><tr><td>c<td>d</table>'
    )
    assert grid.texts() == [["a", ""], ["b", ""], ["c", "d"]]


def test_rowspan_zero_in_tfoot_stays_in_tfoot() -> None:
    # HTML §4.9.12.1: tfoot is processed last; its rowspan=0 cell grows to the tfoot's end.
    grid = grid_of(
        '<table><tfoot><tr><td rowspan="0">f<td>g<tr><td>h</tfoot>'
        "<tbody><tr><td>b1<td>b2</tbody></table>"
    )
    assert grid.texts() == [["b1", "b2"], ["f", "g"], ["f", "h"]]
    assert grid.row_groups == ["tbody", "tfoot", "tfoot"]


def test_rowspan_beyond_thead_does_not_enter_tbody() -> None:
    # HTML §4.9.12: a cell cannot span two row groups; CSS 2.1 §17.5 cut (project decision).
    grid = grid_of('<table><thead><tr><th rowspan="3">P<th>Q</thead><tbody><tr><td>1<td>2</table>')
    assert grid.texts() == [["P", "Q"], ["1", "2"]]
    assert grid.overlaps == []


# --- tfoot order -------------------------------------------------------------------------------


def test_tfoot_written_before_tbody_forms_the_last_rows() -> None:
    # HTML §4.9.12.1: tfoot elements are set aside ("pending tfoot") and processed at the end.
    grid = grid_of(data_file("tfoot_first.html"))
    assert grid.texts() == [["H"], ["B1"], ["B2"], ["F"]]
    assert grid.row_groups == ["thead", "tbody", "tbody", "tfoot"]


def test_two_tfoots_are_processed_last_in_tree_order() -> None:
    # HTML §4.9.12.1 "End": "for each tfoot element in the list of pending tfoot elements,
    # in tree order".
    grid = grid_of(
        "<table><tfoot><tr><td>F1</tfoot><tbody><tr><td>B</tbody>"
        "<tfoot><tr><td>F2</tfoot><tbody><tr><td>C</tbody></table>"
    )
    assert grid.texts() == [["B"], ["C"], ["F1"], ["F2"]]


# --- overlaps ----------------------------------------------------------------------------------


def test_overlap_first_placed_wins_and_is_recorded() -> None:
    # HTML §4.9.12.1 "cells" step: (1,1) is covered by b's rowspan when c (colspan=2) is placed
    # at x=0 — "those slots now have two cells overlapping". Practice: b keeps the slot.
    grid = grid_of(data_file("overlap.html"))
    assert grid.width == 3
    assert grid.texts() == [["a", "b", ""], ["c", "b", "d"]]
    assert grid.overlaps == [(1, 1)]
    c = grid.rows[1][0]
    assert c is not None and (c.x, c.y, c.width) == (0, 1, 2)
    # §4.9.12.1: xcurrent advances by colspan, so d is anchored at x=2.
    d = grid.rows[1][2]
    assert d is not None and d.x == 2


def test_no_overlap_in_a_plain_table() -> None:
    grid = grid_of("<table><tr><td>a<td>b<tr><td>c<td>d</table>")
    assert grid.overlaps == []


# --- row shapes --------------------------------------------------------------------------------


def test_short_rows_are_padded_with_empty_slots() -> None:
    # HTML §4.9.12: slots with no cell exist in the grid (0 ≤ x < xwidth); they read as "".
    grid = grid_of("<table><tr><td>a<td>b<td>c<tr><td>d</table>")
    assert grid.texts() == [["a", "b", "c"], ["d", "", ""]]
    assert grid.rows[1][1] is None and grid.rows[1][2] is None
    assert all(len(row) == 3 for row in grid.rows)


def test_tr_without_cells_is_an_empty_row() -> None:
    # HTML §4.9.12.1 "processing rows" step 4: a tr with no td/th still increases ycurrent.
    grid = grid_of("<table><tr><td>a<td>b</tr><tr></tr><tr><td>c</table>")
    assert grid.height == 3
    assert grid.texts() == [["a", "b"], ["", ""], ["c", ""]]


def test_empty_table_has_no_rows() -> None:
    # HTML §4.9.12.1 step 5: a table with no element children is empty.
    grid = grid_of("<table></table>")
    assert (grid.height, grid.width, grid.rows) == (0, 0, [])


def test_cell_fields() -> None:
    # HTML §4.9.12.1: th makes a header cell, td a data cell; a cell is anchored at (x, y).
    grid = grid_of('<table><tr><th>h<td colspan="2" rowspan="2">d<tr><td>e</table>')
    h, d, e = anchored(grid)
    assert (h.text, h.header, h.x, h.y, h.width, h.height) == ("h", True, 0, 0, 1, 1)
    assert (d.text, d.header, d.x, d.y, d.width, d.height) == ("d", False, 1, 0, 2, 2)
    assert (e.text, e.header, e.x, e.y, e.width, e.height) == ("e", False, 0, 1, 1, 1)


# --- column groups -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("markup", "width"),
    [
        ('<colgroup span="3"></colgroup>', 3),  # §4.9.12.1 "column groups": no col → span
        ('<colgroup span="0"></colgroup>', 1),  # span 0 → 1
        ('<colgroup span="x"></colgroup>', 1),  # span error → 1
        ('<colgroup span="5000"></colgroup>', 1000),  # span above 1000 → 1000
        ('<colgroup><col span="2"><col></colgroup>', 3),  # col spans summed
        (
            '<colgroup span="5"><col span="2"></colgroup>',
            2,
        ),  # with col children, colgroup span unused
        ('<colgroup><col span="0"></colgroup>', 1),  # col span 0 → 1
        ('<colgroup span="2"></colgroup><colgroup span="2"></colgroup>', 4),  # each group adds
        ('<col span="2"><col>', 3),  # §13.2.6.4.9: a bare col gets an implied colgroup
    ],
)
def test_column_groups_widen_the_table(markup: str, width: int) -> None:
    grid = grid_of(f"<table>{markup}<tr><td>a</table>")
    assert grid.width == width
    assert grid.texts() == [["a"] + [""] * (width - 1)]


def test_colgroup_after_the_first_row_group_does_not_count() -> None:
    # HTML §4.9.12.1: column groups are read only before the first thead/tbody/tfoot/tr; the
    # "rows" step skips a later colgroup.
    grid = grid_of('<table><tbody><tr><td>a</tbody><colgroup span="4"></colgroup></table>')
    assert grid.width == 1


def test_colgroup_after_caption_counts() -> None:
    # HTML §4.9.12.1 step 8 skips the caption before looking for colgroups.
    grid = grid_of('<table><caption>c</caption><colgroup span="2"></colgroup><tr><td>a</table>')
    assert grid.width == 2


# --- caption -----------------------------------------------------------------------------------


def test_caption_is_read_and_kept_out_of_the_grid() -> None:
    # HTML §4.9.12.1 step 6: the first caption child is the table's caption.
    grid = grid_of(
        "<table><caption>  League\n table </caption><caption>second</caption><tr><td>a</table>"
    )
    assert grid.caption == "League table"
    assert grid.texts() == [["a"]]


def test_no_caption_is_none() -> None:
    assert grid_of("<table><tr><td>a</table>").caption is None


# --- cell text ---------------------------------------------------------------------------------


def test_br_reads_as_a_space() -> None:
    # Common practice, no published source: a line break between words keeps them apart.
    html = "<table><tr><td>a<br>b<td>c<br/><br>d<td>e<br></table>"
    assert texts_of(html) == [["a b", "c d", "e"]]


def test_nbsp_and_other_whitespace_collapse() -> None:
    # Common practice, no published source: NBSP (U+00A0), EM SPACE (U+2003), tabs and newlines
    # are collapsed to one space and trimmed (HTML §4.9.12.2 notes NBSP is *not* ASCII
    # whitespace for "empty cell"; collapsing it for values is the recipe-level choice made here).
    html = "<table><tr><td>&nbsp;x&nbsp;&nbsp;y\n\t z&#x2003;w&nbsp;<td>&nbsp;</table>"
    assert texts_of(html) == [["x y z w", ""]]


def test_comments_are_not_cell_text() -> None:
    # DOM Standard "descendant text content" counts Text nodes only, never Comment nodes.
    html = "<table><tr><td>a<!-- hidden -->b<td>c <!-- x --> d<td>e<br><!--f-->g</table>"
    assert texts_of(html) == [["ab", "c d", "e g"]]


def test_script_style_and_template_text_is_excluded() -> None:
    # Common practice, no published source: script/style/template text is never rendered.
    html = (
        "<table><tr><td>a <script>var x = 1;</script> b"
        "<td>c <style>.q{color:red}</style> d<td>e <template>t</template> f</table>"
    )
    assert texts_of(html) == [["a b", "c d", "e f"]]


def test_nested_table_is_separate_but_its_text_counts() -> None:
    # HTML §13.2.6.4.9: a table inside a td stays nested. Its rows are not rows of the outer
    # table (§4.9.12.1 only walks tr children of the table and its row groups), but its text
    # is part of the outer cell's text content (DOM textContent): "o1 " + "i1" + "i2" + " o2".
    html = data_file("nested_tables.html")
    outer = grid_of(html, "#outer")
    assert outer.texts() == [["o1 i1i2 o2", "c"]]
    assert outer.height == 1
    inner = grid_of(html, "#inner")
    assert inner.texts() == [["i1", "i2"]]


def test_cell_text_function_includes_nested_tables() -> None:
    # DOM textContent: the nested table's Text descendants are part of the cell's text.
    node = LexborHTMLParser("<table><tr><td>x <table><tr><td>y</table> z</table>").css_first("td")
    assert node is not None
    assert cell_text(node) == "x y z"


# --- hidden cells ------------------------------------------------------------------------------


def test_hidden_cells_are_kept_by_default() -> None:
    # Default keeps what is in the DOM; the HTML table model ignores CSS.
    grid = grid_of(data_file("hidden_cells.html"))
    assert grid.texts() == [["a", "h", "b"], ["x", "y", "z"], ["c", "ds", "e"]]


def test_hidden_cells_rows_and_spans_are_dropped_with_drop_hidden() -> None:
    # CSS 2.1 §9.2.4: display:none generates no box, nor do its descendants. Dropping the
    # hidden td before forming the table shifts "b" into slot 1 (HTML §4.9.12.1 "cells" step).
    grid = grid_of(data_file("hidden_cells.html"), drop_hidden=True)
    assert grid.texts() == [["a", "b", ""], ["c", "d", "e"]]


def test_hidden_attribute_counts_as_hidden() -> None:
    # HTML §15.3.1 (rendering): the UA style sheet has [hidden] { display: none }.
    html = "<table><tr><td>a<td hidden>h<td>b<tr hidden><td>x</table>"
    assert texts_of(html, drop_hidden=True) == [["a", "b"]]


def test_hidden_row_group_is_dropped_with_drop_hidden() -> None:
    # CSS 2.1 §9.2.4: "descendant elements do not generate any boxes either" — the rows of a
    # display:none tbody are not laid out.
    html = '<table><tbody style="display:none"><tr><td>a</tbody><tbody><tr><td>b</tbody></table>'
    assert texts_of(html, drop_hidden=True) == [["b"]]


def test_hidden_rowspan_cell_leaves_its_slots_free() -> None:
    # Dropped before forming: the hidden cell covers nothing, so row 1's cell takes slot 0.
    html = '<table><tr><td style="display:none" rowspan="2">h<td>a<tr><td>b</table>'
    assert texts_of(html, drop_hidden=True) == [["a"], ["b"]]


# --- parser facts (HTML §13.2.6) ---------------------------------------------------------------


def test_implied_tbody() -> None:
    # HTML §13.2.6.4.9: a tr start tag in "in table" inserts an implied tbody.
    grid = grid_of("<table><tr><td>a<tr><td>b</table>")
    assert grid.row_groups == ["tbody", "tbody"]


def test_foster_parented_content_is_not_in_the_table() -> None:
    # HTML §13.2.6.1 (foster parenting): stray text and the div move before the table.
    html = data_file("foster_parenting.html")
    grid = grid_of(html)
    assert grid.texts() == [["a", "b"]]
    assert grid.caption is None
    body = LexborHTMLParser(html).body
    assert body is not None
    assert "stray text" in body.text()  # still on the page, just not in the table


def test_omitted_end_tags_give_two_rows() -> None:
    # HTML §13.2.6.4.9 / §13.2.6.4.14: <td>1<td>2<tr><td>3 → two rows (implied tbody, tr, /td).
    grid = grid_of(data_file("omitted_end_tags.html"))
    assert grid.texts() == [["1", "2"], ["3", ""]]
    assert grid.row_groups == ["tbody", "tbody"]


def test_row_texts_and_row_nodes_line_up() -> None:
    grid = grid_of('<table><tr id="r0"><td>a<td>b<tr id="r1"><td>c</table>')
    assert grid.row_texts(1) == ("c", "")
    assert [node.attributes.get("id") for node in grid.row_nodes] == ["r0", "r1"]


def test_downward_growing_cell_grows_one_row_at_a_time() -> None:
    # HTML §4.9.12.1: a rowspan=0 cell is placed with rowspan 1 and extended at the start of
    # each later row ("growing downward-growing cells", processing rows step 3). D (row 1,
    # colspan=2 rowspan=2) covers (1,2) while row 1 is processed, before A grows into it at
    # row 2, so D is the first cell in (1,2) and keeps it (REFERENCES §6.2 step 7, practice).
    # Worked by hand: row 0 = x A .; row 1 = D A(first) .; row 2 = D D(first) z.
    grid = grid_of(
        "<table><tbody><tr><td>x</td><td rowspan=0>A</td></tr>"
        "<tr><td colspan=2 rowspan=2>D</td></tr><tr><td>z</td></tr></tbody></table>"
    )
    assert grid.texts() == [["x", "A", ""], ["D", "A", ""], ["D", "D", "z"]]
    assert sorted(grid.overlaps) == [(1, 1), (1, 2)]
