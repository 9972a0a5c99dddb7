"""Find the table a rule names on a page: CSS selectors on lexbor, comments included.

Some sites ship a table inside an HTML comment and uncomment it with a script. The HTML parser
keeps such a table as comment text (HTML §13.2.6.4.9, "insert a comment"), so a selector alone
never sees it. We parse the page a second time with those comments opened, and look for tables
there that came from a comment. Matches are listed page tables first, then commented ones, each
in document order.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from selectolax.lexbor import LexborHTMLParser, LexborNode, SelectolaxError

from harvester.errors import ExtractError, TableNotFoundError

__all__ = [
    "FROM_COMMENT_ATTRIBUTE",
    "MAX_LISTED_TABLES",
    "LocatedTable",
    "Page",
    "describe_candidates",
    "locate_table",
]

# The most tables an error lists: a page of 50,000 tables must not make a 2 MB message.
MAX_LISTED_TABLES = 20
# Set on each table that came from a comment, in the second parse, to tell it from page tables.
FROM_COMMENT_ATTRIBUTE = "data-harvester-from-comment"
_COMMENT_WITH_TABLE = re.compile(r"<!--((?:(?!-->).)*?<table\b(?:(?!-->).)*?)-->", re.S | re.I)
_TABLE_TAG = re.compile(r"<table\b", re.I)
# The same two patterns for pages kept as UTF-8 bytes (the markup they look for is ASCII).
_COMMENT_WITH_TABLE_BYTES = re.compile(_COMMENT_WITH_TABLE.pattern.encode(), re.S | re.I)
_TABLE_TAG_BYTES = re.compile(_TABLE_TAG.pattern.encode(), re.I)


@dataclass(frozen=True)
class LocatedTable:
    """A table element found on a page, with where it was found."""

    node: LexborNode
    index: int  # position among the selector's matches
    in_comment: bool


# Pseudo-classes that look at an element's content: on a page parsed without some tables'
# content (``Page.hollow``) they could match differently, so such selectors run on the full page.
_CONTENT_PSEUDO = re.compile(r":(?:has|empty|blank|contains|lexbor-contains)\b", re.I)


class Page:
    """A parsed HTML page whose tables can be looked up by selector.

    ``html`` is text, or UTF-8 bytes (which lexbor reads as they are, sparing a decoded copy).
    ``parsed``, when given, is what lexbor parses instead: ``html`` with the content of the
    tables at the document-order positions ``hollow`` left out (plain_grid.py reads those from
    ``html`` itself). :meth:`full` parses the whole page when something needs those tables' DOM.
    """

    def __init__(
        self,
        html: str | bytes,
        source: str = "<page>",
        *,
        parsed: str | bytes | None = None,
        hollow: frozenset[int] = frozenset(),
    ) -> None:
        self.source = source
        self.html = html
        self.document = LexborHTMLParser(html if parsed is None else parsed)
        self.hollow = hollow
        self._full: Page | None = None
        self._uncommented: LexborHTMLParser | None = None
        self._uncommented_done = False
        self.uncommented_html: str | bytes | None = None  # what ``uncommented`` parsed

    def full(self) -> Page:
        """This page with every table's content in its DOM: itself unless some was left out."""
        if not self.hollow:
            return self
        if self._full is None:
            self._full = Page(self.html, self.source)
        return self._full

    def with_content(self, located: LocatedTable) -> LocatedTable:
        """``located``, or the same table of :meth:`full` if its content was left out here."""
        if not self.hollow or located.in_comment:
            return located
        ids = [node.mem_id for node in self.document.css("table")]
        position = ids.index(located.node.mem_id) if located.node.mem_id in ids else None
        if position is None or position not in self.hollow:
            return located
        node = self.full().document.css("table")[position]
        return LocatedTable(node, located.index, located.in_comment)

    @property
    def uncommented(self) -> LexborHTMLParser | None:
        """The page parsed again with table-holding comments opened, or None if it has none."""
        if not self._uncommented_done:
            self._uncommented_done = True
            html = self.html
            opened: str | bytes | None = None
            if isinstance(html, bytes):
                if b"<!--" in html and _COMMENT_WITH_TABLE_BYTES.search(html):
                    opened = _COMMENT_WITH_TABLE_BYTES.sub(_open_comment_bytes, html)
            elif "<!--" in html and _COMMENT_WITH_TABLE.search(html):
                opened = _COMMENT_WITH_TABLE.sub(_open_comment, html)
            if opened is not None:
                self.uncommented_html = opened
                self._uncommented = LexborHTMLParser(opened)
        return self._uncommented

    def tables(self, select: str) -> list[LocatedTable]:
        """Every table the selector names, page tables first, then tables from comments.

        A selector that names a non-table element (a wrapper ``div``, say) stands for the
        outermost tables inside it.
        """
        if self.hollow and _CONTENT_PSEUDO.search(select):
            return self.full().tables(select)
        found = [
            LocatedTable(node, 0, False)
            for node in _tables_for(self.document, select, self.source)
            if FROM_COMMENT_ATTRIBUTE not in node.attributes
        ]
        if self.uncommented is not None:
            found += [
                LocatedTable(node, 0, True)
                for node in _tables_for(self.uncommented, select, self.source)
                if FROM_COMMENT_ATTRIBUTE in node.attributes
            ]
        return [LocatedTable(t.node, i, t.in_comment) for i, t in enumerate(found)]

    def all_tables(self) -> list[LocatedTable]:
        """Every table on the page, commented ones included."""
        return self.tables("table")


