"""Read Link header values (RFC 8288 §3) and ``application/link-format`` bodies (RFC 6690 §2).

Both share one grammar, ``link-value-list = [ link-value *[ "," link-value ] ]`` with
``link-value = "<" URI-Reference ">" *( ";" link-param )``, so one tokenizer serves both. It walks
the text once, character by character, and never backtracks: quoted strings may hold commas and
semicolons (``datetime="Tue, 20 Mar 2001 20:35:00 GMT"``), targets may hold commas, and whitespace
(newlines included) may sit between any two tokens. A link-value that cannot be read is skipped and
described in ``LinkList.problems``; reading resumes at the next ``<`` outside a quoted string. No
text makes ``parse_links`` raise.

Leniencies, all on the reading side: an unquoted parameter value may use any character but
whitespace, ``;``, ``,`` and ``"`` (this covers RFC 8288's ``token`` and RFC 6690's ``ptoken``);
a parameter without ``=`` or with nothing after ``=`` has the value ``""``; empty list elements
(``,,``, a trailing comma) and stray ``;`` are ignored. Extended values such as
``title*=UTF-8'de'letztes%20Kapitel`` are kept as written, not decoded (RFC 8187 is not applied).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from urllib.parse import urljoin

__all__ = ["Link", "LinkList", "parse_links"]

# RFC 8288 §3 uses OWS/BWS (space, tab); bodies and folded headers also carry line breaks.
_SPACE = frozenset(" \t\r\n\f\v")
# An unquoted parameter value ends at any of these (RFC 8288 §3 token, RFC 6690 §2 ptoken).
_VALUE_END = _SPACE | frozenset(';,"')
# A parameter name ends at any of these; RFC 8288 §3 says it is a token, so "=" and "<" stop it.
_NAME_END = _VALUE_END | frozenset("=<>")


@dataclass(frozen=True)
class Link:
    """One link-value: its target, its relation types and its other parameters."""

    target: str
    """The URI-Reference between ``<`` and ``>``, resolved against ``base`` when one is given."""
    rels: tuple[str, ...]
    """The relation types of the first ``rel``, lower-cased, in the order written."""
    params: Mapping[str, str] = field(hash=False)
    """Every parameter by lower-cased name, value unquoted; the first occurrence of a name wins."""

    def param(self, name: str) -> str | None:
        """The value of parameter ``name`` (any case), or None when the link does not carry it."""
        return self.params.get(name.lower())


@dataclass(frozen=True)
class LinkList:
    """The links read from a text, and one line for each link-value that had to be skipped."""

    links: tuple[Link, ...]
    problems: tuple[str, ...]


class _Unreadable(Exception):
    """A link-value cannot be read; ``args[0]`` says why. Never leaves this module."""


class _Reader:
    """A cursor over the text; every method moves forward only, which keeps reading linear."""

    def __init__(self, text: str) -> None:
        self.text = text
        self.pos = 0

    def at_end(self) -> bool:
        return self.pos >= len(self.text)

    def peek(self) -> str:
        return self.text[self.pos] if self.pos < len(self.text) else ""

    def skip_space(self) -> None:
        text, pos = self.text, self.pos
        while pos < len(text) and text[pos] in _SPACE:
            pos += 1
        self.pos = pos

    def read_until(self, stops: frozenset[str]) -> str:
        text, start = self.text, self.pos
        pos = start
        while pos < len(text) and text[pos] not in stops:
            pos += 1
        self.pos = pos
        return text[start:pos]

    def read_target(self) -> str:
        """Read ``<URI-Reference>``; the cursor is on the ``<``."""
        text = self.text
        pos = self.pos + 1
        # A URI-Reference holds neither "<" nor ">" (RFC 3986 §2), so a "<" before the ">" is
        # the next link-value: stopping there keeps a missing ">" from swallowing it.
        while pos < len(text) and text[pos] not in "<>":
            pos += 1
        if pos >= len(text) or text[pos] == "<":
            self.pos = pos
            raise _Unreadable("no closing '>'")
        target = text[self.pos + 1 : pos].strip()
        self.pos = pos + 1
        return target

    def read_quoted(self) -> str:
        """Read a quoted-string, unescaping quoted-pairs (RFC 9110 §5.6.4); cursor on the quote."""
        text = self.text
        pos = self.pos + 1
        pieces: list[str] = []
        start = pos
        while pos < len(text):
            char = text[pos]
            if char == '"':
                pieces.append(text[start:pos])
                self.pos = pos + 1
                return "".join(pieces)
            if char == "\\" and pos + 1 < len(text):
                pieces.append(text[start:pos])
                pieces.append(text[pos + 1])
                pos += 2
                start = pos
                continue
            pos += 1
        # By the grammar the rest of the text belongs to the string, so nothing after it is read.
        self.pos = len(text)
        raise _Unreadable("unterminated quoted string; the rest of the text was ignored")

    def skip_to_next_link(self) -> None:
        """Move to the next ``<`` that is not inside a quoted string, or to the end."""
        text = self.text
        pos = self.pos
        while pos < len(text):
            char = text[pos]
            if char == "<":
                break
            if char == '"':
                self.pos = pos
                try:
                    self.read_quoted()
                except _Unreadable:
                    return
                pos = self.pos
                continue
            pos += 1
        self.pos = pos


def _read_params(reader: _Reader) -> list[tuple[str, str]]:
    """Read ``*( ";" link-param )`` up to the ``,`` that ends the link-value, or the end."""
    params: list[tuple[str, str]] = []
    while True:
        reader.skip_space()
        char = reader.peek()
        if char in ("", ","):
            return params
        if char != ";":
            raise _Unreadable(f"unexpected {char!r} after the parameters")
        reader.pos += 1
        reader.skip_space()
        name = reader.read_until(_NAME_END)
        if not name:
            if reader.peek() in ("", ",", ";"):
                continue  # a stray ";" carries nothing
            raise _Unreadable(f"parameter name expected, found {reader.peek()!r}")
        reader.skip_space()
        value = ""
        if reader.peek() == "=":
            reader.pos += 1
            reader.skip_space()
            value = reader.read_quoted() if reader.peek() == '"' else reader.read_until(_VALUE_END)
        params.append((name.lower(), value))


def _build_link(target: str, pairs: list[tuple[str, str]], base: str | None) -> Link:
    """Assemble a Link, keeping the first occurrence of each parameter name."""
    params: dict[str, str] = {}
    for name, value in pairs:
        # RFC 8288 §3.3: occurrences of rel after the first MUST be ignored; the same is done for
        # every parameter, as the parsing algorithm of RFC 8288 Appendix B.2 does for anchor.
        params.setdefault(name, value)
    rel = params.get("rel", "")
    # RFC 8288 §3.3: rel holds space-separated types; §2.1.1 compares them case-insensitively.
    rels = tuple(kind.lower() for kind in rel.split())
    if base is not None:
        try:
            target = urljoin(base, target)
        except ValueError as exc:  # urllib refuses e.g. an unclosed IPv6 bracket
            raise _Unreadable(f"target {target!r} cannot be resolved against the base") from exc
    return Link(target=target, rels=rels, params=MappingProxyType(params))


def parse_links(text: str, *, base: str | None = None) -> LinkList:
    """Read every link-value in ``text``; unreadable ones are skipped and named in ``problems``.

    ``base``, when given, resolves relative targets (RFC 8288 §3.1, RFC 3986 §5); anchors are
    left as written.
    """
    reader = _Reader(text)
    links: list[Link] = []
    problems: list[str] = []
    number = 0
    while True:
        # Empty list elements are allowed by the #rule (RFC 9110 §5.6.1), so extra commas pass.
        while True:
            reader.skip_space()
            if reader.peek() != ",":
                break
            reader.pos += 1
        if reader.at_end():
            break
        number += 1
        if reader.peek() != "<":
            problems.append(f"link {number}: expected '<', found {reader.peek()!r}")
            reader.skip_to_next_link()
            continue
        try:
            target = reader.read_target()
            links.append(_build_link(target, _read_params(reader), base))
        except _Unreadable as exc:
            problems.append(f"link {number}: {exc.args[0]}")
            reader.skip_to_next_link()
    return LinkList(links=tuple(links), problems=tuple(problems))
