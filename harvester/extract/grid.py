"""Turn one HTML ``<table>`` element into a grid of slots, following the WHATWG table model.

The algorithm is "forming a table" (HTML §4.9.12.1): row groups in tree order with every
``tfoot`` processed last, ``colspan`` clamped to 1..1000, ``rowspan`` to 0..65534 where 0 means
"to the end of the row group", column groups widening the table, and overlapping cells kept as
the model places them (the first-placed cell keeps a contested slot; the overlap is recorded).

One deliberate departure: a rowspan that reaches past the last row of its row group is cut at
that row instead of adding rows to the table. Browsers do the same (CSS 2.1 §17.5: a cell box
cannot extend beyond the last row box of its row group), and it stops one attribute
(``rowspan="65534"``) from inflating a grid.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from dataclasses import dataclass, field

from selectolax.lexbor import LexborNode

__all__ = [
    "MAX_COLSPAN",
    "MAX_ROWSPAN",
    "Cell",
    "Grid",
    "build_grid",
    "cell_text",
    "is_hidden",
    "parse_span",
]

MAX_COLSPAN = 1000  # HTML §4.9.12.1 step "colspan": values above 1000 are treated as 1000
MAX_ROWSPAN = 65534  # HTML §4.9.12.1 step "rowspan": values above 65534 are treated as 65534
MAX_COL_SPAN_ATTR = 1000  # HTML §4.9.12.1 "column groups": span above 1000 is treated as 1000

_ROW_GROUPS = frozenset({"thead", "tbody", "tfoot"})
_CELL_TAGS = frozenset({"td", "th"})
# Elements whose text is not part of a cell's text: nested tables belong to themselves,
# and script/style/template hold no visible text.
_SKIPPED_TAGS = frozenset({"table", "script", "style", "template"})
_COMPLEX_SELECTOR = "br, table, script, style, template"
_DISPLAY_NONE = re.compile(r"display\s*:\s*none", re.IGNORECASE)
_LEADING_INT = re.compile(r"[\t\n\f\r ]*([+-]?)([0-9]+)")


@dataclass(slots=True, eq=False)
class Cell:
    """One ``td`` or ``th`` placed in the grid: its text and the slots it covers."""

    text: str
    header: bool
    x: int
    y: int
    width: int
    height: int
    node: LexborNode = field(repr=False)

    def link(self) -> str | None:
        """The ``href`` of the first link inside the cell, if any."""
        anchor = self.node.css_first("a[href]")
        if anchor is None:
            return None
        href = anchor.attributes.get("href")
        return href.strip() if href else None


@dataclass(slots=True)
class Grid:
    """A table's slots: ``rows[y][x]`` is the cell covering slot (x, y), or None."""

    rows: list[list[Cell | None]]
    width: int
    row_groups: list[str]  # "thead", "tbody", "tfoot" or "" (a tr directly under table)
    row_nodes: list[LexborNode]
    caption: str | None = None
    overlaps: list[tuple[int, int]] = field(default_factory=list)

    @property
    def height(self) -> int:
        """Number of rows in the grid."""
        return len(self.rows)

    def texts(self) -> list[list[str]]:
        """Every slot's text, a spanning cell's text repeated in each slot it covers."""
        return [[cell.text if cell is not None else "" for cell in row] for row in self.rows]

    def row_texts(self, y: int) -> tuple[str, ...]:
        """The texts of row ``y``, slot by slot."""
        return tuple(cell.text if cell is not None else "" for cell in self.rows[y])


def parse_span(value: str | None, default: int, minimum: int, maximum: int) -> int:
    """Parse a span attribute as HTML's "rules for parsing non-negative integers" (§2.3.4.2).

    Leading ASCII whitespace is skipped and digits are read up to the first non-digit, so
    ``"3px"`` is 3. A missing value, a parse error or a result below ``minimum`` gives
    ``default``; a result above ``maximum`` gives ``maximum``.
    """
    if value is None:
        return default
    match = _LEADING_INT.match(value)
    if match is None:
        return default
    sign, digits = match.groups()
    number = int(digits)
    if sign == "-" and number != 0:
        return default  # §2.3.4.2: a negative value is an error
    if number < minimum:
        return default
    return min(number, maximum)