def _open_comment(match: re.Match[str]) -> str:
    return _TABLE_TAG.sub(f"<table {FROM_COMMENT_ATTRIBUTE}", match.group(1))


def _open_comment_bytes(match: re.Match[bytes]) -> bytes:
    return _TABLE_TAG_BYTES.sub(f"<table {FROM_COMMENT_ATTRIBUTE}".encode(), match.group(1))


def _tables_for(document: LexborHTMLParser, select: str, source: str) -> list[LexborNode]:
    try:
        matches = document.css(select)
    except (SelectolaxError, ValueError) as exc:
        raise ExtractError(
            f"{source}: selector {select!r} is not valid CSS ({exc})",
            hint='fix the selector, e.g. select = "table#players"',
        ) from exc
    tables: list[LexborNode] = []
    seen: set[int] = set()
    for node in matches:
        candidates = [node] if node.tag == "table" else _outermost_tables(node)
        for table in candidates:
            if table.mem_id not in seen:
                seen.add(table.mem_id)
                tables.append(table)
    return tables


def _outermost_tables(node: LexborNode) -> list[LexborNode]:
    inner = node.css("table")
    inner_ids = {table.mem_id for table in inner}
    outermost = []
    for table in inner:
        parent = table.parent
        while parent is not None and parent.mem_id != node.mem_id:
            if parent.mem_id in inner_ids:
                break
            parent = parent.parent
        else:
            outermost.append(table)
    return outermost


def locate_table(page: Page, select: str = "table", index: int | None = None) -> LocatedTable:
    """The one table that ``select`` (and ``index``, if given) names on ``page``.

    Raises TableNotFoundError, listing the page's tables, when nothing matches, when several
    match and no index is given, or when the index is out of range.
    """
    matches = page.tables(select)
    if index is not None:
        if index < 0:
            raise ExtractError(
                f"{page.source}: index {index} is negative",
                hint="use an index of 0 or more (0 is the first match)",
            )
        if index < len(matches):
            return matches[index]
        problem = (
            f"selector {select!r} matched {len(matches)} table(s); index {index} is out of range"
        )
        hint = "use an index below the number of matches"
    elif len(matches) == 1:
        return matches[0]
    elif not matches:
        problem = f"selector {select!r} matched no table"
        hint = "pick a selector from the tables listed"
    else:
        problem = f"selector {select!r} matched {len(matches)} tables"
        hint = "make the selector name one table, or give an index (--index N, index = N)"
    full = page.full()  # the listing describes each table's grid
    listing = describe_candidates(full.tables(select) or full.all_tables())
    raise TableNotFoundError(f"{page.source}: {problem}; {listing}", hint=hint)


def describe_candidates(tables: list[LocatedTable], limit: int = MAX_LISTED_TABLES) -> str:
    """One line listing tables by id, classes, caption, first header cells and size.

    Only the first ``limit`` are described (each costs a grid); the rest are counted.
    """
    if not tables:
        return "the page has no tables"
    listing = "tables: " + " | ".join(_describe(table) for table in tables[:limit])
    if len(tables) > limit:
        listing += f" | … and {len(tables) - limit:,} more"
    return listing


def _describe(located: LocatedTable) -> str:
    from harvester.extract.grid import build_grid  # imported here: grid is only needed on errors

    node = located.node
    attributes = node.attributes
    parts = [f"[{located.index}] table"]
    if attributes.get("id"):
        parts[0] += f"#{attributes['id']}"
    for name in (attributes.get("class") or "").split():
        parts[0] += f".{name}"
    try:
        grid = build_grid(node)
    except ExtractError:  # over the grid budget: a listing must not fail on one hostile table
        parts.append("(too large to read)")
        return " ".join(parts)
    if grid.caption:
        parts.append(f"caption {grid.caption!r}")
    if grid.rows:
        first = [text for text in grid.row_texts(0) if text][:4]
        if first:
            parts.append("first cells " + ", ".join(repr(text) for text in first))
    parts.append(f"{grid.height}×{grid.width}")
    if located.in_comment:
        parts.append("inside a comment")
    return " ".join(parts)
