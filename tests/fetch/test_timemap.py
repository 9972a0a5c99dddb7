"""Tests for reading TimeMaps, Memento datetimes and merging TimeMap pages.

Sources: RFC 7089 §2.1.1 (Memento datetimes), §2.2 (relation types), §5 (TimeMap serialisation,
its example quoted from memory because the RFC text could not be read here) and §5.1.1 (index and
paging TimeMaps); RFC 9110 §5.6.7 (HTTP-date forms a lenient reader accepts); REFERENCES §4.4 (an
example TimeMap with made-up hosts) and §8.3 (weekday check). Expected values are worked out by
hand from the input texts.
"""

from __future__ import annotations

import logging
from datetime import UTC, datetime, timedelta, timezone

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from harvester.fetch.timemap import (
    Memento,
    TimeMap,
    format_memento_datetime,
    merge_timemaps,
    parse_memento_datetime,
    read_timemap,
)

# RFC 7089 §5's example TimeMap, quoted from memory (layout as remembered; the RFC lists more
# Mementos after these, elided there too).
RFC7089_TIMEMAP = """<http://a.example.org>;rel="original",
<http://arxiv.example.net/timemap/http://a.example.org>
  ; rel="self";type="application/link-format"
  ; from="Tue, 20 Jun 2000 18:02:59 GMT"
  ; until="Wed, 09 Apr 2008 20:30:51 GMT",
<http://arxiv.example.net/timegate/http://a.example.org>
  ; rel="timegate",
<http://arxiv.example.net/web/20000620180259/http://a.example.org>
  ; rel="first memento";datetime="Tue, 20 Jun 2000 18:02:59 GMT"
  ; license="http://creativecommons.org/publicdomain/zero/1.0/",
<http://arxiv.example.net/web/20091027204954/http://a.example.org>
  ; rel="last memento";datetime="Tue, 27 Oct 2009 20:49:54 GMT"
  ; license="http://creativecommons.org/publicdomain/zero/1.0/",
<http://arxiv.example.net/web/20000621011731/http://a.example.org>
  ; rel="memento";datetime="Wed, 21 Jun 2000 01:17:31 GMT"
  ; license="http://creativecommons.org/publicdomain/zero/1.0/",
<http://arxiv.example.net/web/20000621044156/http://a.example.org>
  ; rel="memento";datetime="Wed, 21 Jun 2000 04:41:56 GMT"
  ; license="http://creativecommons.org/publicdomain/zero/1.0/"
"""
RFC7089_SELF = "http://arxiv.example.net/timemap/http://a.example.org"

# REFERENCES §4.4's example, made-up hosts.
POPULATION = "https://stats.example.org/tables/population.html"
ARCHIVE = "https://archive.example.net"
REFERENCES_TIMEMAP = f"""<{POPULATION}>; rel="original",
<{ARCHIVE}/timemap/link/{POPULATION}>
  ; rel="self"; type="application/link-format"
  ; from="Mon, 03 Jan 2022 09:15:00 GMT"; until="Fri, 14 Jun 2024 17:40:12 GMT",
<{ARCHIVE}/timegate/{POPULATION}>
  ; rel="timegate",
<{ARCHIVE}/m/20220103091500/{POPULATION}>
  ; rel="first memento"; datetime="Mon, 03 Jan 2022 09:15:00 GMT",
<{ARCHIVE}/m/20230520121005/{POPULATION}>
  ; rel="memento"; datetime="Sat, 20 May 2023 12:10:05 GMT",
<{ARCHIVE}/m/20240614174012/{POPULATION}>
  ; rel="last memento"; datetime="Fri, 14 Jun 2024 17:40:12 GMT"
"""


def utc(
    year: int, month: int, day: int, hour: int = 0, minute: int = 0, second: int = 0
) -> datetime:
    return datetime(year, month, day, hour, minute, second, tzinfo=UTC)


# -- reading TimeMaps ------------------------------------------------------------------------------


