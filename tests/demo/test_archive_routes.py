"""Tests for the web archive's routes, called directly: no server, no socket, one reply at a time.

The same archive is tested over HTTP in test_web_archive.py. Expected values come from the
contract in harvester/demo/archive_routes.py (the capture schedule), RFC 7089 (cited beside each
check), the live site's retention (harvester/demo/routes.py: latest 2026 keeps 2024-2026) and the
league's documented revisions (harvester/demo/league.py: revisions move goals between teammates
and change one salary, so standings stay). Weekdays and the tie's midpoint were worked out by
hand and checked with GNU ``date``.
"""

from __future__ import annotations

import html
import re

import pytest

from harvester.demo.archive_routes import ArchiveRoutes, rewrite_links
from harvester.demo.league import League, build_league
from harvester.demo.loopback import Request
from harvester.demo.pages import render_page
from harvester.errors import HarvesterError

SITE = "http://127.0.0.1:8650"
BASE = "http://127.0.0.1:8651"
PLAYERS_2019 = f"{SITE}/seasons/2019/players.html"
# The four captures of a season page, by the contract's schedule (2019: no special capture is
# a 200 page, except that 2019's June 28 capture is the archived 404).
TIMES_2019 = ("20190315102000", "20190628140509", "20190703083000", "20191120164500")


@pytest.fixture(scope="module")
def league() -> League:
    return build_league()


@pytest.fixture(scope="module")
def routes(league: League) -> ArchiveRoutes:
    return ArchiveRoutes(site=SITE, league=league)


def get(target: str, headers: dict[str, str] | None = None) -> Request:
    """A GET of ``target`` as the plumbing would hand it over (header names lower-cased)."""
    return Request("GET", target, target.partition("?")[0], headers or {}, BASE)


def memento(timestamp: str, uri_r: str, *, raw: bool = False) -> str:
    return f"/web/{timestamp}{'raw' if raw else ''}/{uri_r}"


# -- holdings -------------------------------------------------------------------------------


def test_the_archive_holds_exactly_the_seasons_the_live_site_retired(
    routes: ArchiveRoutes,
) -> None:
    # routes.py: latest 2026 with keep_seasons=3 serves 2024-2026; 2012-2023 answer 404 or 410.
    assert routes.holdings.seasons == tuple(range(2012, 2024))
    assert len(routes.holdings.uris) == 12 * 3
    assert f"{SITE}/seasons/2023/standings.html" in routes.holdings.uris
    assert f"{SITE}/seasons/2024/standings.html" not in routes.holdings.uris


def test_held_seasons_follow_the_leagues_latest_season(league: League) -> None:
    # A league whose latest season is 2021: the live site keeps 2019-2021, the archive 2012-2018.
    shorter = League(league.seed, league.clubs, league.players, league.seasons[:10])
    assert ArchiveRoutes(site=SITE, league=shorter).holdings.seasons == tuple(range(2012, 2019))


def test_an_uncaptured_page_or_a_served_season_is_unknown(routes: ArchiveRoutes) -> None:
    for uri_r in (f"{SITE}/seasons/2024/players.html", f"{SITE}/index.html"):
        assert routes.reply(get(f"/timemap/{uri_r}")).status == 404
        assert routes.reply(get(f"/timegate/{uri_r}")).status == 404
        assert routes.reply(get(memento(TIMES_2019[0], uri_r))).status == 404
    # Another host's page with the same path is another URI-R (RFC 7089 §1.2).
    other = "http://127.0.0.1:9/seasons/2019/players.html"
    assert routes.reply(get(f"/timemap/{other}")).status == 404


@pytest.mark.parametrize(
    "target",
    ["/", "/web/", "/timemap/", "/web/2019/" + PLAYERS_2019, "/web/201906281405090/x", "/x"],
)
def test_anything_else_is_404(routes: ArchiveRoutes, target: str) -> None:
    assert routes.reply(get(target)).status == 404


