"""Differential tests: our grid against ``pandas.read_html`` (lxml flavor) as a reference library.

Where the two table models agree (plain text, spans inside one row group) the span-expanded
texts must match cell for cell. Where they differ, a test pins both sides: what pandas does
(observed by running pandas 3.x with lxml — said so beside each pin) and what we do (worked from
the HTML spec). pandas' NaN (a padded short row) reads as "".
"""

from __future__ import annotations

import io
from typing import Any

import pandas as pd
import pytest
from selectolax.lexbor import LexborHTMLParser

from harvester.extract.grid import build_grid


def pandas_frames(html: str, width: int | None = None, **options: Any) -> list[pd.DataFrame]:
    """``pandas.read_html`` with no type conversion: every cell kept as its text."""
    if width is not None:
        options["converters"] = {x: str for x in range(width)}
    frames: list[pd.DataFrame] = pd.read_html(
        io.StringIO(html), flavor="lxml", keep_default_na=False, thousands=None, **options
    )
    return frames


def as_texts(frame: pd.DataFrame) -> list[list[str]]:
    return [["" if pd.isna(value) else str(value) for value in row] for row in frame.to_numpy()]


def pandas_rows(html: str, width: int | None = None, **options: Any) -> list[list[str]]:
    """The one table's rows (no thead in these inputs, so pandas keeps every row as data)."""
    frames = pandas_frames(html, width, header=None, **options)
    assert len(frames) == 1
    return as_texts(frames[0])


def our_texts(html: str, select: str = "table", *, drop_hidden: bool = False) -> list[list[str]]:
    node = LexborHTMLParser(html).css_first(select)
    assert node is not None
    return build_grid(node, drop_hidden=drop_hidden).texts()


# --- where the models agree -------------------------------------------------------------------

AGREEING = [
    # plain rows, one short row (pandas pads with NaN; HTML §4.9.12 has empty slots)
    "<table><tbody><tr><td>a</td><td>b</td><td>c</td></tr><tr><td>d</td></tr></tbody></table>",
    # colspan and rowspan inside one tbody (HTML §4.9.12.1 and pandas both expand in place)
    "<table><tbody>"
    '<tr><td>a</td><td colspan="2">b</td><td rowspan="3">c</td></tr>'
    '<tr><td rowspan="2">d</td><td>e</td><td>f</td></tr>'
    '<tr><td colspan="2">g</td></tr>'
    "</tbody></table>",
    # a rowspan that skips a slot in the middle of the next row
    "<table><tbody>"
    '<tr><td>a</td><td rowspan="2">b</td><td>c</td></tr>'
    "<tr><td>d</td><td>e</td></tr>"
    "</tbody></table>",
    # whitespace runs and an inline element (both collapse runs of ASCII whitespace)
    "<table><tbody><tr><td>  x \n y </td><td><b>bold</b> text</td></tr></tbody></table>",
    # <br> between words: pandas 3.x reads it as a space (observed), as we do
    "<table><tbody><tr><td>a<br>b</td><td>c</td></tr></tbody></table>",
    # a comment inside a cell: neither counts it as text (DOM textContent; lxml text_content)
    "<table><tbody><tr><td>p<!-- c -->q</td><td>r</td></tr></tbody></table>",
    # a comment between the cells of a plain row: neither counts it as a cell (HTML §4.9.12.1
    # "cells" takes td and th children only; lxml's row walk takes td and th elements)
    "<table><tbody><tr><td>1</td><!-- note --><td>2</td></tr></tbody></table>",
]


@pytest.mark.parametrize("html", AGREEING)
def test_grid_matches_pandas_span_expansion(html: str) -> None:
    ours = our_texts(html)
    width = len(ours[0])
    assert pandas_rows(html, width) == ours  # pandas.read_html


def test_header_and_body_match_pandas() -> None:
    html = (
        "<table><thead><tr><th>Player</th><th>Club</th><th>Pos</th></tr></thead><tbody>"
        '<tr><td>Vell</td><td rowspan="2">Ostra</td><td>W</td></tr>'
        "<tr><td>Orn</td><td>P</td></tr></tbody></table>"
    )
    ours = our_texts(html)
    (frame,) = pandas_frames(html, 3)
    assert [str(name) for name in frame.columns] == ours[0]  # pandas.read_html: thead → columns
    assert as_texts(frame) == ours[1:]


def test_tfoot_before_tbody_agrees() -> None:
    # Expected a difference; observed none: pandas also puts tfoot rows after the body (pandas
    # 3.x with lxml, observed). HTML §4.9.12.1 processes tfoot last.
    html = (
        "<table><thead><tr><th>H</th></tr></thead><tfoot><tr><td>F</td></tr></tfoot>"
        "<tbody><tr><td>B1</td></tr><tr><td>B2</td></tr></tbody></table>"
    )
    ours = our_texts(html)
    assert ours == [["H"], ["B1"], ["B2"], ["F"]]  # HTML §4.9.12.1
    (frame,) = pandas_frames(html, 1)
    assert [str(name) for name in frame.columns] == ["H"]  # observed
    assert as_texts(frame) == [["B1"], ["B2"], ["F"]]  # observed


# --- where they differ: each pin states both sides --------------------------------------------


def test_rowspan_zero_differs() -> None:
    html = (
        '<table><tbody><tr><td rowspan="0">a</td><td>b</td></tr><tr><td>c</td></tr></tbody>'
        "<tbody><tr><td>d</td><td>e</td></tr></tbody></table>"
    )
    # pandas reads rowspan="0" as 1 (observed): "c" moves into column 0.
    assert pandas_rows(html, 2) == [["a", "b"], ["c", ""], ["d", "e"]]
    # HTML §4.9.12.1: 0 grows to the end of the first tbody and stops there.
    assert our_texts(html) == [["a", "b"], ["a", "c"], ["d", "e"]]