def is_hidden(node: LexborNode) -> bool:
    """True if the element is hidden by an inline ``display: none`` or the ``hidden`` attribute."""
    attributes = node.attributes
    if "hidden" in attributes:
        return True
    style = attributes.get("style")
    return bool(style) and _DISPLAY_NONE.search(style or "") is not None


def cell_text(node: LexborNode, *, drop_hidden: bool = False) -> str:
    """A cell's text content, ``<br>`` read as a space, whitespace (NBSP too) collapsed.

    Text inside nested tables, scripts, styles and templates is left out; with
    ``drop_hidden``, so is text inside elements hidden by inline ``display: none``.
    """
    parts: list[str] = []
    _collect_text(node, parts, drop_hidden)
    return " ".join("".join(parts).split())


def _collect_text(node: LexborNode, parts: list[str], drop_hidden: bool) -> None:
    child = node.child
    while child is not None:
        if child.is_text_node:
            parts.append(child.text_content or "")
        elif child.is_element_node:
            tag = child.tag
            if tag == "br":
                parts.append(" ")
            elif tag not in _SKIPPED_TAGS and not (drop_hidden and is_hidden(child)):
                _collect_text(child, parts, drop_hidden)
        child = child.next


def build_grid(table: LexborNode, *, drop_hidden: bool = False) -> Grid:
    """Form the grid of ``table`` as HTML §4.9.12.1 does (with the row-group cut above).

    With ``drop_hidden``, rows and cells hidden by inline ``display: none`` (or ``hidden``)
    are left out before the grid is formed, as a browser leaves them out of its layout.
    """
    builder = _GridBuilder(table, drop_hidden)
    return builder.build()