def test_a_query_makes_another_uri_r(routes: ArchiveRoutes) -> None:
    # The URI-R is the whole rest of the target (RFC 7089 §1.2), so a query is part of it.
    assert routes.reply(get(f"/timemap/{PLAYERS_2019}?sort=goals")).status == 404


@pytest.mark.parametrize(
    "written",
    [
        "http:/127.0.0.1:8650/seasons/2019/players.html",
        "http%3A%2F%2F127.0.0.1%3A8650%2Fseasons%2F2019%2Fplayers.html",
    ],
)
def test_a_merged_slash_or_percent_encoding_still_names_the_uri_r(
    routes: ArchiveRoutes, written: str
) -> None:
    # Common practice, no published source: clients and proxies merge "//" or encode the URI-R.
    reply = routes.reply(get(f"/timemap/{written}"))
    assert reply.status == 200
    assert f'<{PLAYERS_2019}>; rel="original"' in reply.body.decode()


# -- options --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("options", "named"),
    [
        ({"site": "http://example.org"}, "site"),
        ({"site": "http://127.0.0.2:8650"}, "site"),
        ({"site": SITE, "timemap_page_size": 0}, "timemap_page_size"),
        ({"site": SITE, "crawl_delay": -1.0}, "crawl_delay"),
    ],
)
def test_bad_options_are_named(league: League, options: dict[str, object], named: str) -> None:
    with pytest.raises(HarvesterError, match=f"option {named} ="):
        ArchiveRoutes(league=league, **options)  # type: ignore[arg-type]


def test_robots_txt_allows_all_and_names_the_crawl_delay(league: League) -> None:
    reply = ArchiveRoutes(site=SITE, league=league, crawl_delay=0.05).reply(get("/robots.txt"))
    assert reply.headers["Content-Type"].startswith("text/plain")  # RFC 9309 §2.3
    assert reply.body.decode().splitlines() == ["User-agent: *", "Crawl-delay: 0.05", "Allow: /"]


# -- TimeGate (RFC 7089 §4.2.1, §4.5.3) -------------------------------------------------------


@pytest.mark.parametrize(
    ("accept_datetime", "chosen"),
    [
        ("Sun, 30 Jun 2019 00:00:00 GMT", TIMES_2019[1]),  # 33:54:51 before vs 80:30:00 after
        ("Fri, 28 Jun 2019 14:05:09 GMT", TIMES_2019[1]),  # exact
        ("Mon, 01 Jan 1990 00:00:00 GMT", TIMES_2019[0]),  # RFC 7089 §4.5.3: before the first
        ("Thu, 01 Jan 2026 00:00:00 GMT", TIMES_2019[3]),  # RFC 7089 §4.5.3: after the last
        # Midway between July 3 08:30:00 and Nov 20 16:45:00: the earlier (REFERENCES §4.5,
        # a project rule, common practice, no published source); one second later, the later.
        ("Wed, 11 Sep 2019 12:37:30 GMT", TIMES_2019[2]),
        ("Wed, 11 Sep 2019 12:37:31 GMT", TIMES_2019[3]),
    ],
)
def test_the_timegate_redirects_to_the_closest_memento(
    routes: ArchiveRoutes, accept_datetime: str, chosen: str
) -> None:
    reply = routes.reply(get(f"/timegate/{PLAYERS_2019}", {"accept-datetime": accept_datetime}))
    assert reply.status == 302  # RFC 7089 §4.2.1
    assert reply.headers["Location"] == BASE + memento(chosen, PLAYERS_2019)
    assert reply.headers["Vary"] == "accept-datetime"  # RFC 7089 §4.2.1, §2.1.2
    assert "Memento-Datetime" not in reply.headers  # RFC 7089 §4.2.1


