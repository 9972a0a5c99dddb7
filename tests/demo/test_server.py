"""Tests for the demo site's server, through a real HTTP client (httpx) on 127.0.0.1.

What the plumbing does for any routes (lifecycle, pacing, delays, the log) is tested in
test_loopback.py; here, the league's site as ``DemoServer`` serves it. Expected values come from
the documented contract (harvester/demo/routes.py and loopback.py), the demo league's documented
rules (harvester/demo/league.py), RFC 9110 and reference libraries
(urllib.robotparser, zlib, hashlib, csv, xml.etree, email.utils). Calendar weekdays in expected
dates were worked out by hand and checked with GNU ``date``.
"""

from __future__ import annotations

import csv
import hashlib
import re
import time
import zlib
from collections.abc import Callable, Iterator
from datetime import UTC, datetime
from email.utils import parsedate_to_datetime
from io import StringIO
from typing import Any
from urllib.robotparser import RobotFileParser
from xml.etree import ElementTree

import httpx
import pytest

from harvester.demo.league import League, build_league
from harvester.demo.pages import render_page, site_paths
from harvester.demo.server import DemoServer
from harvester.errors import HarvesterError
from tests.demo.polite import Polite, new_client

Factory = Callable[..., DemoServer]
MIB = 1 << 20
PLAYERS_2026 = "/seasons/2026/players.html"
# RFC 9110 §5.6.7: IMF-fixdate, e.g. "Sun, 06 Nov 1994 08:49:37 GMT".
IMF_FIXDATE = re.compile(
    r"(Mon|Tue|Wed|Thu|Fri|Sat|Sun), \d{2} (Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec) "
    r"\d{4} \d{2}:\d{2}:\d{2} GMT"
)


@pytest.fixture
def polite(demo_site: DemoServer) -> Iterator[Polite]:
    client = Polite(demo_site)
    yield client
    client.client.close()


@pytest.fixture(scope="module")
def league() -> League:
    return build_league()


# -- options ------------------------------------------------------------------


@pytest.mark.parametrize(
    ("options", "named"),
    [
        ({"crawl_delay": -0.1}, "crawl_delay"),
        ({"forced": {"/index.html": [200]}}, "forced['/index.html']"),
        ({"robots_status": 302}, "robots_status"),
        ({"keep_seasons": 0}, "keep_seasons"),
        ({"revision": -1}, "revision"),
    ],
)
def test_invalid_option_is_a_one_line_error(options: dict[str, Any], named: str) -> None:
    with pytest.raises(HarvesterError) as caught:
        DemoServer(**options)
    message = str(caught.value)
    assert named in message
    assert "\n" not in message


# -- pages -------------------------------------------------------------------------------------


def test_serves_every_generator_page_verbatim(demo_site_factory: Factory, league: League) -> None:
    site = demo_site_factory(keep_seasons=None, enforce=False)
    with new_client(site) as client:
        for path in site_paths(league):
            response = client.get(path)
            assert response.status_code == 200, path
            assert response.headers["content-type"] == "text/html; charset=utf-8"
            assert response.content == page(league, path).encode("utf-8"), path


def page(league: League, path: str, revision: int = 0) -> str:
    html = render_page(league, path, revision)
    assert html is not None
    return html


def test_root_redirects_to_the_index(polite: Polite) -> None:
    response = polite.get("/")
    assert response.status_code == 302
    assert response.headers["location"] == "/index.html"


@pytest.mark.parametrize(
    "path", ["/no/such.html", "/seasons/2026/goalies.html", "/players/p9999.html"]
)
def test_unknown_path_is_a_404_html_page(polite: Polite, path: str) -> None:
    response = polite.get(path)
    assert response.status_code == 404
    assert response.headers["content-type"] == "text/html; charset=utf-8"
    assert response.text.startswith("<!DOCTYPE html>")


# Worked out by hand from the contract: the latest season is 2026 (league.py LAST_SEASON); three
# are kept (2024-2026); "more than 5 years before 2026" is 2020 and earlier, which are gone.
RETENTION = {
    **dict.fromkeys(range(2012, 2021), 410),
    **dict.fromkeys(range(2021, 2024), 404),
    **dict.fromkeys(range(2024, 2027), 200),
}


def test_old_seasons_answer_404_or_410(demo_site_factory: Factory) -> None:
    site = demo_site_factory(enforce=False)
    with new_client(site) as client:
        for year, status in RETENTION.items():
            for kind in ("players", "contracts", "standings"):
                assert client.get(f"/seasons/{year}/{kind}.html").status_code == status, year


