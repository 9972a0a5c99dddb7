"""How one cell is read: its span attributes, whether it is hidden, its text, its link.

Span values follow HTML's "rules for parsing non-negative integers" (§2.3.4.2) and the clamps of
"forming a table" (§4.9.12.1). Cell text is the DOM text content with ``<br>`` read as a space
and whitespace (NBSP too) collapsed: the text of a nested table counts (textContent includes it),
while the content of scripts, styles and templates is left out.
"""

from __future__ import annotations

import re

from selectolax.lexbor import LexborNode

__all__ = [
    "MAX_COLGROUP_SPAN",
    "MAX_COLSPAN",
    "MAX_ROWSPAN",
    "cell_text",
    "clean_href",
    "collapsed",
    "is_hidden",
    "link_of",
    "parse_span",
]

MAX_COLSPAN = 1000  # HTML §4.9.12.1 step "colspan": values above 1000 are treated as 1000
MAX_ROWSPAN = 65534  # HTML §4.9.12.1 step "rowspan": values above 65534 are treated as 65534
MAX_COLGROUP_SPAN = 1000  # HTML §4.9.12.1 "column groups": span above 1000 is treated as 1000

# Elements whose content is not part of a cell's text: script, style and template hold no
# text a reader sees. A nested table's text is part of its cell's text content (DOM
# textContent), though its cells are not cells of the outer table.
_SKIPPED_TAGS = frozenset({"script", "style", "template"})
_DISPLAY_NONE = re.compile(r"display\s*:\s*none", re.IGNORECASE)
_OTHER_SPACE = re.compile(r"[^\S ]")  # whitespace other than U+0020
_LEADING_INT = re.compile(r"[\t\n\f\r ]*([+-]?)([0-9]+)")


def link_of(node: LexborNode) -> str | None:
    """The ``href`` of the first link inside an element, if any, cleaned as :func:`clean_href`."""
    anchor = node.css_first("a[href]")
    if anchor is None:
        return None
    return clean_href(anchor.attributes.get("href"))


_C0_OR_SPACE = "".join(map(chr, range(0x21)))
_TAB_OR_NEWLINE = str.maketrans("", "", "\t\n\r")


def clean_href(href: str | None) -> str | None:
    """An ``href`` as a URL parser reads it: leading and trailing C0 controls and spaces
    removed, and every ASCII tab or newline (URL Standard §4.4, basic URL parser, from
    memory); None for a missing or empty attribute. Other white space (NBSP) is kept."""
    if not href:
        return None
    return href.strip(_C0_OR_SPACE).translate(_TAB_OR_NEWLINE)


def parse_span(value: str | None, default: int, minimum: int, maximum: int) -> int:
    """Parse a span attribute as HTML's "rules for parsing non-negative integers" (§2.3.4.2).

    Leading ASCII whitespace is skipped and digits are read up to the first non-digit, so
    ``"3px"`` is 3. A missing value, a parse error or a result below ``minimum`` gives
    ``default``; a result above ``maximum`` gives ``maximum``.
    """
    if value is None:
        return default
    if value.isascii() and value.isdigit() and len(value) <= 18:  # the usual "2": no regex
        number = int(value)
        return default if number < minimum else min(number, maximum)
    match = _LEADING_INT.match(value)
    if match is None:
        return default
    sign, digits = match.groups()
    digits = digits.lstrip("0") or "0"
    # Python refuses int() on strings over 4,300 digits; anything this long is above maximum.
    number = int(digits) if len(digits) <= 18 else maximum + 1
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

    A nested table's text counts, as in DOM ``textContent``; the content of scripts, styles
    and templates is left out, and with ``drop_hidden`` so is text inside elements hidden by
    inline ``display: none``.
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


def collapsed(texts: list[str]) -> list[str]:
    """Collapse whitespace in each text, checking the whole row at once for the common case."""
    # Texts are joined with NUL, which lexbor never leaves in text (it becomes U+FFFD); the
    # row is tidy unless some text has a double, leading or trailing space or other whitespace.
    row = "\0".join(texts)
    tidy = (
        "  " not in row
        and " \0" not in row
        and "\0 " not in row
        and row[:1] != " "
        and row[-1:] != " "
        and _OTHER_SPACE.search(row) is None
    )
    if tidy:
        return texts
    return [" ".join(text.split()) for text in texts]
