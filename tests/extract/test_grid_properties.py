"""Property tests for the table grid against HTML §4.9.12.1, on random small tables.

Random tables are generated as plain data (row groups of rows of cells), written out as
unambiguous markup, parsed, and formed into a grid. The checks are invariants of the spec, plus a
comparison with ``reference_grid`` below: a small, literal transcription of "forming a table"
(REFERENCES §6.2) that works on the generated data, not on the DOM, and shares no code with
harvester. The one project departure (a rowspan is cut at its row group's last row, CSS 2.1
§17.5) is applied in the reference at the one place the spec would otherwise raise yheight.
"""

from __future__ import annotations

import html
from dataclasses import dataclass

from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st
from selectolax.lexbor import LexborHTMLParser

from harvester.extract.grid import Cell, Grid, build_grid

# Derandomized so that a run is repeatable; example counts keep this file well under 20 s.
SETTINGS = settings(
    max_examples=150,
    deadline=None,
    derandomize=True,
    suppress_health_check=[HealthCheck.too_slow],
)

# How a span value is written in the attribute, and the value HTML §2.3.4.1 reads from it.
_SPAN_FORMATS = ("{}", " {}", "{}px", "+{}", "\t{}")


@dataclass(frozen=True)
class GenCell:
    tag: str  # "td" or "th"
    colspan: int | None  # None: attribute absent; -1: a value that is a parse error
    rowspan: int | None
    colspan_format: str
    rowspan_format: str
    text: str


@dataclass(frozen=True)
class GenGroup:
    kind: str  # "thead", "tbody" or "tfoot"
    rows: tuple[tuple[GenCell, ...], ...]


@dataclass(frozen=True)
class GenTable:
    colgroup_spans: tuple[int, ...]
    groups: tuple[GenGroup, ...]

    def cells(self) -> list[GenCell]:
        return [cell for group in self.groups for row in group.rows for cell in row]


# --- generation and rendering ----------------------------------------------------------------

_texts = st.text(alphabet="ab z\u00a0\t&<", max_size=5)
_spans = st.one_of(st.none(), st.integers(min_value=0, max_value=4), st.just(-1))


def _cells(spans: st.SearchStrategy[int | None]) -> st.SearchStrategy[GenCell]:
    return st.builds(
        GenCell,
        tag=st.sampled_from(("td", "th")),
        colspan=spans,
        rowspan=spans,
        colspan_format=st.sampled_from(_SPAN_FORMATS),
        rowspan_format=st.sampled_from(_SPAN_FORMATS),
        text=_texts,
    )


def _tables(spans: st.SearchStrategy[int | None]) -> st.SearchStrategy[GenTable]:
    row = st.lists(_cells(spans), max_size=4).map(tuple)
    group = st.builds(
        GenGroup,
        kind=st.sampled_from(("thead", "tbody", "tfoot")),
        rows=st.lists(row, max_size=4).map(tuple),
    )
    return st.builds(
        GenTable,
        colgroup_spans=st.lists(st.integers(min_value=0, max_value=3), max_size=2).map(tuple),
        groups=st.lists(group, min_size=1, max_size=3).map(tuple),
    )


tables = _tables(_spans)
plain_tables = _tables(st.none())


def _span_attribute(name: str, value: int | None, form: str) -> str:
    if value is None:
        return ""
    written = "abc" if value == -1 else form.format(value)
    return f' {name}="{written}"'


def render(table: GenTable) -> str:
    """The table as markup the HTML parser keeps as written (every end tag explicit)."""
    out = ["<table>"]
    for span in table.colgroup_spans:
        out.append(f'<colgroup span="{span}"></colgroup>')
    number = 0
    for group in table.groups:
        out.append(f"<{group.kind}>")
        for row in group.rows:
            out.append("<tr>")
            for cell in row:
                attributes = f' data-i="{number}"'
                attributes += _span_attribute("colspan", cell.colspan, cell.colspan_format)
                attributes += _span_attribute("rowspan", cell.rowspan, cell.rowspan_format)
                out.append(f"<{cell.tag}{attributes}>{html.escape(cell.text)}</{cell.tag}>")
                number += 1
            out.append("</tr>")
        out.append(f"</{group.kind}>")
    out.append("</table>")
    return "".join(out)


def formed(table: GenTable) -> Grid:
    node = LexborHTMLParser(render(table)).css_first("table")
    assert node is not None
    return build_grid(node)


def number_of(cell: Cell) -> int:
    """The generated cell a grid cell came from (its data-i attribute)."""
    return int(cell.node.attributes["data-i"] or "-1")


def expected_text(text: str) -> str:
    # Whitespace (NBSP included) collapsed and trimmed — grid.py's documented cell text rule.
    return " ".join(text.split())


# --- the spec's span rules, written out independently --------------------------------------------


