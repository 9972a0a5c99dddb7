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

from selectolax.lexbor import LexborNode

from harvester.errors import ExtractError
from harvester.extract.cells import (
    MAX_COLGROUP_SPAN,
    MAX_COLSPAN,
    MAX_ROWSPAN,
    cell_text,
    collapsed,
    is_hidden,
    link_of,
    parse_span,
)
from harvester.extract.grid_model import Cell, Grid

# The cell-level rules (cells.py) and the result types (grid_model.py) are re-exported here for
# callers of the grid.
__all__ = [
    "MAX_COLSPAN",
    "MAX_GRID_SLOTS",
    "MAX_ROWSPAN",
    "Cell",
    "Grid",
    "build_grid",
    "cell_text",
    "is_hidden",
    "link_of",
    "parse_span",
]


# The most slots (columns × rows) one grid may have. A real statistics table has a few hundred
# thousand; at about 100 bytes a slot, 10 million is about a gigabyte. Without a budget one
# attribute per row (colspan="1000" on 20,000 rows, which is under 1 MB of HTML) asks for 20
# million slots and gigabytes of memory [project decision].
MAX_GRID_SLOTS = 10_000_000
_BUDGET_HINT = (
    "check that the selector names the table you want; a table this large is likely broken or "
    "hostile. To read it anyway, pass a larger max_grid_slots to extract_table"
)

_ROW_GROUPS = frozenset({"thead", "tbody", "tfoot"})
_CELL_TAGS = frozenset({"td", "th"})
# Inside a cell, these make its text need cell_text: br reads as a space, a nested table's
# text is walked (its scripts left out too), and scripts, styles and templates are left out.
_CAREFUL_TEXT_TAGS = frozenset({"br", "table", "script", "style", "template"})
# th cells and stray children of tr (script, form) are both "tr > :not(td)".
_CAREFUL_SELECTOR = "td[colspan], td[rowspan], br, table, script, style, template, tr > :not(td)"


def build_grid(
    table: LexborNode,
    *,
    drop_hidden: bool = False,
    max_slots: int = MAX_GRID_SLOTS,
    where: str = "table",
) -> Grid:
    """Form the grid of ``table`` as HTML §4.9.12.1 does (with the row-group cut above).

    With ``drop_hidden``, rows and cells hidden by inline ``display: none`` (or ``hidden``)
    are left out before the grid is formed, as a browser leaves them out of its layout.
    Raises ExtractError, naming ``where`` and the row or span at fault, before the grid
    would grow past ``max_slots`` slots (columns × rows).
    """
    return _GridBuilder(table, drop_hidden, max_slots, where).build()


def _parents(nodes: list[LexborNode]) -> set[int]:
    return {parent.mem_id for node in nodes if (parent := node.parent) is not None}