def test_retention_options(demo_site_factory: Factory) -> None:
    every = demo_site_factory(keep_seasons=None, enforce=False)
    one = demo_site_factory(keep_seasons=1, gone_after=2, enforce=False)
    with new_client(every) as client:
        assert client.get("/seasons/2012/players.html").status_code == 200
    with new_client(one) as client:
        # Keeping one season serves 2026 only; 2024 is 2 years old (404), 2023 is 3 (> 2: 410).
        statuses = [
            client.get(f"/seasons/{year}/players.html").status_code
            for year in (2026, 2025, 2024, 2023)
        ]
        assert statuses == [200, 404, 404, 410]


# -- robots.txt and the sitemap ----------------------------------------------------------------


def test_robots_txt_has_a_fractional_crawl_delay_and_rules(
    demo_site: DemoServer, polite: Polite
) -> None:
    response = polite.get("/robots.txt")
    assert response.status_code == 200
    assert response.headers["content-type"].startswith("text/plain")
    lines = response.text.splitlines()
    group = lines[lines.index("User-agent: *") :]
    delays = [line.partition(":")[2].strip() for line in group if line.startswith("Crawl-delay:")]
    assert delays == ["0.05"]  # the conftest's TEST_CRAWL_DELAY, in plain decimals
    assert "Disallow: /private/" in group
    assert "Disallow: /players/*.json$" in group
    assert f"Sitemap: {demo_site.base_url}/sitemap.xml" in lines


def test_robots_txt_read_by_urllib_robotparser(demo_site: DemoServer, polite: Polite) -> None:
    parser = RobotFileParser(demo_site.url("/robots.txt"))
    parser.parse(polite.get("/robots.txt").text.splitlines())
    # urllib.robotparser (reference library) reads no wildcards, so only plain rules are checked.
    assert not parser.can_fetch("ExampleHarvester", demo_site.url("/private/"))
    assert not parser.can_fetch("ExampleHarvester", demo_site.url("/private/notes.html"))
    assert parser.can_fetch("ExampleHarvester", demo_site.url("/index.html"))
    assert parser.can_fetch("ExampleHarvester", demo_site.url(PLAYERS_2026))
    assert parser.site_maps() == [demo_site.url("/sitemap.xml")]
    assert demo_site.requests_for("/private/") == []  # the log proves what was not requested
    private = polite.get("/private/")
    assert private.status_code == 200
    assert private.headers["content-type"] == "text/html; charset=utf-8"
    assert len(demo_site.requests_for("/private/")) == 1


def test_sitemap_lists_the_served_pages(demo_site: DemoServer, polite: Polite) -> None:
    response = polite.get("/sitemap.xml")
    assert response.status_code == 200
    root = ElementTree.fromstring(response.content)  # xml.etree (reference parser)
    namespace = "{http://www.sitemaps.org/schemas/sitemap/0.9}"  # sitemaps.org protocol 0.9
    assert root.tag == f"{namespace}urlset"
    locations = {loc.text for loc in root.iter(f"{namespace}loc")}
    assert demo_site.url("/index.html") in locations
    assert demo_site.url(PLAYERS_2026) in locations
    assert demo_site.url("/seasons/2024/standings.html") in locations
    assert demo_site.url("/seasons/2023/standings.html") not in locations  # not served
    assert demo_site.url("/private/") not in locations


def test_robots_txt_body_can_be_replaced(demo_site_factory: Factory) -> None:
    body = "User-agent: *\nDisallow: /\n"
    site = demo_site_factory(robots_txt=body)
    with new_client(site) as client:
        assert client.get("/robots.txt").text == body


@pytest.mark.parametrize("status", [404, 429, 500, 503])
def test_robots_txt_can_answer_a_status(demo_site_factory: Factory, status: int) -> None:
    site = demo_site_factory(robots_status=status)
    with new_client(site) as client:
        assert client.get("/robots.txt").status_code == status


def test_robots_txt_redirect_chain(demo_site_factory: Factory) -> None:
    site = demo_site_factory(robots_redirects=3, enforce=False)
    hops = []
    with new_client(site) as client:
        response = client.get("/robots.txt")
        while response.status_code == 302:
            hops.append(response.headers["location"])
            response = client.get(hops[-1])
    assert hops == ["/robots/hop/1", "/robots/hop/2", "/robots/hop/3"]
    assert response.status_code == 200
    assert "Crawl-delay: 0.05" in response.text.splitlines()