def test_rfc7089_example_timemap() -> None:
    timemap = read_timemap(RFC7089_TIMEMAP, base=RFC7089_SELF)
    assert timemap.problems == ()
    assert timemap.original == "http://a.example.org"  # RFC 7089 §5: MUST list URI-R
    assert timemap.self_uri == RFC7089_SELF  # RFC 7089 §5: SHOULD list itself
    assert timemap.timegates == ("http://arxiv.example.net/timegate/http://a.example.org",)
    assert timemap.pages == ()  # RFC 7089 §5.1.1: no other TimeMap linked
    # RFC 7089 §5: every Memento with its datetime, in document order (not sorted by time).
    assert timemap.mementos == (
        Memento(
            "http://arxiv.example.net/web/20000620180259/http://a.example.org",
            utc(2000, 6, 20, 18, 2, 59),
            0,
        ),
        Memento(
            "http://arxiv.example.net/web/20091027204954/http://a.example.org",
            utc(2009, 10, 27, 20, 49, 54),
            1,
        ),
        Memento(
            "http://arxiv.example.net/web/20000621011731/http://a.example.org",
            utc(2000, 6, 21, 1, 17, 31),
            2,
        ),
        Memento(
            "http://arxiv.example.net/web/20000621044156/http://a.example.org",
            utc(2000, 6, 21, 4, 41, 56),
            3,
        ),
    )


def test_references_example_timemap() -> None:
    timemap = read_timemap(REFERENCES_TIMEMAP, base=f"{ARCHIVE}/timemap/link/{POPULATION}")
    assert timemap.problems == ()
    assert timemap.original == POPULATION
    assert timemap.timegates == (f"{ARCHIVE}/timegate/{POPULATION}",)
    assert [m.datetime for m in timemap.mementos] == [  # RFC 7089 §2.1.1 datetimes, read as UTC
        utc(2022, 1, 3, 9, 15, 0),
        utc(2023, 5, 20, 12, 10, 5),
        utc(2024, 6, 14, 17, 40, 12),
    ]
    assert all(m.datetime.utcoffset() == timedelta(0) for m in timemap.mementos)


def test_relative_targets_resolve_against_the_timemap_url() -> None:
    # RFC 8288 §3.1 / RFC 3986 §5: relative references resolve against the document's URL.
    text = '</orig>; rel=original, <m/1>; rel=memento; datetime="Tue, 20 Mar 2001 20:35:00 GMT"'
    timemap = read_timemap(text, base="http://arch.test/tm/page1")
    assert timemap.original == "http://arch.test/orig"
    assert timemap.mementos[0].uri == "http://arch.test/tm/m/1"


def test_memento_relation_is_recognised_in_any_case_and_combination() -> None:
    # RFC 8288 §2.1.1: case-insensitive; RFC 7089 §2.2.4: "memento" may share rel with others.
    text = (
        '<a>; REL="Memento"; DATETIME="Tue, 20 Mar 2001 20:35:00 GMT",\n'
        '<b>; rel="prev memento next"; datetime="Wed, 21 Mar 2001 20:35:00 GMT",\n'
        '<c>; rel="mementos"; datetime="Thu, 22 Mar 2001 20:35:00 GMT"'
    )
    timemap = read_timemap(text, base="http://arch.test/")
    assert [m.uri for m in timemap.mementos] == ["http://arch.test/a", "http://arch.test/b"]