def test_without_accept_datetime_the_timegate_picks_the_most_recent(routes: ArchiveRoutes) -> None:
    reply = routes.reply(get(f"/timegate/{PLAYERS_2019}"))
    assert reply.status == 302
    # RFC 7089 §4.5.3: no Accept-Datetime → the most recent memento.
    assert reply.headers["Location"] == BASE + memento(TIMES_2019[3], PLAYERS_2019)


@pytest.mark.parametrize(
    "accept_datetime",
    [
        "2019-06-30T00:00:00Z",
        "Sun, 30 Jun 2019 00:00:00 UTC",  # RFC 7089 §2.1.1: GMT only
        "sun, 30 Jun 2019 00:00:00 GMT",  # RFC 7089 §2.1.1: case-sensitive
        "Sunday, 30-Jun-19 00:00:00 GMT",  # an HTTP obs-date (RFC 9110 §5.6.7), not rfc1123
        "Sun, 30 Jun 2019 00:00:60 GMT",  # RFC 7089 §2.1.1: seconds 00-59
        "Sun, 31 Jun 2019 00:00:00 GMT",  # no such day
        "",
    ],
)
def test_a_malformed_accept_datetime_is_400(routes: ArchiveRoutes, accept_datetime: str) -> None:
    request = get(f"/timegate/{PLAYERS_2019}", {"accept-datetime": accept_datetime})
    assert routes.reply(request).status == 400  # RFC 7089 §4.5.3


def test_the_timegate_links_the_original_once_and_the_timemap(routes: ArchiveRoutes) -> None:
    link = routes.reply(get(f"/timegate/{PLAYERS_2019}")).headers["Link"]
    assert link.count('rel="original"') == 1  # RFC 7089 §2.2.1: exactly one
    assert link.startswith(f'<{PLAYERS_2019}>; rel="original", ')
    timemap = f'<{BASE}/timemap/{PLAYERS_2019}>; rel="timemap"; type="application/link-format"'
    # RFC 7089 §2.2.3: type SHOULD, from/until MAY.
    span = '; from="Fri, 15 Mar 2019 10:20:00 GMT"; until="Wed, 20 Nov 2019 16:45:00 GMT"'
    assert timemap + span in link


# -- mementos (RFC 7089 §4.1.1, §4.5.4, §4.5.5, §4.5.7) ---------------------------------------


def test_raw_is_the_rendered_page_byte_for_byte(routes: ArchiveRoutes, league: League) -> None:
    reply = routes.reply(get(memento(TIMES_2019[3], PLAYERS_2019, raw=True)))
    expected = render_page(league, "/seasons/2019/players.html")  # revision 0: final numbers
    assert expected is not None
    assert reply.status == 200
    assert reply.headers["Content-Type"] == "text/html; charset=utf-8"
    assert reply.body == expected.encode("utf-8")
    assert b"demo-archive-banner" not in reply.body


def test_the_visitor_view_has_the_banner_and_rewritten_links(routes: ArchiveRoutes) -> None:
    text = routes.reply(get(memento(TIMES_2019[3], PLAYERS_2019))).body.decode("utf-8")
    banner = re.search(r'<body>\n<div id="demo-archive-banner">(.*?)</div>\n', text)
    assert banner is not None and text.count("demo-archive-banner") == 1
    assert "Wed, 20 Nov 2019 16:45:00 GMT" in banner[1]
    assert f'<a href="/timemap/{PLAYERS_2019}">all captures</a>' in banner[1]
    # RFC 7089 §3.1 allows rewritten bodies; every site link now points into the archive.
    assert 'href="/players/' not in text and 'href="/index.html"' not in text
    assert f'href="/web/20191120164500/{SITE}/index.html"' in text
    assert re.search(rf'href="/web/20191120164500/{re.escape(SITE)}/players/p\d{{4}}\.html"', text)


