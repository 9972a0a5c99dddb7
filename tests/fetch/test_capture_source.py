"""CaptureSource with the real fetcher against the demo web archive on 127.0.0.1.

What the archive holds and serves is its documented contract (harvester/demo/archive_routes.py,
module docstring) and its own listing API (``DemoWebArchive.captures``); what was asked of it
is its request log. Expected datetimes are the contract's schedule, written out here; expected
bytes are fetched from the archive's ``raw`` variant with httpx and hashed with hashlib. Nothing
here is computed by harvester's own TimeMap reader, ranking or rewriting check.
"""

from __future__ import annotations

import asyncio
import dataclasses
import hashlib
import re
from collections.abc import Callable, Coroutine, Iterator
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any, TypeVar

import pytest

from harvester.demo.archive_routes import parse_accept_datetime
from harvester.demo.league import build_league
from harvester.demo.pages import render_page
from harvester.demo.server import DemoServer
from harvester.demo.web_archive import DemoWebArchive
from harvester.errors import FetchError
from harvester.fetch.capture import Capture
from harvester.fetch.capture_source import CaptureChoice, CaptureSource
from harvester.fetch.client import Fetcher
from harvester.fetch.identity import Identity
from harvester.fetch.source import PageRequest
from harvester.fetch.timemap import TimeMap
from harvester.fetch.web_archive import OriginalRewrite, WebArchive
from tests.demo.polite import Polite

TEST_CRAWL_DELAY = 0.05  # tests/conftest.py starts the demo hosts with this Crawl-delay
CONTACT = "mailto:t@example.org"
IDENTITY = Identity(CONTACT)
# The demo recipes' [captures] original (recipes/league-*.toml): the archive's raw variant. Asking
# an archive for unmodified bytes by a URI-M rewrite is common practice, no published source.
RAW = OriginalRewrite(pattern=r"/web/(\d{14})/", replace=r"/web/\1raw/")
# RFC 9110 §5.6.7 IMF-fixdate, the only form RFC 7089 §2.1.1 allows for Accept-Datetime.
IMF_FIXDATE = re.compile(
    r"(Mon|Tue|Wed|Thu|Fri|Sat|Sun), \d{2} (Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec) "
    r"\d{4} ([01]\d|2[0-3]):[0-5]\d:[0-5]\d GMT"
)
T = TypeVar("T")


def schedule(season: int) -> list[datetime]:
    """The contract's four capture times of every held page (archive_routes docstring)."""
    return [
        datetime(season, 3, 15, 10, 20, 0, tzinfo=UTC),
        datetime(season, 6, 28, 14, 5, 9, tzinfo=UTC),
        datetime(season, 7, 3, 8, 30, 0, tzinfo=UTC),
        datetime(season, 11, 20, 16, 45, 0, tzinfo=UTC),
    ]


def timestamp(moment: datetime) -> str:
    """The 14-digit form the contract puts in a URI-M (``/web/{YYYYMMDDhhmmss}/…``)."""
    return moment.strftime("%Y%m%d%H%M%S")


def raw_path(uri_r: str, moment: datetime) -> str:
    """The contract's path of a capture's unmodified bytes: ``/web/{timestamp}raw/{URI-R}``."""
    return f"/web/{timestamp(moment)}raw/{uri_r}"


def banner_path(uri_r: str, moment: datetime) -> str:
    """The contract's path of a capture as a visitor sees it: ``/web/{timestamp}/{URI-R}``."""
    return f"/web/{timestamp(moment)}/{uri_r}"


def archive_of(host: DemoWebArchive, **changes: Any) -> WebArchive:
    """The demo recipes' [captures] for ``host``: its TimeMap template and the raw rewrite."""
    configured = WebArchive(timemap=host.url("/timemap/{url}"), original=RAW)
    return dataclasses.replace(configured, **changes)


def run(
    work: Callable[[CaptureSource], Coroutine[Any, Any, T]], archive: WebArchive, cache_dir: Path
) -> T:
    """Run ``work`` with a CaptureSource over a real Fetcher, closed afterwards."""

    async def go() -> T:
        async with Fetcher(
            IDENTITY, cache_dir=cache_dir, backoff_initial=0.05, backoff_max=0.2
        ) as fetcher:
            return await work(CaptureSource(fetcher, archive))

    return asyncio.run(go())