class _GridBuilder:
    """The state of one run of the table-forming algorithm."""

    def __init__(self, table: LexborNode, drop_hidden: bool) -> None:
        self.table = table
        self.drop_hidden = drop_hidden
        self.rows: list[list[Cell | None]] = []
        self.row_groups: list[str] = []
        self.row_nodes: list[LexborNode] = []
        self.width = 0
        self.overlaps: list[tuple[int, int]] = []
        # Looked up once for the whole table, so that the common cell (no spans, plain
        # text) costs no attribute parsing and no tree walk.
        self.spanning = {
            node.mem_id for node in table.css("td[colspan], th[colspan], td[rowspan], th[rowspan]")
        }
        self.complex = self._cells_containing(table.css(_COMPLEX_SELECTOR))
        self.hidden: set[int] = set()
        if drop_hidden:
            hidden_nodes = [node for node in table.css("[style], [hidden]") if is_hidden(node)]
            self.hidden = {node.mem_id for node in hidden_nodes}
            self.complex |= self._cells_containing(hidden_nodes)

    def build(self) -> Grid:
        caption: str | None = None
        groups: list[tuple[str, list[LexborNode]]] = []
        footers: list[tuple[str, list[LexborNode]]] = []
        bare_rows: list[LexborNode] = []
        seen_rows = False
        for child in self.table.iter():
            tag = child.tag
            if tag == "caption" and caption is None:
                caption = cell_text(child)
            elif tag == "colgroup" and not seen_rows:
                # §4.9.12.1: only column groups before the first row or row group count.
                self.width += self._colgroup_width(child)
            elif tag == "tr":
                seen_rows = True
                bare_rows.append(child)
            elif tag in _ROW_GROUPS:
                seen_rows = True
                if bare_rows:
                    groups.append(("", bare_rows))
                    bare_rows = []
                target = footers if tag == "tfoot" else groups
                target.append((tag, [row for row in child.iter() if row.tag == "tr"]))
        if bare_rows:
            groups.append(("", bare_rows))
        for kind, rows in groups + footers:  # §4.9.12.1: every tfoot is processed last
            self._process_row_group(kind, rows)
        for row in self.rows:
            if len(row) < self.width:
                row.extend([None] * (self.width - len(row)))
        return Grid(
            rows=self.rows,
            width=self.width,
            row_groups=self.row_groups,
            row_nodes=self.row_nodes,
            caption=caption,
            overlaps=self.overlaps,
        )

    def _cells_containing(self, nodes: list[LexborNode]) -> set[int]:
        """The mem_ids of the cells (of any table) that contain one of ``nodes``."""
        found: set[int] = set()
        for node in nodes:
            parent = node.parent
            while parent is not None and parent.tag not in _CELL_TAGS:
                parent = parent.parent
            if parent is not None:
                found.add(parent.mem_id)
        return found

    def _colgroup_width(self, colgroup: LexborNode) -> int:
        cols = [col for col in colgroup.iter() if col.tag == "col"]
        if not cols:
            return parse_span(colgroup.attributes.get("span"), 1, 1, MAX_COL_SPAN_ATTR)
        return sum(parse_span(col.attributes.get("span"), 1, 1, MAX_COL_SPAN_ATTR) for col in cols)

    def _visible(self, nodes: Iterator[LexborNode] | list[LexborNode]) -> list[LexborNode]:
        if not self.hidden:
            return list(nodes)
        return [node for node in nodes if node.mem_id not in self.hidden]

    def _process_row_group(self, kind: str, rows: list[LexborNode]) -> None:
        rows = self._visible(rows)
        group_end = len(self.row_nodes) + len(rows)
        for tr in rows:
            y = len(self.row_nodes)
            if y == len(self.rows):  # rows below may already exist, made by a rowspan above
                self.rows.append([])
            self.row_groups.append(kind)
            self.row_nodes.append(tr)
            cells = [cell for cell in tr.iter() if cell.tag in _CELL_TAGS]
            self._process_row(y, self._visible(cells), group_end)

    def _process_row(self, y: int, cells: list[LexborNode], group_end: int) -> None:
        row = self.rows[y]
        x = 0
        for node in cells:
            while x < len(row) and row[x] is not None:
                x += 1
            width = height = 1
            if node.mem_id in self.spanning:
                attributes = node.attributes
                width = parse_span(attributes.get("colspan"), 1, 1, MAX_COLSPAN)
                rowspan = parse_span(attributes.get("rowspan"), 1, 0, MAX_ROWSPAN)
                # rowspan 0 grows to the end of the row group; longer spans are cut there.
                height = group_end - y if rowspan == 0 else min(rowspan, group_end - y)
            if node.mem_id in self.complex:
                text = cell_text(node, drop_hidden=self.drop_hidden)
            else:
                text = " ".join(node.text_lexbor().split())
            cell = Cell(text, node.tag == "th", x, y, width, height, node)
            if width == 1 and height == 1:
                self._place_single(row, x, cell)
            else:
                self._place(cell)
            x += width
            if x > self.width:
                self.width = x

    def _place_single(self, row: list[Cell | None], x: int, cell: Cell) -> None:
        if x == len(row):
            row.append(cell)
            return
        if x > len(row):
            row.extend([None] * (x - len(row)))
            row.append(cell)
            return
        if row[x] is None:
            row[x] = cell
        else:
            self.overlaps.append((x, cell.y))

    def _place(self, cell: Cell) -> None:
        for y in range(cell.y, cell.y + cell.height):
            while len(self.rows) <= y:
                self.rows.append([])
            row = self.rows[y]
            end = cell.x + cell.width
            if len(row) < end:
                row.extend([None] * (end - len(row)))
            for x in range(cell.x, end):
                if row[x] is None:
                    row[x] = cell
                else:
                    # §4.9.12.1: "those slots now have two cells overlapping" — the cell
                    # placed first keeps the slot.
                    self.overlaps.append((x, y))
