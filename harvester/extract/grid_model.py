"""The grid the HTML table model yields: slots (x, y) and the ``td`` / ``th`` cells covering them.

:func:`harvester.extract.grid.build_grid` fills a :class:`Grid` by "forming a table"
(HTML §4.9.12.1); the header and value steps read it. ``(x, y)`` is a slot's column and row,
counted from 0 as in the spec; a cell is anchored at its top-left slot.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from selectolax.lexbor import LexborNode

from harvester.extract.cells import link_of

__all__ = ["Cell", "Grid"]


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
        return link_of(self.node)


class Grid:
    """A table's slots, stored as matrices so that large tables stay cheap.

    ``text_rows[y][x]`` is the text of the cell covering slot (x, y) ("" where no cell does).
    For rows that needed care (spans, ``th`` cells, slots taken from above), ``header_flags[y][x]``
    says whether the covering cell is a ``th`` and ``nodes[y][x]`` is its element, or None where
    no cell covers the slot. A *plain* row (only ``td`` cells, nothing spanning into it) keeps
    None in both: its cells are its ``td`` children in order, ``plain_widths[y]`` of them. This
    keeps one list per row instead of three plus one element handle per slot, which is most of
    the cost on large pages. Slots covered by a spanning cell map to the cell's anchor
    (top-left) slot in ``owners``. ``rows`` gives the same grid as Cell objects.
    """

    __slots__ = (
        "_cells",
        "caption",
        "header_flags",
        "nodes",
        "overlaps",
        "owners",
        "plain_widths",
        "row_groups",
        "row_nodes",
        "spans",
        "text_rows",
        "width",
    )

    def __init__(self, row_groups: list[str], row_nodes: list[LexborNode]) -> None:
        self.text_rows: list[list[str]] = []
        self.header_flags: list[list[bool] | None] = []
        self.nodes: list[list[LexborNode | None] | None] = []
        self.plain_widths: dict[int, int] = {}
        self.owners: dict[tuple[int, int], tuple[int, int]] = {}
        self.spans: dict[tuple[int, int], tuple[int, int]] = {}  # anchor → (width, height)
        self.width = 0
        self.row_groups = row_groups  # "thead", "tbody", "tfoot" or "" (tr directly in table)
        self.row_nodes = row_nodes
        self.caption: str | None = None
        self.overlaps: list[tuple[int, int]] = []
        self._cells: list[list[Cell | None]] | None = None

    @property
    def height(self) -> int:
        """Number of rows in the grid."""
        return len(self.text_rows)

    def has_cell(self, x: int, y: int) -> bool:
        """Whether a cell covers slot (x, y)."""
        nodes = self.nodes[y]
        if nodes is None:
            return x < self.plain_widths[y]
        return nodes[x] is not None

    def is_header(self, x: int, y: int) -> bool:
        """Whether the cell covering slot (x, y) is a ``th``."""
        header_flags = self.header_flags[y]
        return header_flags is not None and header_flags[x]

    def node(self, x: int, y: int) -> LexborNode | None:
        """The element of the cell covering slot (x, y), or None."""
        nodes = self.nodes[y]
        if nodes is not None:
            return nodes[x]
        if x >= self.plain_widths[y]:
            return None
        # A plain row's cells are its element children (comments are not cells).
        return [cell for cell in self.row_nodes[y].iter() if cell.is_element_node][x]

    def owner(self, x: int, y: int) -> tuple[int, int] | None:
        """The anchor slot of the cell covering (x, y), or None if no cell covers it."""
        if not self.has_cell(x, y):
            return None
        return self.owners.get((x, y), (x, y))

    def texts(self) -> list[list[str]]:
        """Every slot's text, a spanning cell's text repeated in each slot it covers."""
        return [list(row) for row in self.text_rows]

    def row_texts(self, y: int) -> tuple[str, ...]:
        """The texts of row ``y``, slot by slot."""
        return tuple(self.text_rows[y])

    def link(self, x: int, y: int) -> str | None:
        """The link target inside the cell covering (x, y), if any."""
        node = self.node(x, y)
        return link_of(node) if node is not None else None

    @property
    def rows(self) -> list[list[Cell | None]]:
        """The grid as Cell objects; a spanning cell is the same object in every slot it covers."""
        if self._cells is None:
            made: dict[tuple[int, int], Cell] = {}
            cells: list[list[Cell | None]] = []
            for y in range(self.height):
                row: list[Cell | None] = []
                for x in range(self.width):
                    node = self.node(x, y)
                    if node is None:
                        row.append(None)
                        continue
                    anchor = self.owners.get((x, y), (x, y))
                    cell = made.get(anchor)
                    if cell is None:
                        ax, ay = anchor
                        width, height = self.spans.get(anchor, (1, 1))
                        header = self.is_header(ax, ay)
                        cell = Cell(self.text_rows[ay][ax], header, ax, ay, width, height, node)
                        made[anchor] = cell
                    row.append(cell)
                cells.append(row)
            self._cells = cells
        return self._cells