def colspan_of(cell: GenCell) -> int:
    # HTML §4.9.12.1 step "colspan": absent, an error or 0 → 1 (values here are ≤ 4 < 1000).
    if cell.colspan is None or cell.colspan <= 0:
        return 1
    return cell.colspan


def rowspan_of(cell: GenCell) -> int:
    # HTML §4.9.12.1 step "rowspan": absent or an error → 1; 0 stays 0 ("grows downward").
    if cell.rowspan is None or cell.rowspan == -1:
        return 1
    return cell.rowspan


def colgroup_span(span: int) -> int:
    # HTML §4.9.12.1 "column groups": a span of 0 (or an error) → 1.
    return span if span > 0 else 1


def processing_order(table: GenTable) -> list[GenGroup]:
    # HTML §4.9.12.1: thead/tbody in tree order, every tfoot set aside and processed at the end.
    heads = [group for group in table.groups if group.kind != "tfoot"]
    return heads + [group for group in table.groups if group.kind == "tfoot"]


@dataclass
class Reference:
    width: int
    height: int
    slots: dict[tuple[int, int], list[int]]  # slot → generated cell numbers, in covering order
    kinds: list[str]


def reference_grid(table: GenTable) -> Reference:
    """A literal transcription of HTML §4.9.12.1 "forming a table" (with the cut departure)."""
    numbers: dict[int, int] = {}
    for number, cell in enumerate(table.cells()):
        numbers[id(cell)] = number
    xwidth = sum(colgroup_span(span) for span in table.colgroup_spans)
    yheight = 0
    ycurrent = 0
    slots: dict[tuple[int, int], list[int]] = {}
    downward: list[tuple[int, int, int]] = []  # the list of downward-growing cells
    kinds: list[str] = []

    def grow_downward_growing_cells() -> None:
        # "extend the cell so that it also covers the slots (x, ycurrent), cellx ≤ x < cellx+width"
        for number, cellx, width in downward:
            for x in range(cellx, cellx + width):
                slots.setdefault((x, ycurrent), []).append(number)

    def process_row(row: tuple[GenCell, ...], group_end: int) -> None:
        nonlocal xwidth, yheight, ycurrent
        if yheight == ycurrent:  # step 1
            yheight += 1
        xcurrent = 0  # step 2
        grow_downward_growing_cells()  # step 3
        if not row:  # step 4
            ycurrent += 1
            return
        for cell in row:
            while xcurrent < xwidth and (xcurrent, ycurrent) in slots:  # step "cells"
                xcurrent += 1
            if xcurrent == xwidth:
                xwidth += 1
            colspan = colspan_of(cell)
            rowspan = rowspan_of(cell)
            grows_downward = rowspan == 0
            if grows_downward:
                rowspan = 1
            # Departure (CSS 2.1 §17.5): never past the last row of the row group.
            rowspan = min(rowspan, group_end - ycurrent)
            xwidth = max(xwidth, xcurrent + colspan)
            yheight = max(yheight, ycurrent + rowspan)
            for x in range(xcurrent, xcurrent + colspan):
                for y in range(ycurrent, ycurrent + rowspan):
                    slots.setdefault((x, y), []).append(numbers[id(cell)])
            if grows_downward:
                downward.append((numbers[id(cell)], xcurrent, colspan))
            xcurrent += colspan
        ycurrent += 1

    def end_row_group() -> None:
        nonlocal ycurrent
        while ycurrent < yheight:
            grow_downward_growing_cells()
            ycurrent += 1
        downward.clear()

    for group in processing_order(table):
        group_end = yheight + len(group.rows)
        for row in group.rows:
            process_row(row, group_end)
            kinds.append(group.kind)
        end_row_group()
    return Reference(xwidth, yheight, slots, kinds)


def group_ranges(table: GenTable) -> dict[int, range]:
    """For every generated cell number, the grid rows of the row group it belongs to."""
    ranges: dict[int, range] = {}
    numbers = {id(cell): number for number, cell in enumerate(table.cells())}
    start = 0
    for group in processing_order(table):
        rows = range(start, start + len(group.rows))
        for row in group.rows:
            for cell in row:
                ranges[numbers[id(cell)]] = rows
        start += len(group.rows)
    return ranges


def covered_slots(grid: Grid) -> dict[int, list[tuple[int, int]]]:
    """For every cell in the grid (by generated number), the slots it holds."""
    held: dict[int, list[tuple[int, int]]] = {}
    for y, row in enumerate(grid.rows):
        for x, cell in enumerate(row):
            if cell is not None:
                held.setdefault(number_of(cell), []).append((x, y))
    return held


# --- properties ----------------------------------------------------------------------------------


@SETTINGS
@given(tables)
def test_every_row_has_width_slots(table: GenTable) -> None:
    # HTML §4.9.12: the grid is xwidth × yheight slots.
    grid = formed(table)
    assert all(len(row) == grid.width for row in grid.rows)
    assert all(len(row) == grid.width for row in grid.texts())