def capture(archive: WebArchive, url: str, near: datetime | None, cache_dir: Path) -> Capture:
    request = PageRequest(url, capture_near=near, past="capture")

    async def work(source: CaptureSource) -> Capture:
        return await source.capture(request)

    return run(work, archive, cache_dir)


def choose(archive: WebArchive, url: str, near: datetime, cache_dir: Path) -> CaptureChoice:
    async def work(source: CaptureSource) -> CaptureChoice:
        return await source.choose(url, near)

    return run(work, archive, cache_dir)


def near(season: int) -> datetime:
    """The demo recipes' capture_near, ``{season}-06-30``, read as midnight UTC."""
    return datetime(season, 6, 30, tzinfo=UTC)


def raw_bytes(host: DemoWebArchive, uri_r: str, moment: datetime) -> bytes:
    """The capture's unmodified bytes, fetched directly with httpx at the archive's pace."""
    polite = Polite(host, margin=TEST_CRAWL_DELAY)
    try:
        response = polite.get(raw_path(uri_r, moment), headers={"User-Agent": IDENTITY.user_agent})
    finally:
        polite.client.close()
    assert response.status_code == 200
    return response.content


@pytest.fixture
def paged_archive_factory(demo_site: DemoServer) -> Iterator[Callable[[int], DemoWebArchive]]:
    started: list[DemoWebArchive] = []

    def start(page_size: int) -> DemoWebArchive:
        host = DemoWebArchive(
            site=demo_site.base_url, crawl_delay=TEST_CRAWL_DELAY, timemap_page_size=page_size
        ).start()
        started.append(host)
        return host

    try:
        yield start
    finally:
        for host in started:
            host.stop()
        for host in started:
            assert not host.errors, host.errors[0]


# -- the TimeMap ---------------------------------------------------------------------------------