def test_links_are_rewritten_only_when_they_point_at_the_site() -> None:
    # The pages link with absolute paths only; absolute URLs to {site} go the same way, other
    # hosts' links, protocol-relative ones and relative ones stay (RFC 3986 §5.2 resolves the
    # last against the URI-M, so they reach the archive by themselves).
    page = (
        f'<a href="{SITE}/seasons/2019/contracts.html">c</a><a href="{SITE}">home</a>'
        '<a href="http://127.0.0.1:9/x">other</a><a href="//127.0.0.1:9/y">p</a>'
        '<a href="standings.html">s</a><img src="/logo.png">'
    )
    assert rewrite_links(page, SITE, "20191120164500") == (
        f'<a href="/web/20191120164500/{SITE}/seasons/2019/contracts.html">c</a>'
        f'<a href="/web/20191120164500/{SITE}">home</a>'
        '<a href="http://127.0.0.1:9/x">other</a><a href="//127.0.0.1:9/y">p</a>'
        f'<a href="standings.html">s</a><img src="/web/20191120164500/{SITE}/logo.png">'
    )


def test_both_variants_carry_the_memento_headers(routes: ArchiveRoutes) -> None:
    for raw in (False, True):
        headers = routes.reply(get(memento(TIMES_2019[2], PLAYERS_2019, raw=raw))).headers
        assert headers["Memento-Datetime"] == "Wed, 03 Jul 2019 08:30:00 GMT"  # RFC 7089 §2.1.1
        assert "Vary" not in headers  # RFC 7089 §4.1.1: never accept-datetime on a URI-M
        link = headers["Link"]
        assert link.count('rel="original"') == 1  # RFC 7089 §2.2.1
        assert f'<{BASE}/timegate/{PLAYERS_2019}>; rel="timegate"' in link  # RFC 7089 §2.2.2
        # RFC 7089 §2.2.4: neighbours with their datetimes (July 3 is the third of four).
        for rel, when, date in (
            ("first", TIMES_2019[0], "Fri, 15 Mar 2019 10:20:00 GMT"),
            ("prev", TIMES_2019[1], "Fri, 28 Jun 2019 14:05:09 GMT"),
            ("next", TIMES_2019[3], "Wed, 20 Nov 2019 16:45:00 GMT"),
            ("last", TIMES_2019[3], "Wed, 20 Nov 2019 16:45:00 GMT"),
        ):
            uri_m = BASE + memento(when, PLAYERS_2019)
            assert f'<{uri_m}>; rel="{rel} memento"; datetime="{date}"' in link


def test_the_first_memento_has_no_prev(routes: ArchiveRoutes) -> None:
    link = routes.reply(get(memento(TIMES_2019[0], PLAYERS_2019))).headers["Link"]
    assert 'rel="prev memento"' not in link and 'rel="next memento"' in link


def test_the_march_capture_shows_earlier_numbers(routes: ArchiveRoutes) -> None:
    # The contract: March at revision 2, June 28 on at revision 0. league.py: a revision moves
    # goals and changes one salary, never the standings.
    def raw(kind: str, when: str) -> bytes:
        uri_r = f"{SITE}/seasons/2020/{kind}.html"
        return routes.reply(get(memento(when, uri_r, raw=True))).body

    assert raw("players", "20200315102000") != raw("players", "20200628140509")
    assert raw("contracts", "20200315102000") != raw("contracts", "20200628140509")
    assert raw("standings", "20200315102000") == raw("standings", "20200628140509")
    # Later captures of the final numbers are the same bytes.
    assert raw("players", "20200628140509") == raw("players", "20201120164500")


@pytest.mark.parametrize(("season", "status"), [(2015, 503), (2019, 404)])
def test_an_archived_error_replays_with_its_status(
    routes: ArchiveRoutes, season: int, status: int
) -> None:
    uri_r = f"{SITE}/seasons/{season}/standings.html"
    for raw in (False, True):
        reply = routes.reply(get(memento(f"{season}0628140509", uri_r, raw=raw)))
        assert reply.status == status  # RFC 7089 §4.5.5: the archived status
        assert reply.headers["Memento-Datetime"].endswith(f"28 Jun {season} 14:05:09 GMT")
        assert f"{status}".encode() in reply.body
        assert "ETag" not in reply.headers