def test_rowspan_across_tbody_boundary_differs() -> None:
    html = (
        '<table><tbody><tr><td>a</td><td rowspan="2">b</td></tr></tbody>'
        "<tbody><tr><td>c</td></tr></tbody></table>"
    )
    # pandas joins all tbody rows into one section, so the span enters the 2nd tbody (observed).
    assert pandas_rows(html, 2) == [["a", "b"], ["c", "b"]]
    # HTML §4.9.12: a cell cannot span two row groups (cut at the group end, CSS 2.1 §17.5).
    assert our_texts(html) == [["a", "b"], ["c", ""]]


def test_hidden_cells_differ_by_default() -> None:
    html = (
        '<table><tbody><tr><td>a</td><td style="display:none">h</td><td>b</td></tr></tbody></table>'
    )
    # pandas drops display:none elements by default, displayed_only=True (observed + documented).
    assert pandas_rows(html, 2) == [["a", "b"]]
    assert pandas_rows(html, 3, displayed_only=False) == [["a", "h", "b"]]  # observed
    # We keep DOM cells by default (the table model ignores CSS); drop_hidden matches pandas.
    assert our_texts(html) == [["a", "h", "b"]]
    assert our_texts(html, drop_hidden=True) == [["a", "b"]]


def test_nested_tables_differ() -> None:
    html = (
        '<table id="outer"><tbody><tr><td>o1 <table id="inner"><tr><td>i1</td><td>i2</td></tr>'
        "</table> o2</td><td>c</td></tr></tbody></table>"
    )
    # pandas (lxml) reads the outer cell's whole text content, inner table included, and also
    # counts the inner table's tr as a row of the outer table; then lists the inner table again
    # (observed).
    outer, inner = (as_texts(frame) for frame in pandas_frames(html, header=None))
    assert outer == [["o1 i1i2 o2", "c"], ["i1", "i2"]]
    assert inner == [["i1", "i2"]]
    # HTML §4.9.12.1 walks only the table's own rows; the nested table is its own table. The
    # outer cell's text is its text content (DOM textContent), so on that cell we agree.
    assert our_texts(html, "#outer") == [["o1 i1i2 o2", "c"]]
    assert our_texts(html, "#inner") == [["i1", "i2"]]


def test_colspan_above_1000_differs() -> None:
    html = '<table><tbody><tr><td colspan="5000">a</td><td>b</td></tr></tbody></table>'
    # pandas expands the full 5000 columns (observed).
    pandas_grid = pandas_rows(html)
    assert len(pandas_grid[0]) == 5001
    # HTML §4.9.12.1: colspan above 1000 is 1000.
    ours = our_texts(html)
    assert len(ours[0]) == 1001
    assert ours[0][999:] == ["a", "b"]


def test_colspan_zero_differs() -> None:
    html = '<table><tbody><tr><td colspan="0">a</td><td>b</td></tr></tbody></table>'
    # pandas repeats the text colspan times, so colspan="0" makes the cell vanish (observed).
    assert pandas_rows(html, 1) == [["b"]]
    # HTML §4.9.12.1: colspan 0 is 1.
    assert our_texts(html) == [["a", "b"]]


@pytest.mark.parametrize(("value", "width"), [("abc", 1), ("3px", 3)])
def test_non_numeric_spans_differ(value: str, width: int) -> None:
    html = f'<table><tbody><tr><td colspan="{value}">a</td><td>b</td></tr></tbody></table>'
    # pandas calls int() on the attribute and fails (observed: ValueError).
    with pytest.raises(ValueError, match="invalid literal"):
        pandas_frames(html, header=None)
    # HTML §2.3.4.2: "abc" is an error → 1; "3px" → 3.
    assert our_texts(html) == [["a"] * width + ["b"]]


def test_nbsp_differs() -> None:
    html = "<table><tbody><tr><td>x&nbsp;y</td><td>z</td></tr></tbody></table>"
    # pandas only collapses runs of 2+ whitespace, so a single U+00A0 stays (observed).
    assert pandas_rows(html, 2) == [["x\u00a0y", "z"]]
    # Ours collapses NBSP to a space (grid.cell_text; common practice, no published source).
    assert our_texts(html) == [["x y", "z"]]


def test_script_text_differs() -> None:
    html = "<table><tbody><tr><td>a</td><td>b<script>x</script></td></tr></tbody></table>"
    # lxml's text_content includes script text, and pandas keeps it (observed).
    assert pandas_rows(html, 2) == [["a", "bx"]]
    # Script text is never rendered; we leave it out (common practice, no published source).
    assert our_texts(html) == [["a", "b"]]


# --- the demo site's tables -------------------------------------------------------------------


def demo_page(path: str) -> str:
    from harvester.demo.league import build_league
    from harvester.demo.pages import render_page

    html = render_page(build_league(), path)
    assert html is not None
    return html


@pytest.mark.parametrize(
    ("path", "table_id"),
    [
        ("/seasons/2026/contracts.html", "contracts"),
        ("/seasons/2026/standings.html", "standings"),
    ],
)
def test_demo_tables_match_pandas(path: str, table_id: str) -> None:
    html = demo_page(path)
    ours = our_texts(html, f"#{table_id}")
    assert len(ours) > 2
    (frame,) = pandas_frames(html, len(ours[0]), attrs={"id": table_id})
    assert [str(name) for name in frame.columns] == ours[0]  # pandas.read_html: thead → columns
    assert as_texts(frame) == ours[1:]