class _GridBuilder:
    """The state of one run of the table-forming algorithm."""

    def __init__(self, table: LexborNode, drop_hidden: bool, max_slots: int, where: str) -> None:
        self.table = table
        self.drop_hidden = drop_hidden
        self.max_slots = max_slots
        self.where = where
        self.total_rows = 0  # known before any slot is made: every row a row group holds
        self.grid = Grid([], [])
        # Each downward-growing cell: its element, text, th flag, anchor slot and width.
        self.growing: list[tuple[LexborNode, str, bool, tuple[int, int], int]] = []
        # One selector pass over the whole table finds everything that needs care, so that a
        # plain row (td cells only, no spans, plain text) is read with one comprehension.
        spanning: list[LexborNode] = []
        careful_text_parts: list[LexborNode] = []
        careful_rows: set[int] = set()
        for node in table.css(_CAREFUL_SELECTOR):
            tag = node.tag
            if tag in _CELL_TAGS:
                attributes = node.attributes
                if "colspan" in attributes or "rowspan" in attributes:
                    spanning.append(node)
                if tag == "th" and (parent := node.parent) is not None:
                    careful_rows.add(parent.mem_id)
            elif (parent := node.parent) is not None and parent.tag == "tr":
                # A script or form among the cells: checked before the text tags, since a
                # script here is no cell at all (§4.9.12.1 "cells"), not text inside one.
                careful_rows.add(parent.mem_id)
            elif tag in _CAREFUL_TEXT_TAGS:
                careful_text_parts.append(node)
        # Element handles are new Python objects on every access; their mem_id names the element.
        self.spanning_ids = {node.mem_id for node in spanning}
        careful_text_cells = self._cells_containing(careful_text_parts)
        self.hidden_ids: set[int] = set()
        if drop_hidden:
            hidden_nodes = [node for node in table.css("[style], [hidden]") if is_hidden(node)]
            self.hidden_ids = {node.mem_id for node in hidden_nodes}
            careful_text_cells += self._cells_containing(hidden_nodes)
            careful_rows |= _parents(hidden_nodes)
        self.careful_text_ids = {node.mem_id for node in careful_text_cells}
        self.careful_row_ids = careful_rows | _parents(spanning) | _parents(careful_text_cells)

    def build(self) -> Grid:
        """Run the algorithm once: row groups in processing order, then short rows padded."""
        groups = self._row_groups()
        if self.hidden_ids:
            groups = [
                (kind, [row for row in rows if row.mem_id not in self.hidden_ids])
                for kind, rows in groups
            ]
        # Rowspans are cut at their row group's end, so the grid has exactly these rows, and
        # every row is padded to the full width: the slot count is width × rows, known early.
        self.total_rows = sum(len(rows) for _, rows in groups)
        if self.grid.width:
            self._check_budget(self.grid.width, "the column groups (colgroup and col spans)")
        for kind, rows in groups:
            self._process_row_group(kind, rows)
        self._pad_short_rows()
        return self.grid

    def _row_groups(self) -> list[tuple[str, list[LexborNode]]]:
        """The table's row groups in processing order; caption and column groups on the way.

        A run of ``tr`` children directly in the table is one group of kind "". Every
        ``tfoot`` comes last (§4.9.12.1).
        """
        grid = self.grid
        groups: list[tuple[str, list[LexborNode]]] = []
        footers: list[tuple[str, list[LexborNode]]] = []
        bare_rows: list[LexborNode] = []
        seen_rows = False
        for child in self.table.iter():
            tag = child.tag
            if tag == "caption" and grid.caption is None:
                grid.caption = cell_text(child)
            elif tag == "colgroup" and not seen_rows:
                # §4.9.12.1: only column groups before the first row or row group count.
                grid.width += self._colgroup_width(child)
            elif tag == "tr":
                seen_rows = True
                bare_rows.append(child)
            elif tag in _ROW_GROUPS:
                seen_rows = True
                if bare_rows:
                    groups.append(("", bare_rows))
                    bare_rows = []
                if self.drop_hidden and is_hidden(child):
                    continue  # CSS 2.1 §9.2.4: nothing inside a display:none box is shown
                target = footers if tag == "tfoot" else groups
                target.append((tag, [row for row in child.iter() if row.tag == "tr"]))
        if bare_rows:
            groups.append(("", bare_rows))
        return groups + footers

    def _pad_short_rows(self) -> None:
        """Give every row the table's width: slots no cell covers are empty."""
        grid = self.grid
        for y, texts in enumerate(grid.text_rows):
            missing = grid.width - len(texts)
            if missing <= 0:
                continue
            texts.extend([""] * missing)
            header_flags, nodes = grid.header_flags[y], grid.nodes[y]
            if header_flags is not None and nodes is not None:  # plain rows keep neither
                header_flags.extend([False] * missing)
                nodes.extend([None] * missing)

    def _cells_containing(self, nodes: list[LexborNode]) -> list[LexborNode]:
        """The cells (of any table) that contain one of ``nodes``."""
        found: dict[int, LexborNode] = {}
        for node in nodes:
            parent = node.parent
            while parent is not None and parent.tag not in _CELL_TAGS:
                parent = parent.parent
            if parent is not None:
                found[parent.mem_id] = parent
        return list(found.values())

    def _colgroup_width(self, colgroup: LexborNode) -> int:
        cols = [col for col in colgroup.iter() if col.tag == "col"]
        if not cols:
            return parse_span(colgroup.attributes.get("span"), 1, 1, MAX_COLGROUP_SPAN)
        return sum(parse_span(col.attributes.get("span"), 1, 1, MAX_COLGROUP_SPAN) for col in cols)

    def _process_row_group(self, kind: str, rows: list[LexborNode]) -> None:
        grid = self.grid
        group_end = len(grid.row_nodes) + len(rows)
        for tr in rows:
            y = len(grid.row_nodes)
            grid.row_groups.append(kind)
            grid.row_nodes.append(tr)
            if self.growing:
                self._grow(y)
            if y == len(grid.text_rows):
                if tr.mem_id not in self.careful_row_ids:
                    # A plain row: td cells only, no spans, no slot taken from above.
                    # Only element children are cells: iter() also yields comments (HTML
                    # §4.9.12.1 "cells" walks td and th children; a plain row has no th).
                    texts = collapsed(
                        [cell.text_lexbor() for cell in tr.iter() if cell.is_element_node]
                    )
                    grid.text_rows.append(texts)
                    grid.header_flags.append(None)
                    grid.nodes.append(None)
                    grid.plain_widths[y] = len(texts)
                    if len(texts) > grid.width:
                        self._check_budget(len(texts), f"grid row {y + 1} ({len(texts):,} cells)")
                        grid.width = len(texts)
                    continue
                self._add_row()
            cells = [cell for cell in tr.iter() if cell.tag in _CELL_TAGS]
            if self.hidden_ids:
                cells = [cell for cell in cells if cell.mem_id not in self.hidden_ids]
            self._process_row(y, cells, group_end)
        self.growing.clear()  # §4.9.12.1 "ending a row group"

    def _add_row(self) -> None:
        self.grid.text_rows.append([])
        self.grid.header_flags.append([])
        self.grid.nodes.append([])

    def _grow(self, y: int) -> None:
        """§4.9.12.1 "growing downward-growing cells": extend each into row ``y``."""
        while len(self.grid.text_rows) <= y:
            self._add_row()
        for node, text, header, anchor, width in self.growing:
            self._claim(node, text, header, anchor, width, y)

    def _process_row(self, y: int, cells: list[LexborNode], group_end: int) -> None:
        grid = self.grid
        texts, header_flags, nodes = grid.text_rows[y], grid.header_flags[y], grid.nodes[y]
        assert header_flags is not None and nodes is not None  # careful rows keep both
        x = 0
        for node in cells:
            while x < len(nodes) and nodes[x] is not None:
                x += 1
            width = height = 1
            grows = False
            mem_id = node.mem_id
            if mem_id in self.spanning_ids:
                attributes = node.attributes
                width = parse_span(attributes.get("colspan"), 1, 1, MAX_COLSPAN)
                rowspan = parse_span(attributes.get("rowspan"), 1, 0, MAX_ROWSPAN)
                # rowspan 0 grows row by row to the end of the row group; longer spans are
                # cut at that end (our one departure, see the module docstring).
                grows = rowspan == 0
                height = group_end - y if grows else min(rowspan, group_end - y)
            if mem_id in self.careful_text_ids:
                text = cell_text(node, drop_hidden=self.drop_hidden)
            else:
                text = " ".join(node.text_lexbor().split())
            header = node.tag == "th"
            if width == 1 and height == 1:
                # The common cell, claimed inline: this loop runs once per cell.
                if x == len(nodes):
                    texts.append(text)
                    header_flags.append(header)
                    nodes.append(node)
                elif nodes[x] is None:  # a gap left by a wider cell overlapping this row
                    texts[x], header_flags[x], nodes[x] = text, header, node
                else:
                    grid.overlaps.append((x, y))
                x += 1
                if x > grid.width:
                    self._check_budget(x, f"grid row {y + 1} (its cell {x:,})")
                    grid.width = x
                continue
            if x + width > grid.width:
                self._check_budget(x + width, _describe_span(node, x, y))
            # One anchor tuple per cell, shared by every slot it covers in every row: on a
            # grid of spans the owners map holds millions of them.
            anchor = (x, y)
            grid.spans[anchor] = (width, height)
            for row_y in range(y, y + (1 if grows else height)):
                self._claim(node, text, header, anchor, width, row_y)
            if grows and height > 1:
                self.growing.append((node, text, header, anchor, width))
            x += width
            grid.width = max(grid.width, x)

    def _check_budget(self, width: int, culprit: str) -> None:
        """Stop before a grid ``width`` columns wide would pass the slot budget."""
        slots = width * self.total_rows
        if slots > self.max_slots:
            raise ExtractError(
                f"{self.where}: the grid would have {slots:,} slots ({width:,} columns × "
                f"{self.total_rows:,} rows), over the budget of {self.max_slots:,}; "
                f"{culprit} passed it",
                hint=_BUDGET_HINT,
            )

    def _claim(
        self,
        node: LexborNode,
        text: str,
        header: bool,
        anchor: tuple[int, int],
        width: int,
        row_y: int,
    ) -> None:
        """Let the cell anchored at ``anchor`` (x, y) cover its slots in row ``row_y``."""
        grid = self.grid
        x = anchor[0]
        while len(grid.text_rows) <= row_y:
            self._add_row()
        end = x + width
        texts, header_flags, nodes = (
            grid.text_rows[row_y],
            grid.header_flags[row_y],
            grid.nodes[row_y],
        )
        assert header_flags is not None and nodes is not None  # rows with spans are careful rows
        missing = end - len(nodes)
        if missing > 0:
            texts.extend([""] * missing)
            header_flags.extend([False] * missing)
            nodes.extend([None] * missing)
        for slot_x in range(x, end):
            if nodes[slot_x] is not None:
                # §4.9.12.1: "those slots now have two cells overlapping" — the cell placed
                # first keeps the slot.
                grid.overlaps.append((slot_x, row_y))
                continue
            texts[slot_x] = text
            header_flags[slot_x] = header
            nodes[slot_x] = node
            grid.owners[(slot_x, row_y)] = anchor


def _describe_span(node: LexborNode, x: int, y: int) -> str:
    """The spanning cell at (x, y) as an error names it: where it is and what it says."""
    attributes = node.attributes
    spans = " ".join(
        f'{name}="{value[:20]}{"…" if len(value) > 20 else ""}"'
        for name in ("colspan", "rowspan")
        if (value := attributes.get(name)) is not None
    )
    return f"the {node.tag} at grid row {y + 1}, column {x + 1} ({spans})"
