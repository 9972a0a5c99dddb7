"""The fast path: a plain table's grid read by the compiled reader, straight from the page bytes.

:func:`plain_grid` finds the located table's start tag in the page (the compiled scanner lists
every ``<table`` start tag the HTML tokenizer sees, in document order, and the page's DOM must
hold exactly as many tables, the located one with the same attributes), then lets the compiled
reader form its grid. It returns None — and the caller uses :func:`grid.build_grid`, the
reference — whenever the reader cannot be sure: a table that is not plain (see
``_plaintable.c``), a table from a comment, a page whose markup the scanner does not follow, a
grid over the slot budget (the DOM path then raises the error), or no extension at all.
"""

from __future__ import annotations

import weakref
from dataclasses import dataclass
from types import ModuleType

from selectolax.lexbor import LexborHTMLParser

from harvester.extract.fastpath import fast_module
from harvester.extract.grid_model import Cell, Grid
from harvester.extract.locate import LocatedTable, Page

__all__ = ["PlainGrid", "plain_grid"]


class PlainGrid(Grid):
    """A grid formed by the compiled reader: no element handles, links kept per slot.

    ``covered[y]`` is the number of leading slots cells cover in row ``y``, or a flag per slot
    where a gap comes before a covered slot; ``links`` maps a slot to the raw ``href`` of its
    cell's first link (``cells.link_of`` strips it the same way).
    """

    __slots__ = ("covered", "links")

    def __init__(self) -> None:
        super().__init__([], [])
        self.covered: list[int | list[bool]] = []
        self.links: dict[tuple[int, int], str] = {}

    def has_cell(self, x: int, y: int) -> bool:
        covered = self.covered[y]
        return x < covered if isinstance(covered, int) else covered[x]

    def node(self, x: int, y: int) -> None:
        return None

    def link(self, x: int, y: int) -> str | None:
        href = self.links.get((x, y))
        return href.strip() if href else None

    @property
    def rows(self) -> list[list[Cell | None]]:
        raise TypeError("a grid from the fast path has no element handles; use the DOM path")


@dataclass
class _PageTables:
    """What the fast path knows of one page: its bytes and the offsets of its tables."""

    data: bytes
    offsets: list[int] | None  # None: the scanner could not follow the page
    table_ids: list[int]  # mem_id of each table of the DOM, in document order


_PAGES: weakref.WeakKeyDictionary[Page, _PageTables | None] = weakref.WeakKeyDictionary()
_NOSCRIPT_RAW: bool | None = None


def _noscript_is_raw_text() -> bool:
    """Whether lexbor reads noscript content as raw text (scripting on) or as markup."""
    global _NOSCRIPT_RAW
    if _NOSCRIPT_RAW is None:
        probe = LexborHTMLParser("<body><noscript><table></table></noscript>")
        _NOSCRIPT_RAW = not probe.css("table")
    return _NOSCRIPT_RAW


def _page_tables(page: Page, module: ModuleType) -> _PageTables | None:
    if page in _PAGES:
        return _PAGES[page]
    html = page.html
    state: _PageTables | None = None
    try:
        data = html if isinstance(html, bytes) else html.encode("utf-8")
    except UnicodeEncodeError:  # lone surrogates: the DOM path reads them
        data = None
    if data is not None:
        offsets = module.scan_tables(data, _noscript_is_raw_text())
        table_ids = [node.mem_id for node in page.document.css("table")]
        state = _PageTables(data, offsets, table_ids)
    _PAGES[page] = state
    return state


def plain_grid(
    page: Page, located: LocatedTable, *, drop_hidden: bool, max_slots: int
) -> Grid | None:
    """The grid of ``located`` read by the compiled reader, or None for the DOM path."""
    module = fast_module()
    if module is None or located.in_comment:
        return None
    tables = _page_tables(page, module)
    if tables is None or tables.offsets is None:
        return None
    if len(tables.offsets) != len(tables.table_ids):
        return None  # the scanner and the parser disagree about the page: trust the parser
    try:
        position = tables.table_ids.index(located.node.mem_id)
    except ValueError:
        return None
    found = module.read_table(tables.data, tables.offsets[position], max_slots, drop_hidden)
    if found is None or found == -1:
        return None
    attributes, caption, width, groups, texts, headers, covered, owners, spans, overlaps, links = (
        found
    )
    dom_attributes = {name: value or "" for name, value in located.node.attributes.items()}
    if attributes != dom_attributes:
        return None  # not the table the parser made from this start tag
    grid = PlainGrid()
    grid.caption = caption
    grid.width = width
    grid.row_groups = groups
    grid.text_rows = texts
    grid.header_flags = headers
    grid.nodes = [None] * len(texts)
    grid.covered = covered
    grid.owners = owners
    grid.spans = spans
    grid.overlaps = [(-1, -1)] * overlaps  # counted, not placed: extraction reports the count
    grid.links = links
    return grid