@SETTINGS
@given(tables)
def test_height_is_the_number_of_tr(table: GenTable) -> None:
    # HTML §4.9.12.1 "processing rows" adds one row per tr; spans never add rows (cut departure).
    grid = formed(table)
    assert grid.height == sum(len(group.rows) for group in table.groups)
    assert len(grid.row_groups) == grid.height
    assert grid.row_groups == [g.kind for g in processing_order(table) for _ in g.rows]


@SETTINGS
@given(tables)
def test_cells_cover_at_most_their_clamped_spans(table: GenTable) -> None:
    # HTML §4.9.12.1: a cell covers a colspan × rowspan rectangle from its anchor; slots lost
    # to an overlap only make it smaller. Every generated cell is anchored somewhere.
    grid = formed(table)
    generated = table.cells()
    held = covered_slots(grid)
    assert sorted(held) == list(range(len(generated)))
    ranges = group_ranges(table)
    for row in grid.rows:
        for cell in row:
            if cell is None:
                continue
            source = generated[number_of(cell)]
            assert cell.width == colspan_of(source)
            rows_left = ranges[number_of(cell)].stop - cell.y
            rowspan = rowspan_of(source)
            limit = rows_left if rowspan == 0 else min(rowspan, rows_left)
            assert 1 <= cell.height <= limit
            assert grid.rows[cell.y][cell.x] is cell  # the anchor slot is never contested
            for x, y in held[number_of(cell)]:
                assert cell.x <= x < cell.x + cell.width
                assert cell.y <= y < cell.y + cell.height
            assert cell.text == expected_text(source.text)
            assert cell.header == (source.tag == "th")


@SETTINGS
@given(tables)
def test_cells_stay_inside_their_row_group(table: GenTable) -> None:
    # HTML §4.9.12: "a cell cannot span two row groups".
    grid = formed(table)
    ranges = group_ranges(table)
    for number, slots in covered_slots(grid).items():
        assert all(y in ranges[number] for _, y in slots)


@SETTINGS
@given(tables)
def test_without_overlaps_slots_add_up(table: GenTable) -> None:
    # HTML §4.9.12.1: with no table model error, cells tile their rectangles exactly.
    grid = formed(table)
    if grid.overlaps:
        return
    cells = {id(cell): cell for row in grid.rows for cell in row if cell is not None}
    filled = sum(cell is not None for row in grid.rows for cell in row)
    assert filled == sum(cell.width * cell.height for cell in cells.values())


@SETTINGS
@given(plain_tables)
def test_plain_cells_give_the_row_texts_padded(table: GenTable) -> None:
    # HTML §4.9.12.1 with every span 1: row y holds the y-th tr's cells left to right.
    grid = formed(table)
    rows = [
        [expected_text(cell.text) for cell in row]
        for g in processing_order(table)
        for row in g.rows
    ]
    width = max([len(row) for row in rows] + [sum(colgroup_span(s) for s in table.colgroup_spans)])
    assert grid.width == width
    assert grid.texts() == [row + [""] * (width - len(row)) for row in rows]
    assert grid.overlaps == []


def _cell(text: str, colspan: int | None = None, rowspan: int | None = None) -> GenCell:
    return GenCell("td", colspan, rowspan, "{}", "{}", text)


# Worked by hand: A (rowspan=0) grows into (1,1) and (1,2) one row at a time (§4.9.12.1 "growing
# downward-growing cells" runs at the start of each row), but D (colspan=2 rowspan=2, placed
# while processing row 1) covers (1,2) before A grows into it at row 2 — so D is first there.
GROWTH_ORDER = GenTable(
    (),
    (
        GenGroup(
            "tbody",
            (
                (_cell("x"), _cell("A", rowspan=0)),
                (_cell("D", colspan=2, rowspan=2),),
                (_cell("z"),),
            ),
        ),
    ),
)


@SETTINGS
@given(tables)
@example(GROWTH_ORDER)
def test_grid_equals_the_literal_reference(table: GenTable) -> None:
    # HTML §4.9.12.1 transcribed literally (reference_grid); first cell to cover a slot keeps it
    # (REFERENCES §6.2 step 7, practice); every later cover of a taken slot is an overlap.
    grid = formed(table)
    reference = reference_grid(table)
    assert (grid.width, grid.height) == (reference.width, reference.height)
    assert grid.row_groups == reference.kinds
    owners = [[number_of(cell) if cell is not None else None for cell in row] for row in grid.rows]
    expected = [
        [
            reference.slots[(x, y)][0] if (x, y) in reference.slots else None
            for x in range(reference.width)
        ]
        for y in range(reference.height)
    ]
    assert owners == expected
    extra = sorted(
        slot for slot, covering in reference.slots.items() for _ in range(len(covering) - 1)
    )
    assert sorted(grid.overlaps) == extra