def test_mementos_without_readable_datetimes_are_skipped_and_reported() -> None:
    # RFC 7089 §2.2.4 / §5: a memento link MUST carry datetime; one without cannot be placed.
    text = (
        "<a>; rel=memento,\n"
        '<b>; rel=memento; datetime="sometime in 2001",\n'
        '<c>; rel=memento; datetime="Tue, 20 Mar 2001 20:35:00 +0100",\n'
        '<d>; rel=memento; datetime="Tue, 20 Mar 2001 20:35:00 GMT"'
    )
    timemap = read_timemap(text, base="http://arch.test/")
    assert [(m.uri, m.position) for m in timemap.mementos] == [("http://arch.test/d", 0)]
    assert timemap.problems == (
        "memento http://arch.test/a: no datetime; skipped",
        "memento http://arch.test/b: unreadable datetime 'sometime in 2001'; skipped",
        "memento http://arch.test/c: unreadable datetime 'Tue, 20 Mar 2001 20:35:00 +0100'; "
        "skipped",  # RFC 7089 §2.1.1: MUST be GMT
    )


def test_a_memento_listed_twice_keeps_its_first_listing() -> None:
    # Project rule (common practice, no published source): one URI-M, one datetime.
    text = (
        '<a>; rel=memento; datetime="Tue, 20 Mar 2001 20:35:00 GMT",\n'
        '<a>; rel=memento; datetime="Wed, 21 Mar 2001 20:35:00 GMT"'
    )
    timemap = read_timemap(text, base="http://arch.test/")
    assert timemap.mementos == (Memento("http://arch.test/a", utc(2001, 3, 20, 20, 35), 0),)
    assert timemap.problems == (
        "memento http://arch.test/a: listed again; the first listing is kept",
    )


def test_wrong_weekday_is_kept_and_noted(caplog: pytest.LogCaptureFixture) -> None:
    # REFERENCES §8.3: warn when an IMF-fixdate weekday does not match the date (common
    # practice, no published source). 20 Mar 2001 was a Tuesday, not a Friday.
    text = '<a>; rel=memento; datetime="Fri, 20 Mar 2001 20:35:00 GMT"'
    with caplog.at_level(logging.WARNING):
        timemap = read_timemap(text, base="http://arch.test/")
    assert timemap.mementos[0].datetime == utc(2001, 3, 20, 20, 35)
    assert timemap.problems == (
        "memento http://arch.test/a: 'Fri, 20 Mar 2001 20:35:00 GMT' names the wrong weekday; kept",
    )
    assert "wrong weekday" in caplog.text


def test_link_format_problems_come_first_and_do_not_stop_the_reading() -> None:
    text = 'junk, <a>; rel=memento; datetime="Tue, 20 Mar 2001 20:35:00 GMT"'
    timemap = read_timemap(text, base="http://arch.test/")
    assert len(timemap.mementos) == 1
    assert timemap.problems == ("link 1: expected '<', found 'j'",)  # RFC 6690 §2


def test_other_timemaps_are_pages_but_the_document_itself_is_not() -> None:
    # RFC 7089 §5.1.1: paging and index TimeMaps link further TimeMaps with rel="timemap"; a
    # link to the document itself (by its URL or its self link) is not another page.
    text = (
        '<http://arch.test/tm/1>; rel="self timemap",\n'
        "<http://arch.test/tm/here>; rel=timemap,\n"
        '<http://arch.test/tm/2>; rel="timemap"; from="Tue, 20 Mar 2001 20:35:00 GMT",\n'
        "<http://arch.test/tm/3>; rel=timemap,\n"
        "<http://arch.test/tm/2>; rel=timemap\n"
    )
    timemap = read_timemap(text, base="http://arch.test/tm/here")
    assert timemap.self_uri == "http://arch.test/tm/1"
    assert timemap.pages == ("http://arch.test/tm/2", "http://arch.test/tm/3")


def test_index_timemap_has_pages_and_no_mementos() -> None:
    # RFC 7089 §5.1.1: an index TimeMap lists only timemap links.
    text = "</tm/1>; rel=timemap, </tm/2>; rel=timemap"
    timemap = read_timemap(text, base="http://arch.test/index")
    assert timemap.mementos == ()
    assert timemap.original is None
    assert timemap.pages == ("http://arch.test/tm/1", "http://arch.test/tm/2")


