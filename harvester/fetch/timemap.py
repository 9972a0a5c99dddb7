"""Read a Memento TimeMap from its link-format text (RFC 7089 §5) and merge paged TimeMaps.

A TimeMap lists the Original Resource (``rel="original"``), its Mementos (any rel list holding
``memento``, each with a ``datetime``), TimeGates, itself (``self``) and, when paged or indexed,
other TimeMap documents (``rel="timemap"``, §5.1.1). This module only reads text; fetching the
pages, with a cycle guard and a page cap, is the caller's job.

Memento datetimes (RFC 7089 §2.1.1) are read by ``parse_memento_datetime``, which accepts more
than the RFC's ``rfc1123-date``, as HTTP-date recipients do (RFC 9110 §5.6.7):

- IMF-fixdate, ``Tue, 20 Mar 2001 20:35:00 GMT`` (the RFC 7089 form), also with the weekday
  written in full and with runs of spaces between fields;
- the obsolete RFC 850 form, ``Tuesday, 20-Mar-01 20:35:00 GMT`` (a two-digit year follows the
  RFC 9110 fifty-year rule against the current clock);
- the asctime form, ``Tue Mar 20 20:35:00 2001`` (read as UTC);
- any letter case (RFC 9111 §4.2 asks caches for that), and a leap second ``:60``, rolled into the
  next second because ``datetime`` cannot hold it.

Only ``GMT`` is accepted as a zone (RFC 7089 §2.1.1 says it MUST be GMT): ``+0000``, ``UTC`` or
``EST`` give None. A weekday that does not match the date is accepted, since the day, month and
year are what locate the instant; ``read_timemap`` notes it in ``problems`` and the HTTP-date
reader logs a warning (REFERENCES §8.3, common practice, no published source).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime

from harvester.fetch.httpdate import format_http_date, parse_http_date
from harvester.fetch.linkformat import parse_links

__all__ = [
    "Memento",
    "TimeMap",
    "format_memento_datetime",
    "merge_timemaps",
    "parse_memento_datetime",
    "read_timemap",
]

_WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")


@dataclass(frozen=True)
class Memento:
    """One Memento listed in a TimeMap: its URI-M and its archival datetime."""

    uri: str
    datetime: datetime
    """Aware, in UTC."""
    position: int
    """0-based place among the Mementos of the TimeMap (or of the merged pages), document order."""


@dataclass(frozen=True)
class TimeMap:
    """What a TimeMap document (or a merge of its pages) says about one Original Resource."""

    original: str | None
    """The first ``rel="original"`` target: the URI-R."""
    mementos: tuple[Memento, ...]
    """In document order; a URI-M listed twice keeps its first listing."""
    timegates: tuple[str, ...]
    """``rel="timegate"`` targets, each once, in document order."""
    pages: tuple[str, ...]
    """``rel="timemap"`` targets other than the document itself: further pages or an index."""
    self_uri: str | None
    """The first ``rel="self"`` target."""
    problems: tuple[str, ...]
    """Link-format problems, then one line per Memento skipped or doubtful."""


def parse_memento_datetime(text: str) -> datetime | None:
    """Read a Memento datetime (RFC 7089 §2.1.1) as an aware UTC datetime, or None if unreadable.

    The forms accepted are listed in the module docstring.
    """
    try:
        return parse_http_date(text, gmt_only=True)
    except OverflowError:
        # The HTTP-date reader rolls a leap second forward outside its own range check, so
        # "Fri, 31 Dec 9999 23:59:60 GMT" overflows there.
        return None


def format_memento_datetime(moment: datetime) -> str:
    """Write an aware datetime as an IMF-fixdate in GMT, as Accept-Datetime needs (RFC 7089 §2.1.1).

    A naive datetime raises ValueError: its zone would be a guess.
    """
    return format_http_date(moment)


def _names_wrong_weekday(text: str, moment: datetime) -> bool:
    """Whether the weekday opening ``text`` (every HTTP-date form opens with one) is wrong."""
    return text.strip()[:3].lower() != _WEEKDAYS[moment.weekday()]


def _add_once(items: list[str], item: str) -> None:
    if item not in items:
        items.append(item)


def read_timemap(text: str, *, base: str) -> TimeMap:
    """Read a link-format TimeMap; ``base`` is its own URL, against which relative targets resolve.

    A Memento without a readable ``datetime`` is skipped (RFC 7089 §5: every Memento MUST carry
    one) and named in ``problems``, as is a URI-M listed a second time.
    """
    parsed = parse_links(text, base=base)
    problems = list(parsed.problems)
    original: str | None = None
    self_uri: str | None = None
    for link in parsed.links:
        if original is None and "original" in link.rels:
            original = link.target
        if self_uri is None and "self" in link.rels:
            self_uri = link.target
    itself = {base, self_uri}
    mementos: list[Memento] = []
    seen: set[str] = set()
    timegates: list[str] = []
    pages: list[str] = []
    for link in parsed.links:
        if "timegate" in link.rels:
            _add_once(timegates, link.target)
        if "timemap" in link.rels and link.target not in itself:
            _add_once(pages, link.target)
        if "memento" not in link.rels:
            continue
        written = link.param("datetime")
        if written is None:
            problems.append(f"memento {link.target}: no datetime; skipped")
            continue
        moment = parse_memento_datetime(written)
        if moment is None:
            problems.append(f"memento {link.target}: unreadable datetime {written!r}; skipped")
            continue
        if link.target in seen:
            problems.append(f"memento {link.target}: listed again; the first listing is kept")
            continue
        if _names_wrong_weekday(written, moment):
            problems.append(f"memento {link.target}: {written!r} names the wrong weekday; kept")
        seen.add(link.target)
        mementos.append(Memento(uri=link.target, datetime=moment, position=len(mementos)))
    return TimeMap(
        original=original,
        mementos=tuple(mementos),
        timegates=tuple(timegates),
        pages=tuple(pages),
        self_uri=self_uri,
        problems=tuple(problems),
    )


def merge_timemaps(maps: Sequence[TimeMap]) -> TimeMap:
    """Combine the pages of one paged TimeMap (RFC 7089 §5.1.1) into one, in the order given.

    Mementos keep page order and are renumbered; a URI-M already seen on an earlier page is
    dropped silently, since neighbouring pages may overlap (common practice, no published source).
    ``original`` and ``self_uri`` are the first non-None ones; ``pages`` leaves out every page's
    own ``self_uri``; each problem is prefixed with its 1-based page number.
    """
    original = next((page.original for page in maps if page.original is not None), None)
    self_uri = next((page.self_uri for page in maps if page.self_uri is not None), None)
    known_pages = {page.self_uri for page in maps if page.self_uri is not None}
    mementos: list[Memento] = []
    seen: set[str] = set()
    timegates: list[str] = []
    pages: list[str] = []
    problems: list[str] = []
    for number, page in enumerate(maps, start=1):
        for memento in page.mementos:
            if memento.uri in seen:
                continue
            seen.add(memento.uri)
            mementos.append(Memento(memento.uri, memento.datetime, position=len(mementos)))
        for gate in page.timegates:
            _add_once(timegates, gate)
        for other in page.pages:
            if other not in known_pages:
                _add_once(pages, other)
        problems.extend(f"page {number}: {problem}" for problem in page.problems)
    return TimeMap(
        original=original,
        mementos=tuple(mementos),
        timegates=tuple(timegates),
        pages=tuple(pages),
        self_uri=self_uri,
        problems=tuple(problems),
    )