def test_robots_txt_redirect_chain_can_end_in_a_status(demo_site_factory: Factory) -> None:
    site = demo_site_factory(robots_redirects=1, robots_status=503, enforce=False)
    with new_client(site) as client:
        assert client.get("/robots.txt").headers["location"] == "/robots/hop/1"
        assert client.get("/robots/hop/1").status_code == 503


# -- pacing --------------------------------------------------------------------------------------


def test_request_sooner_than_the_crawl_delay_gets_429(demo_site: DemoServer) -> None:
    with new_client(demo_site) as client:
        assert client.get("/robots.txt").status_code == 200
        too_soon = client.get("/index.html")
        assert too_soon.status_code == 429  # RFC 6585 §4
        # RFC 9110 §10.2.3: delay-seconds = 1*DIGIT; the default is 1.
        assert too_soon.headers["retry-after"] == "1"
        assert [record.path for record in demo_site.violations()] == ["/index.html"]
        time.sleep(2 * demo_site.crawl_delay)
        assert client.get("/index.html").status_code == 200
    assert len(demo_site.violations()) == 1


def test_pacing_and_delay_options_reach_the_plumbing(demo_site_factory: Factory) -> None:
    # DemoServer hands these to loopback.LoopbackServer (test_loopback.py checks each in full).
    strict = demo_site_factory(crawl_delay=0.3, tolerance=0.2, retry_after=7)
    with new_client(strict) as client:
        assert client.get("/index.html").status_code == 200
        time.sleep(0.15)  # 0.15 s >= crawl_delay - tolerance = 0.1 s
        assert client.get("/index.html").status_code == 200
        too_soon = client.get("/index.html")
        assert (too_soon.status_code, too_soon.headers["retry-after"]) == (429, "7")
    # A crawl delay of 1 s: the second request comes too soon even on a busy machine.
    lenient = demo_site_factory(crawl_delay=1.0, enforce=False, slow={"/index.html": 0.3})
    with new_client(lenient) as client:
        assert client.get("/robots.txt").status_code == 200
        assert client.get("/index.html").status_code == 200  # too soon, but served
    assert [record.violation for record in lenient.log] == [False, True]


# -- forced statuses, huge and compressed responses --------------------------------------


def test_forced_statuses_come_in_order_then_normal_pages(demo_site_factory: Factory) -> None:
    site = demo_site_factory(forced={PLAYERS_2026: [503, 503]}, forced_retry_after=2)
    client = Polite(site)
    assert client.get("/index.html").status_code == 200  # other paths are not affected
    first, second, third = (client.get(PLAYERS_2026) for _ in range(3))
    assert [first.status_code, second.status_code, third.status_code] == [503, 503, 200]
    assert first.headers["retry-after"] == second.headers["retry-after"] == "2"
    assert "retry-after" not in third.headers
    client.client.close()


def test_forced_retry_after_as_http_date_and_forcing_later(demo_site_factory: Factory) -> None:
    when = datetime(2026, 12, 24, 18, 30, tzinfo=UTC)
    site = demo_site_factory(forced={"/index.html": [429]}, forced_retry_after=when)
    client = Polite(site)
    response = client.get("/index.html")
    assert response.status_code == 429
    assert response.headers["retry-after"] == "Thu, 24 Dec 2026 18:30:00 GMT"  # IMF-fixdate
    assert parsedate_to_datetime(response.headers["retry-after"]) == when  # email.utils
    site.force("/data.csv", [500])
    assert [client.get("/data.csv").status_code for _ in range(2)] == [500, 200]
    client.client.close()


@pytest.mark.parametrize(
    ("path", "declared"), [("/huge.html", True), ("/huge-chunked.html", False)]
)
def test_huge_page_streams_its_size(demo_site_factory: Factory, path: str, declared: bool) -> None:
    site = demo_site_factory(huge_bytes=3 * MIB)
    with new_client(site) as client, client.stream("GET", path) as response:
        received = sum(len(chunk) for chunk in response.iter_raw())
        headers = response.headers
    assert received == 3 * MIB
    if declared:
        assert headers["content-length"] == str(3 * MIB)
    else:
        assert "content-length" not in headers
        assert headers["transfer-encoding"] == "chunked"  # RFC 9112 §7.1