def test_first_original_and_self_win_and_timegates_are_listed_once() -> None:
    # RFC 7089 §2.2.1: exactly one original is expected; with two, the first is used.
    text = (
        "<o1>; rel=original, <o2>; rel=original, <s1>; rel=self, <s2>; rel=self,\n"
        "<g1>; rel=timegate, <g2>; rel=timegate, <g1>; rel=timegate"
    )
    timemap = read_timemap(text, base="http://arch.test/")
    assert (timemap.original, timemap.self_uri) == ("http://arch.test/o1", "http://arch.test/s1")
    assert timemap.timegates == ("http://arch.test/g1", "http://arch.test/g2")


def test_empty_body_is_an_empty_timemap() -> None:
    assert read_timemap("", base="http://arch.test/") == TimeMap(None, (), (), (), None, ())


@given(st.text())
@settings(max_examples=200)
def test_read_timemap_never_raises(text: str) -> None:
    read_timemap(text, base="http://arch.test/tm")


# -- Memento datetimes -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text",
    [
        "Tue, 20 Mar 2001 20:35:00 GMT",  # RFC 7089 §2.1.1 rfc1123-date
        "Tuesday, 20 Mar 2001 20:35:00 GMT",  # leniency: weekday in full
        "Tuesday, 20-Mar-01 20:35:00 GMT",  # RFC 9110 §5.6.7 RFC 850 form
        "Tue Mar 20 20:35:00 2001",  # RFC 9110 §5.6.7 asctime form
        "tue, 20 mar 2001 20:35:00 gmt",  # RFC 9111 §4.2: case-insensitive
        "  Tue,  20 Mar 2001   20:35:00 GMT ",  # leniency: extra spaces
    ],
)
def test_memento_datetime_forms(text: str) -> None:
    assert parse_memento_datetime(text) == utc(2001, 3, 20, 20, 35, 0)


@pytest.mark.parametrize(
    "text",
    [
        "",
        "garbage",
        "Tue, 20 Mar 2001 20:35:00 +0000",  # RFC 7089 §2.1.1: MUST be GMT
        "Tue, 20 Mar 2001 20:35:00 UTC",
        "Tue, 20 Mar 2001 20:35:00 EST",
        "Tue, 20 Mar 2001 20:35 GMT",  # RFC 7089 §2.1.1: seconds are required
        "Tue, 30 Feb 2001 20:35:00 GMT",  # no such day
        "2001-03-20T20:35:00Z",  # RFC 3339 is not a Memento datetime
        "20010320203500",  # a URI-M timestamp is not authoritative (REFERENCES §4.4)
    ],
)
def test_unreadable_memento_datetimes(text: str) -> None:
    assert parse_memento_datetime(text) is None


def test_leap_second_rolls_forward() -> None:
    # RFC 9110 §5.6.7 allows :60; RFC 7089 §2.1.1 does not, but a lenient reader keeps the
    # instant: one second after :59.
    assert parse_memento_datetime("Sat, 31 Dec 2016 23:59:60 GMT") == utc(2017, 1, 1, 0, 0, 0)


def test_leap_second_at_the_end_of_time_is_unreadable() -> None:
    # 23:59:60 on 31 Dec 9999 is past the last instant datetime can hold.
    assert parse_memento_datetime("Fri, 31 Dec 9999 23:59:60 GMT") is None


@given(st.text())
def test_parse_memento_datetime_never_raises(text: str) -> None:
    result = parse_memento_datetime(text)
    assert result is None or result.utcoffset() == timedelta(0)


def test_format_memento_datetime_is_imf_fixdate_gmt() -> None:
    # RFC 7089 §2.1.1, with the Accept-Datetime value of its examples (from memory).
    assert format_memento_datetime(utc(2001, 9, 11, 20, 35, 0)) == "Tue, 11 Sep 2001 20:35:00 GMT"