def test_an_archived_redirect_replays_as_a_302_with_memento_datetime(routes: ArchiveRoutes) -> None:
    uri_r = f"{SITE}/seasons/2017/contracts.html"
    for raw in (False, True):
        reply = routes.reply(get(memento("20170628140509", uri_r, raw=raw)))
        assert reply.status == 302  # RFC 7089 §4.5.4: the archived 3xx, as it was
        assert reply.headers["Location"] == f"{SITE}/index.html"  # a live URI-R (§4.5.4)
        assert reply.headers["Memento-Datetime"] == "Wed, 28 Jun 2017 14:05:09 GMT"


@pytest.mark.parametrize("raw", [False, True])
def test_a_timestamp_between_captures_redirects_to_the_closest(
    routes: ArchiveRoutes, raw: bool
) -> None:
    reply = routes.reply(get(memento("20190630000000", PLAYERS_2019, raw=raw)))
    assert reply.status == 302
    assert reply.headers["Location"] == BASE + memento(TIMES_2019[1], PLAYERS_2019, raw=raw)
    assert "Memento-Datetime" not in reply.headers  # RFC 7089 §4.5.7: an intermediate resource
    assert "Vary" not in reply.headers
    assert reply.headers["Link"] == f'<{PLAYERS_2019}>; rel="original"'  # RFC 7089 §4.5.7


def test_fourteen_digits_that_are_no_time_are_404(routes: ArchiveRoutes) -> None:
    assert routes.reply(get(memento("20191301000000", PLAYERS_2019))).status == 404


# -- windows-1252 captures ----------------------------------------------------------------------


@pytest.mark.parametrize("kind", ["players", "contracts", "standings"])
def test_old_captures_are_windows_1252_and_read_as_the_same_text(
    routes: ArchiveRoutes, league: League, kind: str
) -> None:
    uri_r = f"{SITE}/seasons/2012/{kind}.html"
    reply = routes.reply(get(memento("20120703083000", uri_r, raw=True)))
    assert reply.headers["Content-Type"] == "text/html; charset=windows-1252"
    assert b"\x97" in reply.body  # EM DASH in windows-1252 (WHATWG Encoding, index-windows-1252)
    with pytest.raises(UnicodeDecodeError):
        reply.body.decode("utf-8")
    page = render_page(league, f"/seasons/2012/{kind}.html")
    assert page is not None and "\u2014" in page
    declared = page.replace('<meta charset="utf-8">', '<meta charset="windows-1252">')
    assert declared != page
    # U+2212 is not in windows-1252: written as a character reference (HTML §13.1.4), which
    # html.unescape reads back, so the text is the same.
    assert html.unescape(reply.body.decode("cp1252")) == html.unescape(declared)


def test_banner_and_raw_share_the_declared_charset(routes: ArchiveRoutes) -> None:
    uri_r = f"{SITE}/seasons/2014/players.html"
    raw = routes.reply(get(memento("20141120164500", uri_r, raw=True)))
    banner = routes.reply(get(memento("20141120164500", uri_r)))
    assert raw.headers["Content-Type"] == banner.headers["Content-Type"]
    assert b"\x97" in banner.body and b"demo-archive-banner" in banner.body


def test_a_2015_capture_is_utf_8(routes: ArchiveRoutes) -> None:
    uri_r = f"{SITE}/seasons/2015/players.html"
    reply = routes.reply(get(memento("20150703083000", uri_r, raw=True)))
    assert reply.headers["Content-Type"] == "text/html; charset=utf-8"
    assert "\u2014".encode() in reply.body  # UTF-8 E2 80 94 (RFC 3629 §3)