def test_the_timemap_read_lists_exactly_the_archives_captures(
    demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    uri_r = demo_archive.uri_r(2020, "players")

    async def work(source: CaptureSource) -> TimeMap:
        return await source.read_timemap(uri_r)

    timemap = run(work, archive_of(demo_archive), tmp_path)
    listed = [(c.uri_m, c.datetime) for c in demo_archive.captures(uri_r)]
    # RFC 7089 §5: a TimeMap MUST list every known URI-M with its datetime.
    assert [(m.uri, m.datetime) for m in timemap.mementos] == listed
    # The archive's listing is itself the contract's schedule (archive_routes docstring).
    assert [moment for _, moment in listed] == schedule(2020)
    assert timemap.original == uri_r  # RFC 7089 §5: the TimeMap MUST list URI-R
    assert len(demo_archive.requests_for(f"/timemap/{uri_r}")) == 1


@pytest.mark.parametrize("page_size", [1, 2, 3])
def test_a_paged_timemap_is_merged_from_every_page(
    paged_archive_factory: Callable[[int], DemoWebArchive], tmp_path: Path, page_size: int
) -> None:
    host = paged_archive_factory(page_size)
    uri_r = host.uri_r(2020, "standings")

    async def work(source: CaptureSource) -> TimeMap:
        return await source.read_timemap(uri_r)

    timemap = run(work, archive_of(host), tmp_path)
    # RFC 7089 §5.1.1: the mementos may be spread over documents chained by timemap links (read
    # each page once: common practice, no published source).
    assert [(m.uri, m.datetime) for m in timemap.mementos] == [
        (c.uri_m, c.datetime) for c in host.captures(uri_r)
    ]
    pages = -(-4 // page_size)  # the contract: N mementos per page, four captures in all
    assert len(host.requests_for(f"/timemap/{uri_r}")) == 1
    for number in range(2, pages + 1):
        assert len(host.requests_for(f"/timemap/page/{number}/{uri_r}")) == 1
    assert host.requests_for(f"/timemap/page/{pages + 1}/{uri_r}") == []  # no page past the end


# -- choosing ------------------------------------------------------------------------------------


def test_closest_takes_june_28_for_capture_near_june_30(
    demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    uri_r = demo_archive.uri_r(2020, "contracts")
    got = capture(archive_of(demo_archive), uri_r, near(2020), tmp_path)
    june_28 = datetime(2020, 6, 28, 14, 5, 9, tzinfo=UTC)
    # Contract: June 28 is 33 h 54 min 51 s before June 30, July 3 80 h 30 min after.
    assert got.memento_datetime == june_28
    assert got.memento_uri == demo_archive.url(banner_path(uri_r, june_28))
    assert got.final_url == demo_archive.url(raw_path(uri_r, june_28))
    assert got.url == uri_r  # the capture is of the page itself
    assert got.origin == "web-archive"
    assert got.status == 200
    assert got.notes == ()


def test_before_takes_the_last_capture_at_or_before_the_target(
    demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    uri_r = demo_archive.uri_r(2020, "players")
    target = datetime(2020, 11, 1, tzinfo=UTC)
    # Nearest to 1 November is 20 November (19 days after); the last before it is 3 July.
    closest = choose(archive_of(demo_archive), uri_r, target, tmp_path)
    assert closest.chosen is not None
    assert closest.chosen.datetime == datetime(2020, 11, 20, 16, 45, 0, tzinfo=UTC)
    before = choose(archive_of(demo_archive, rule="before"), uri_r, target, tmp_path)
    # REFERENCES §4.5 (project rule, "not_after" mode): only captures at or before, latest first.
    assert [m.datetime for m in before.ranked] == schedule(2020)[2::-1]
    exact = schedule(2020)[2]  # a capture exactly at the target is "at or before" it
    at = choose(archive_of(demo_archive, rule="before"), uri_r, exact, tmp_path)
    assert at.chosen is not None and at.chosen.datetime == exact


def test_within_leaves_out_captures_outside_the_window(
    demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    uri_r = demo_archive.uri_r(2020, "players")
    two_days = archive_of(demo_archive, within=timedelta(days=2))
    chosen = choose(two_days, uri_r, near(2020), tmp_path)
    # Only June 28 (33 h 54 min 51 s away) lies within 48 h of June 30; July 3 is 80.5 h away.
    assert [m.datetime for m in chosen.ranked] == [datetime(2020, 6, 28, 14, 5, 9, tzinfo=UTC)]


@pytest.mark.parametrize(
    ("target", "expected"),
    [
        (datetime(2020, 1, 1, tzinfo=UTC), datetime(2020, 3, 15, 10, 20, 0, tzinfo=UTC)),
        (datetime(2021, 1, 1, tzinfo=UTC), datetime(2020, 11, 20, 16, 45, 0, tzinfo=UTC)),
    ],
)
def test_closest_outside_the_span_takes_the_first_or_the_last(
    demo_archive: DemoWebArchive, tmp_path: Path, target: datetime, expected: datetime
) -> None:
    # REFERENCES §4.5 step 2 (project rule), mirroring RFC 7089 §4.5.3 for TimeGates.
    chosen = choose(archive_of(demo_archive), demo_archive.uri_r(2020, "players"), target, tmp_path)
    assert chosen.chosen is not None and chosen.chosen.datetime == expected


def test_before_with_nothing_before_the_target_is_a_fetch_error(
    demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    uri_r = demo_archive.uri_r(2020, "players")
    new_year = datetime(2020, 1, 1, tzinfo=UTC)  # before the first capture, 15 March
    with pytest.raises(FetchError) as raised:
        capture(archive_of(demo_archive, rule="before"), uri_r, new_year, tmp_path)
    text = str(raised.value)
    assert "at or before 2020-01-01T00:00:00Z" in text and "holds 4" in text
    assert [r.bare_path for r in demo_archive.log] == ["/robots.txt", f"/timemap/{uri_r}"]


def test_with_nothing_in_the_window_the_error_names_the_window(
    demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    uri_r = demo_archive.uri_r(2020, "players")
    half_day = archive_of(demo_archive, within=timedelta(hours=12))
    with pytest.raises(FetchError) as raised:
        capture(half_day, uri_r, near(2020), tmp_path)
    text = str(raised.value)
    assert "12h" in text and "2020-06-30T00:00:00Z" in text
    assert "holds 4" in text  # the archive does hold captures, just none in the window
    # Nothing outside the window is fetched: only robots.txt and the TimeMap were asked for.
    assert [r.bare_path for r in demo_archive.log] == ["/robots.txt", f"/timemap/{uri_r}"]


# -- archived errors and redirects ---------------------------------------------------------------


@pytest.mark.parametrize(("season", "status"), [(2019, 404), (2015, 503)])
def test_an_archived_error_is_skipped_for_july_3_and_asked_for_once(
    demo_archive: DemoWebArchive, tmp_path: Path, season: int, status: int
) -> None:
    uri_r = demo_archive.uri_r(season, "players")
    got = capture(archive_of(demo_archive), uri_r, near(season), tmp_path)
    june_28, july_3 = schedule(season)[1], schedule(season)[2]
    assert got.memento_datetime == july_3
    assert got.status == 200
    (note,) = [n for n in got.notes if "skipped" in n]
    assert june_28.strftime("%Y-%m-%dT%H:%M:%SZ") in note and f"HTTP {status}" in note
    # RFC 7089 §4.5.5: an archived 4xx/5xx replays with its own status and Memento-Datetime; it
    # is what the archive holds, not a transient failure, so it is asked for exactly once.
    asked = demo_archive.requests_for(raw_path(uri_r, june_28))
    assert [record.status for record in asked] == [status]


def test_an_archived_redirect_is_skipped_and_never_followed(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    uri_r = demo_archive.uri_r(2017, "contracts")
    got = capture(archive_of(demo_archive), uri_r, near(2017), tmp_path)
    june_28, july_3 = schedule(2017)[1], schedule(2017)[2]
    assert got.memento_datetime == july_3
    (note,) = [n for n in got.notes if "skipped" in n]
    assert "2017-06-28T14:05:09Z" in note and "HTTP 302" in note
    asked = demo_archive.requests_for(raw_path(uri_r, june_28))
    assert [record.status for record in asked] == [302]
    # RFC 7089 §4.5.4: the archived 302's Location is the live front page; a capture source must
    # not end up on the live site, so the site hears nothing at all.
    assert demo_site.requests_for("/index.html") == []
    assert demo_site.log == []


# -- the bytes -----------------------------------------------------------------------------------


def test_the_original_bytes_are_fetched_and_not_noted_as_rewritten(
    demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    uri_r = demo_archive.uri_r(2020, "standings")
    got = capture(archive_of(demo_archive), uri_r, near(2020), tmp_path)
    june_28 = schedule(2020)[1]
    expected = raw_bytes(demo_archive, uri_r, june_28)
    assert got.body == expected
    assert got.sha256 == hashlib.sha256(expected).hexdigest()
    # Contract: a UTF-8 season's June 28 capture is render_page(league, path) at revision 0.
    page = render_page(build_league(), "/seasons/2020/standings.html")
    assert page is not None and expected == page.encode("utf-8")
    assert b"demo-archive-banner" not in got.body
    assert not [n for n in got.notes if "rewritten" in n]


def test_without_original_the_banner_variant_is_noted_as_rewritten(
    demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    uri_r = demo_archive.uri_r(2020, "standings")
    got = capture(archive_of(demo_archive, original=None), uri_r, near(2020), tmp_path)
    june_28 = schedule(2020)[1]
    assert got.final_url == demo_archive.url(banner_path(uri_r, june_28))
    assert b'<div id="demo-archive-banner">' in got.body  # contract: the visitor's view
    # RFC 7089 §3.1: a memento may differ from the original by rewritten links and banners;
    # spotting it by links that embed another absolute URL is common practice, no published source.
    assert any("looks rewritten" in note for note in got.notes)
    assert [r.bare_path for r in demo_archive.log if r.bare_path.startswith("/web/")] == [
        banner_path(uri_r, june_28)
    ]


def test_an_original_pattern_that_does_not_match_is_noted(
    demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    uri_r = demo_archive.uri_r(2020, "standings")
    wrong = OriginalRewrite(pattern=r"/memento/(\d{14})/", replace=r"/memento/\1id_/")
    got = capture(archive_of(demo_archive, original=wrong), uri_r, near(2020), tmp_path)
    june_28 = schedule(2020)[1]
    assert any("original does not match" in note for note in got.notes)
    assert got.final_url == demo_archive.url(banner_path(uri_r, june_28))  # fetched as is


# -- a TimeGate only -----------------------------------------------------------------------------


def test_a_timegate_only_archive_negotiates_with_an_imf_fixdate(
    demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    uri_r = demo_archive.uri_r(2020, "players")
    gate_only = archive_of(demo_archive, timemap=None, timegate=demo_archive.url("/timegate/{url}"))
    got = capture(gate_only, uri_r, near(2020), tmp_path)
    (asked,) = demo_archive.requests_for(f"/timegate/{uri_r}")
    sent = asked.headers["accept-datetime"]
    # RFC 7089 §2.1.1: rfc1123-date, GMT, case-sensitive; 30 June 2020 was a Tuesday.
    assert IMF_FIXDATE.fullmatch(sent), sent
    assert sent == "Tue, 30 Jun 2020 00:00:00 GMT"
    assert parse_accept_datetime(sent) == near(2020)  # the archive's own reading of it
    assert asked.status == 302  # RFC 7089 §4.2.1: the TimeGate redirects to the chosen URI-M
    june_28 = schedule(2020)[1]
    assert got.memento_datetime == june_28
    assert got.final_url == demo_archive.url(raw_path(uri_r, june_28))
    assert demo_archive.requests_for("/timemap/") == []
    assert len(demo_archive.requests_for(raw_path(uri_r, june_28))) == 1


@pytest.mark.parametrize(
    ("season", "status", "kind"),
    [(2019, 404, "an archived error"), (2015, 503, "an archived error"),
     (2017, 302, "an archived redirect")],
)  # fmt: skip
def test_a_timegate_only_archive_skips_an_archived_answer_asking_for_it_once(
    demo_site: DemoServer,
    demo_archive: DemoWebArchive,
    tmp_path: Path,
    season: int,
    status: int,
    kind: str,
) -> None:
    uri_r = demo_archive.uri_r(season, "players")
    gate_only = archive_of(demo_archive, timemap=None, timegate=demo_archive.url("/timegate/{url}"))
    got = capture(gate_only, uri_r, near(season), tmp_path)
    june_28, july_3 = schedule(season)[1], schedule(season)[2]
    assert got.memento_datetime == july_3
    (note,) = [n for n in got.notes if "skipped" in n]
    assert f"{kind}, HTTP {status}" in note
    assert demo_site.log == []  # RFC 7089 §4.5.4: an archived 302 to the live site is not followed
    # RFC 7089 §2.1.1, §4.5.4, §4.5.5: the archived answer carries Memento-Datetime and will not
    # change; capture_source.py keeps what negotiation fetched "so that it is not asked for
    # twice" — yet only a 2xx is kept, so the archived 3xx/4xx/5xx is fetched a second time.
    asked = demo_archive.requests_for(raw_path(uri_r, june_28))
    assert [record.status for record in asked] == [status]


# -- nothing held --------------------------------------------------------------------------------


def test_a_page_the_archive_never_captured_is_a_fetch_error(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    live_only = demo_site.url("/seasons/2026/players.html")  # still live: not archived
    assert demo_archive.captures(live_only) == []
    with pytest.raises(FetchError) as raised:
        capture(archive_of(demo_archive), live_only, near(2026), tmp_path)
    assert "holds no capture" in str(raised.value)
    (asked,) = demo_archive.requests_for(f"/timemap/{live_only}")
    assert asked.status == 404  # the contract: an unknown URI-R's TimeMap answers 404


# -- cache and politeness ------------------------------------------------------------------------


def test_a_memento_is_cached_as_immutable(demo_archive: DemoWebArchive, tmp_path: Path) -> None:
    uri_r = demo_archive.uri_r(2020, "contracts")
    first = capture(archive_of(demo_archive), uri_r, near(2020), tmp_path)
    second = capture(archive_of(demo_archive), uri_r, near(2020), tmp_path)
    june_28 = schedule(2020)[1]
    # RFC 7089 §2.1.1: Memento-Datetime promises the state "will no longer change", so the second
    # capture comes from the cache without asking (REFERENCES §4.6: cached indefinitely by URI-M).
    assert len(demo_archive.requests_for(raw_path(uri_r, june_28))) == 1
    assert second.body == first.body
    assert second.memento_datetime == june_28 and second.origin == "web-archive"


def test_the_archive_is_fetched_politely(demo_archive: DemoWebArchive, tmp_path: Path) -> None:
    archive = archive_of(demo_archive)
    for season in (2019, 2020):
        capture(archive, demo_archive.uri_r(season, "players"), near(season), tmp_path)
    log = demo_archive.log
    assert len(log) >= 6  # robots.txt, two TimeMaps, the 2019 404, two pages
    assert demo_archive.violations() == []  # its Crawl-delay kept, start to start
    # RFC 9309 §2.4: robots.txt may be cached; one fetch serves the whole session.
    assert len(demo_archive.requests_for("/robots.txt")) == 1
    for record in log:
        # RFC 9110 §10.1.5 User-Agent with the product token; §10.1.2 From for a robot.
        agent = record.headers.get("user-agent", "")
        assert agent.startswith("harvester/") and CONTACT in agent, agent
        assert record.headers.get("from") == "t@example.org"
