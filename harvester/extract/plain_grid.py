"""The fast path: a plain table's grid read by the compiled reader, straight from the page bytes.

:func:`plain_grid` finds the located table's start tag in the page (the compiled scanner lists
every ``<table`` start tag the HTML tokenizer sees, in document order, and the page's DOM must
hold exactly as many tables, the located one with the same attributes), then lets the compiled
reader form its grid. It returns None — and the caller uses :func:`grid.build_grid`, the
reference — whenever the reader cannot be sure: a table that is not plain (see
``_plaintable_c/cells.c``), a page whose markup the scanner does not follow, a
grid over the slot budget (the DOM path then raises the error), or no extension at all.

:func:`parsed_page` keeps large plain tables out of lexbor's DOM (about 23 times the page's
size): the page is parsed with those tables' content left out — the start and end tags stay, so
selectors find the same tables — and the fast path reads them from the page's own bytes.
Leaving out a plain table's content changes nothing else in the parse: such content holds no
text outside cells, no comments, no tables and no open formatting elements past its cells.
Whatever needs a hollowed table's DOM (the DOM path, an error's listing, a selector that looks
at content) gets it from :meth:`Page.full`, which parses the whole page.
"""

from __future__ import annotations

import weakref
from dataclasses import dataclass
from types import ModuleType

from selectolax.lexbor import LexborHTMLParser

from harvester.extract.cells import clean_href
from harvester.extract.fastpath import fast_module
from harvester.extract.grid_model import Cell, Grid
from harvester.extract.locate import LocatedTable, Page

__all__ = ["HOLLOW_MIN_CONTENT", "PlainGrid", "parsed_page", "plain_grid"]

# A plain table whose content is at least this many bytes is left out of the page's DOM.
HOLLOW_MIN_CONTENT = 64 * 1024


class PlainGrid(Grid):
    """A grid formed by the compiled reader: no element handles, links kept per slot.

    ``covered[y]`` is the number of leading slots cells cover in row ``y``, or a flag per slot
    where a gap comes before a covered slot; ``links`` maps a slot to the raw ``href`` of its
    cell's first link (cleaned by ``cells.clean_href``, as ``cells.link_of`` does).
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
        return clean_href(self.links.get((x, y)))

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
# The same for the page parsed again with its table-holding comments opened (Page.uncommented).
_OPENED: weakref.WeakKeyDictionary[Page, _PageTables | None] = weakref.WeakKeyDictionary()
_NOSCRIPT_RAW: bool | None = None


def _noscript_is_raw_text() -> bool:
    """Whether lexbor reads noscript content as raw text (scripting on) or as markup."""
    global _NOSCRIPT_RAW
    if _NOSCRIPT_RAW is None:
        probe = LexborHTMLParser("<body><noscript><table></table></noscript>")
        _NOSCRIPT_RAW = not probe.css("table")
    return _NOSCRIPT_RAW


def _page_tables(page: Page, module: ModuleType, in_comment: bool) -> _PageTables | None:
    known = _OPENED if in_comment else _PAGES
    if page in known:
        return known[page]
    state: _PageTables | None = None
    html, document = (
        (page.uncommented_html, page.uncommented) if in_comment else (page.html, page.document)
    )
    data = None if html is None or document is None else _utf8(html)
    if data is not None and document is not None:
        scanned = module.scan_tables(data, _noscript_is_raw_text())
        offsets = None if scanned is None else scanned[0]
        table_ids = [node.mem_id for node in document.css("table")]
        state = _PageTables(data, offsets, table_ids)
    known[page] = state
    return state


def _utf8(html: str | bytes) -> bytes | None:
    if isinstance(html, bytes):
        return html
    try:
        return html.encode("utf-8")
    except UnicodeEncodeError:  # lone surrogates: the DOM path reads them
        return None


def parsed_page(html: str | bytes, source: str) -> Page:
    """``html`` parsed, without the content of its large plain tables if it has any (and there
    is a fast path); the scan made for that is kept for the page's extractions."""
    module = fast_module()
    data = _utf8(html) if module is not None and len(html) >= HOLLOW_MIN_CONTENT else None
    if module is None or data is None:
        return Page(html, source)  # the fast path scans it, if at all, when a table is asked for
    scanned = module.scan_tables(data, _noscript_is_raw_text())
    if scanned is None:
        page = Page(html, source)
        _PAGES[page] = _PageTables(data, None, [])
        return page
    offsets, outermost = scanned
    hollow, parsed = _hollowed(module, data, offsets, outermost)
    page = Page(html, source, parsed=parsed, hollow=hollow)
    table_ids = [node.mem_id for node in page.document.css("table")]
    if hollow and len(table_ids) != len(offsets):
        page = Page(html, source)  # the parser saw the page otherwise than the scanner: whole
        table_ids = [node.mem_id for node in page.document.css("table")]
    _PAGES[page] = _PageTables(data, offsets, table_ids)
    return page


def _hollowed(
    module: ModuleType, data: bytes, offsets: list[int], outermost: list[bool]
) -> tuple[frozenset[int], bytes | None]:
    """The positions of the plain tables to leave out, and the page without their content."""
    pieces: list[bytes] = []
    hollow: set[int] = set()
    kept_to = 0
    for position, offset in enumerate(offsets):
        # A table inside another is left whole: its text is part of the outer cell's text.
        if not outermost[position]:
            continue
        extent = module.plain_extent(data, offset) if offset >= kept_to else None
        if extent is None:
            continue
        content, close, _ = extent
        if close - content >= HOLLOW_MIN_CONTENT:
            pieces.append(data[kept_to:content])
            kept_to = close
            hollow.add(position)
    if not hollow:
        return frozenset(), None
    pieces.append(data[kept_to:])
    return frozenset(hollow), b"".join(pieces)


def plain_grid(
    page: Page, located: LocatedTable, *, drop_hidden: bool, max_slots: int
) -> Grid | None:
    """The grid of ``located`` read by the compiled reader, or None for the DOM path."""
    module = fast_module()
    if module is None:
        return None
    tables = _page_tables(page, module, located.in_comment)
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
    grid.overlaps = overlaps
    grid.links = links
    return grid