def test_format_memento_datetime_converts_to_gmt() -> None:
    # RFC 7089 §2.1.1: MUST be GMT; 22:35 at +02:00 is 20:35 GMT.
    moment = datetime(2001, 9, 11, 22, 35, 0, tzinfo=timezone(timedelta(hours=2)))
    assert format_memento_datetime(moment) == "Tue, 11 Sep 2001 20:35:00 GMT"


def test_format_memento_datetime_refuses_naive() -> None:
    with pytest.raises(ValueError, match="aware"):
        format_memento_datetime(datetime(2001, 9, 11, 20, 35, 0))


# -- merging pages ---------------------------------------------------------------------------------

PAGE_1 = """<http://orig.test/t>; rel=original,
<http://arch.test/tm/1>; rel=self,
<http://arch.test/tm/2>; rel=timemap,
<http://arch.test/g>; rel=timegate,
<http://arch.test/m/a>; rel="first memento"; datetime="Mon, 01 Jan 2001 00:00:00 GMT",
<http://arch.test/m/b>; rel=memento; datetime="Tue, 02 Jan 2001 00:00:00 GMT"
"""
PAGE_2 = """<http://arch.test/tm/2>; rel=self,
<http://arch.test/tm/1>; rel=timemap,
<http://arch.test/tm/3>; rel=timemap,
<http://arch.test/m/b>; rel=memento; datetime="Tue, 02 Jan 2001 00:00:00 GMT",
<http://arch.test/m/c>; rel=memento; datetime="Wed, 03 Jan 2001 00:00:00 GMT",
<http://arch.test/m/x>; rel=memento
"""
PAGE_3 = """<http://orig.test/other>; rel=original,
<http://arch.test/tm/3>; rel=self,
<http://arch.test/tm/1>; rel=timemap,
<http://arch.test/g>; rel=timegate,
<http://arch.test/g2>; rel=timegate,
<http://arch.test/m/d>; rel="last memento"; datetime="Thu, 04 Jan 2001 00:00:00 GMT",
<http://arch.test/m/c>; rel=memento; datetime="Wed, 03 Jan 2001 00:00:00 GMT"
"""


def test_merge_three_pages_that_link_back_to_the_first() -> None:
    # RFC 7089 §5.1.1: the Mementos of a paged TimeMap are spread over its pages.
    pages = [
        read_timemap(PAGE_1, base="http://arch.test/tm/1"),
        read_timemap(PAGE_2, base="http://arch.test/tm/2"),
        read_timemap(PAGE_3, base="http://arch.test/tm/3"),
    ]
    assert pages[1].original is None
    merged = merge_timemaps(pages)
    assert merged.original == "http://orig.test/t"  # the first non-None
    assert merged.self_uri == "http://arch.test/tm/1"
    # b and c repeat on the next page: dropped, positions renumbered 0..3.
    assert [(m.uri.rsplit("/", 1)[1], m.position) for m in merged.mementos] == [
        ("a", 0),
        ("b", 1),
        ("c", 2),
        ("d", 3),
    ]
    assert merged.mementos[3].datetime == utc(2001, 1, 4)
    assert merged.timegates == ("http://arch.test/g", "http://arch.test/g2")
    assert merged.pages == ()  # every linked page is one of the three merged
    assert merged.problems == ("page 2: memento http://arch.test/m/x: no datetime; skipped",)


def test_merge_keeps_pages_not_yet_merged() -> None:
    first = read_timemap(PAGE_1, base="http://arch.test/tm/1")
    assert merge_timemaps([first]).pages == ("http://arch.test/tm/2",)  # RFC 7089 §5.1.1


def test_merge_of_one_page_keeps_its_content() -> None:
    page = read_timemap(PAGE_3, base="http://arch.test/tm/3")
    merged = merge_timemaps([page])
    assert merged.mementos == page.mementos
    assert (merged.original, merged.self_uri) == ("http://orig.test/other", "http://arch.test/tm/3")


def test_merge_of_nothing_is_empty() -> None:
    assert merge_timemaps([]) == TimeMap(None, (), (), (), None, ())