def test_gzip_bomb_really_inflates_large(demo_site_factory: Factory) -> None:
    site = demo_site_factory(bomb_bytes=16 * MIB)
    headers = {"Accept-Encoding": "identity"}  # served compressed anyway
    with (
        new_client(site) as client,
        client.stream("GET", "/bomb.html", headers=headers) as response,
    ):
        raw = b"".join(response.iter_raw())
        assert response.headers["content-encoding"] == "gzip"
    assert len(raw) * 100 < 16 * MIB
    inflater = zlib.decompressobj(wbits=31)  # zlib reading the gzip format (RFC 1952)
    inflated, pending, start = 0, raw, b""
    while pending and not inflater.eof:
        piece = inflater.decompress(pending, MIB)  # bounded steps: never the whole bomb at once
        start = start or piece[:15]
        inflated += len(piece)
        pending = inflater.unconsumed_tail
    assert inflated == 16 * MIB
    assert start == b"<!DOCTYPE html>"


def test_data_csv_is_the_latest_standings(polite: Polite) -> None:
    response = polite.get("/data.csv")
    assert response.headers["content-type"] == "text/csv; charset=utf-8"
    rows = list(csv.reader(StringIO(response.text)))  # csv module (reference reader)
    assert rows[0] == [
        "club",
        "games",
        "wins",
        "draws",
        "losses",
        "goals_for",
        "goals_against",
        "points",
    ]
    # league.py: 2 conferences x 5 clubs, a double round robin (18 games), 2 points a win.
    assert len(rows) == 1 + 10
    for club, games, wins, draws, losses, _, _, points in rows[1:]:
        assert re.fullmatch(r"[A-Z]{3}", club)
        assert int(games) == int(wins) + int(draws) + int(losses) == 18
        assert int(points) == 2 * int(wins) + int(draws)


def test_redirect_loop(demo_site_factory: Factory) -> None:
    site = demo_site_factory(enforce=False)
    with new_client(site) as client:
        assert client.get("/loop/a").headers["location"] == "/loop/b"
        assert client.get("/loop/b").headers["location"] == "/loop/a"
        with pytest.raises(httpx.TooManyRedirects):
            client.get("/loop/a", follow_redirects=True)


# -- validators and conditional requests ------------------------------------------------------


@pytest.mark.parametrize("path", [PLAYERS_2026, "/index.html", "/robots.txt", "/data.csv"])
def test_etag_is_a_strong_hash_of_the_body(polite: Polite, path: str) -> None:
    response = polite.get(path)
    etag = response.headers["etag"]
    assert re.fullmatch(r'"[0-9a-f]{16}"', etag)  # strong: no W/ prefix (RFC 9110 §8.8.3)
    assert etag == f'"{hashlib.sha256(response.content).hexdigest()[:16]}"'  # hashlib


def test_last_modified_cache_control_and_date(polite: Polite) -> None:
    latest, older, index = (
        polite.get(p) for p in (PLAYERS_2026, "/seasons/2025/players.html", "/index.html")
    )
    assert latest.headers["last-modified"] == "Wed, 01 Jul 2026 00:00:00 GMT"
    assert older.headers["last-modified"] == "Tue, 01 Jul 2025 00:00:00 GMT"
    assert index.headers["last-modified"] == "Wed, 01 Jul 2026 00:00:00 GMT"
    assert latest.headers["cache-control"] == older.headers["cache-control"] == "max-age=60"
    assert "cache-control" not in index.headers
    missing = polite.get("/missing.html")
    for response in (latest, older, index, missing):
        assert IMF_FIXDATE.fullmatch(response.headers["date"])
        sent = parsedate_to_datetime(response.headers["date"])
        assert abs((datetime.now(UTC) - sent).total_seconds()) < 5


@pytest.mark.parametrize(("max_age", "expected"), [(None, None), (5, "max-age=5")])
def test_max_age_option(
    demo_site_factory: Factory, max_age: int | None, expected: str | None
) -> None:
    site = demo_site_factory(max_age=max_age)
    with new_client(site) as client:
        assert client.get(PLAYERS_2026).headers.get("cache-control") == expected


def conditional(client: Polite, path: str, **headers: str) -> tuple[httpx.Response, httpx.Response]:
    """A plain GET, then one with ``headers``, their ``{etag}``/``{modified}`` from the first."""
    first = client.get(path)
    values = {"etag": first.headers["etag"], "modified": first.headers["last-modified"]}
    named = {name.replace("_", "-"): value.format(**values) for name, value in headers.items()}
    return first, client.get(path, headers=named)


