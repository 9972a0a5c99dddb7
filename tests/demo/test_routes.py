"""Tests for the league site's routes, called directly: no server, no socket, one reply at a time.

The same contract is tested over HTTP in test_server.py; here the routes answer a ``Request``
built by hand, so base URLs, retention edges and option checks are quick to pin down. Expected
values come from the contract in harvester/demo/routes.py and the league's data model
(harvester/demo/league.py: seasons 2012-2026); weekdays were worked out by hand.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any
from xml.etree import ElementTree

import pytest

from harvester.demo.league import League, build_league
from harvester.demo.loopback import Request
from harvester.demo.pages import render_page
from harvester.demo.routes import LeagueRoutes
from harvester.errors import HarvesterError

BASE = "http://127.0.0.1:8123"
PLAYERS_2026 = "/seasons/2026/players.html"


@pytest.fixture(scope="module")
def league() -> League:
    return build_league()


def get(path: str, base_url: str = BASE) -> Request:
    """A plain GET of ``path`` as the plumbing would hand it over."""
    return Request("GET", path, path.partition("?")[0], {}, base_url)


def test_a_page_is_served_verbatim_without_a_server(league: League) -> None:
    reply = LeagueRoutes(league=league).reply(get("/index.html?from=test"))
    expected = render_page(league, "/index.html")
    assert expected is not None
    assert reply.status == 200
    assert reply.headers["Content-Type"] == "text/html; charset=utf-8"
    assert reply.body == expected.encode("utf-8")


def test_robots_txt_names_the_base_url_it_is_asked_from(league: League) -> None:
    routes = LeagueRoutes(league=league)
    one = routes.reply(get("/robots.txt")).body.decode()
    other = routes.reply(get("/robots.txt", "http://127.0.0.1:9")).body.decode()
    assert f"Sitemap: {BASE}/sitemap.xml" in one.splitlines()
    assert "Sitemap: http://127.0.0.1:9/sitemap.xml" in other.splitlines()


@pytest.mark.parametrize(
    ("crawl_delay", "written"),
    [(0.25, "0.25"), (1e-05, "0.00001"), (10.0, "10"), (0.0, "0")],  # never 1e-05 or 1E+1
)
def test_crawl_delay_is_written_in_plain_decimals(
    league: League, crawl_delay: float, written: str
) -> None:
    body = LeagueRoutes(league=league, crawl_delay=crawl_delay).reply(get("/robots.txt")).body
    assert f"Crawl-delay: {written}" in body.decode().splitlines()


def test_sitemap_lists_exactly_the_served_pages(league: League) -> None:
    routes = LeagueRoutes(league=league, keep_seasons=2)
    root = ElementTree.fromstring(routes.reply(get("/sitemap.xml")).body)
    locations = [loc.text for loc in root.iter("{http://www.sitemaps.org/schemas/sitemap/0.9}loc")]
    # The index, 2 kept seasons x 3 season pages, every player's page and the 10 clubs' pages.
    assert len(locations) == 1 + 2 * 3 + len(league.players) + 10
    assert f"{BASE}/seasons/2025/contracts.html" in locations
    assert f"{BASE}/seasons/2024/contracts.html" not in locations
    assert all(location and location.startswith(f"{BASE}/") for location in locations)


@pytest.mark.parametrize(
    ("year", "status"),
    # keep_seasons=2, gone_after=3, latest 2026: age 0-1 served, 2-3 404, 4 and more 410.
    [(2026, 200), (2025, 200), (2024, 404), (2023, 404), (2022, 410), (2012, 410)],
)
def test_retention_edges(league: League, year: int, status: int) -> None:
    routes = LeagueRoutes(league=league, keep_seasons=2, gone_after=3)
    assert routes.reply(get(f"/seasons/{year}/standings.html")).status == status


def test_forced_statuses_are_per_path_and_used_up(league: League) -> None:
    routes = LeagueRoutes(league=league, forced={"/data.csv": [500, 503]}, forced_retry_after="9")
    first = routes.reply(get("/data.csv"))
    assert (first.status, first.headers["Retry-After"]) == (500, "9")
    assert routes.reply(get("/index.html")).status == 200  # another path is not affected
    assert routes.reply(get("/data.csv?x=1")).status == 503  # the query is not part of the path
    assert routes.reply(get("/data.csv")).status == 200
    routes.force("/index.html", [404])
    assert routes.reply(get("/index.html")).status == 404


def test_forced_retry_after_date_is_written_in_gmt(league: League) -> None:
    # 20:30 at UTC+2 is 18:30 GMT; 24 December 2026 is a Thursday.
    when = datetime.fromisoformat("2026-12-24T20:30:00+02:00")
    routes = LeagueRoutes(league=league, forced={"/": [429]}, forced_retry_after=when)
    assert routes.reply(get("/")).headers["Retry-After"] == "Thu, 24 Dec 2026 18:30:00 GMT"


def test_a_refused_force_queues_nothing(league: League) -> None:
    routes = LeagueRoutes(league=league)
    with pytest.raises(HarvesterError, match=r"forced\['/index.html'\]"):
        routes.force("/index.html", [503, 302])
    assert routes.reply(get("/index.html")).status == 200


def test_last_modified_counts_the_revisions_that_changed_the_page(league: League) -> None:
    # league.py: every revision changes players' goals, never a club's totals; 1 July 2026 was
    # a Wednesday, so two revisions later is Friday 3 July.
    routes = LeagueRoutes(league=league, revision=2)
    players = routes.reply(get(PLAYERS_2026))
    standings = routes.reply(get("/seasons/2026/standings.html"))
    assert players.headers["Last-Modified"] == "Fri, 03 Jul 2026 00:00:00 GMT"
    assert standings.headers["Last-Modified"] == "Wed, 01 Jul 2026 00:00:00 GMT"
    assert routes.advance() == 3
    assert routes.reply(get(PLAYERS_2026)).headers["Last-Modified"] == (
        "Sat, 04 Jul 2026 00:00:00 GMT"
    )


def test_last_modified_is_never_in_the_future() -> None:
    # RFC 9110 §8.8.2.1: never later than the response's Date. Enough revisions date the page
    # 30 days from now (one day each after 1 July 2026), so the routes must send now instead.
    before = datetime.now(UTC).replace(microsecond=0)
    revision = (before - datetime(2026, 7, 1, tzinfo=UTC)).days + 30
    reply = LeagueRoutes(revision=revision).reply(get(PLAYERS_2026))
    after = datetime.now(UTC)
    modified = datetime.strptime(reply.headers["Last-Modified"], "%a, %d %b %Y %H:%M:%S GMT")
    assert before <= modified.replace(tzinfo=UTC) <= after


@pytest.mark.parametrize(
    ("options", "named"),
    [
        ({"keep_seasons": 0}, "keep_seasons"),
        ({"gone_after": -1}, "gone_after"),
        ({"max_age": -5}, "max_age"),
        ({"robots_redirects": -1}, "robots_redirects"),
        ({"robots_status": 200}, "robots_status"),
        ({"bomb_bytes": -1}, "huge_bytes/bomb_bytes"),
        ({"revision": -2}, "revision"),
    ],
)
def test_invalid_option_is_a_one_line_error(options: dict[str, Any], named: str) -> None:
    with pytest.raises(HarvesterError) as caught:
        LeagueRoutes(**options)
    message = str(caught.value)
    assert named in message
    assert "\n" not in message