@pytest.mark.parametrize(
    ("if_none_match", "status"),
    [
        ("{etag}", 304),
        ("W/{etag}", 304),  # W/"1" vs "1" match weakly (RFC 9110 §8.8.3.2 Table 3; §13.1.2)
        ('"nope", W/{etag}', 304),  # a list: any member may match
        ("*", 304),  # §13.1.2: "*" matches any current representation
        ('"nope"', 200),
    ],
)
def test_if_none_match_uses_weak_comparison(
    polite: Polite, if_none_match: str, status: int
) -> None:
    _, response = conditional(polite, PLAYERS_2026, if_none_match=if_none_match)
    assert response.status_code == status


def test_304_has_no_body_and_carries_etag_date_and_cache_control(polite: Polite) -> None:
    full, response = conditional(polite, PLAYERS_2026, if_none_match="{etag}")
    assert response.status_code == 304
    assert response.content == b""  # RFC 9110 §15.4.5
    assert response.headers["etag"] == full.headers["etag"]
    assert response.headers["cache-control"] == full.headers["cache-control"]
    assert IMF_FIXDATE.fullmatch(response.headers["date"])
    head = polite.request("HEAD", PLAYERS_2026, headers={"If-None-Match": full.headers["etag"]})
    assert head.status_code == 304


@pytest.mark.parametrize(
    ("if_modified_since", "status"),
    [
        ("{modified}", 304),  # equal: not modified since (RFC 9110 §13.1.3)
        ("Tue, 30 Jun 2026 23:59:59 GMT", 200),  # one second before Last-Modified
        ("Thu, 01 Oct 2026 00:00:00 GMT", 304),
        (
            "Wednesday, 01-Jul-26 00:00:00 GMT",
            304,
        ),  # RFC 850 form, which recipients accept (§5.6.7)
        ("Wed Jul  1 00:00:00 2026", 304),  # asctime form (§5.6.7)
        ("yesterday", 200),  # not an HTTP-date: ignored (§13.1.3)
    ],
)
def test_if_modified_since_without_if_none_match(
    polite: Polite, if_modified_since: str, status: int
) -> None:
    _, response = conditional(polite, PLAYERS_2026, if_modified_since=if_modified_since)
    assert response.status_code == status


@pytest.mark.parametrize(
    ("if_none_match", "if_modified_since", "status"),
    [
        ('"nope"', "{modified}", 200),  # IMS would say 304, but INM is present (§13.1.3)
        ("{etag}", "Mon, 01 Jan 2001 00:00:00 GMT", 304),  # INM decides (§13.2.2 step 3)
    ],
)
def test_if_none_match_present_makes_if_modified_since_ignored(
    polite: Polite, if_none_match: str, if_modified_since: str, status: int
) -> None:
    _, response = conditional(
        polite, PLAYERS_2026, if_none_match=if_none_match, if_modified_since=if_modified_since
    )
    assert response.status_code == status


def test_advancing_the_clock_changes_the_latest_season(
    demo_site: DemoServer, polite: Polite, league: League
) -> None:
    paths = (
        PLAYERS_2026,
        "/seasons/2026/contracts.html",
        "/seasons/2026/standings.html",
        "/seasons/2025/players.html",
    )
    before = {path: polite.get(path) for path in paths}
    assert demo_site.advance() == 1
    after = {path: polite.get(path) for path in paths}
    for path in paths:
        assert after[path].content == page(league, path, 1).encode("utf-8")
    # league.py: each revision moves goals (and adds shots) between teammates and raises one
    # disclosed salary, so players and contracts change; club totals, so standings, do not.
    for path in paths[:2]:
        assert after[path].headers["etag"] != before[path].headers["etag"]
        assert after[path].headers["last-modified"] == "Thu, 02 Jul 2026 00:00:00 GMT"
        assert (
            polite.get(path, headers={"If-None-Match": before[path].headers["etag"]}).status_code
            == 200
        )
    for path in paths[2:]:
        assert after[path].headers["etag"] == before[path].headers["etag"]
        assert after[path].headers["last-modified"] == before[path].headers["last-modified"]
    modified = {"If-Modified-Since": before[PLAYERS_2026].headers["last-modified"]}
    assert polite.get(PLAYERS_2026, headers=modified).status_code == 200
    assert demo_site.advance(revision=3) == 3
    assert polite.get(PLAYERS_2026).headers["last-modified"] == "Sat, 04 Jul 2026 00:00:00 GMT"
    demo_site.revision = 0
    assert polite.get(PLAYERS_2026).headers["etag"] == before[PLAYERS_2026].headers["etag"]
