"""Tests for the demo web archive over real HTTP (httpx) on 127.0.0.1.

The routes' logic is pinned down in test_archive_routes.py; here the same contract
(harvester/demo/archive_routes.py) is checked through sockets, with a link-format parser written
in this file from RFC 6690 §2 and RFC 8288 §3 so that no harvester code judges the TimeMap.
Expected datetimes are the contract's schedule, weekdays checked with GNU ``date``; pacing and
304s are the loopback plumbing's contract (harvester/demo/loopback.py).
"""

from __future__ import annotations

import hashlib
import re
import time
from collections.abc import Iterator
from dataclasses import dataclass
from datetime import UTC, datetime
from email.utils import parsedate_to_datetime
from urllib.robotparser import RobotFileParser

import httpx
import pytest

from harvester.demo.league import League, build_league
from harvester.demo.pages import render_page
from harvester.demo.web_archive import DemoWebArchive
from harvester.errors import HarvesterError
from tests.demo.polite import new_client

SITE = "http://127.0.0.1:8650"
PLAYERS_2019 = f"{SITE}/seasons/2019/players.html"
# RFC 9110 §5.6.7 IMF-fixdate, which RFC 7089 §2.1.1 requires (rfc1123-date in GMT).
IMF_FIXDATE = re.compile(
    r"(Mon|Tue|Wed|Thu|Fri|Sat|Sun), \d{2} (Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec) "
    r"\d{4} ([01]\d|2[0-3]):[0-5]\d:[0-5]\d GMT"
)
DATES_2019 = (
    "Fri, 15 Mar 2019 10:20:00 GMT",
    "Fri, 28 Jun 2019 14:05:09 GMT",
    "Wed, 03 Jul 2019 08:30:00 GMT",
    "Wed, 20 Nov 2019 16:45:00 GMT",
)


@dataclass(frozen=True)
class Link:
    """One link-value: its target and its parameters (names lower-cased, values unquoted)."""

    target: str
    params: dict[str, str]

    @property
    def rels(self) -> list[str]:
        # RFC 8288 §3.3: rel is a space-separated list; registered types compare case-insensitively.
        return self.params.get("rel", "").lower().split()


def parse_link_format(text: str) -> list[Link]:
    """Parse ``link-value *("," link-value)`` (RFC 6690 §2), whitespace allowed between tokens."""
    links: list[Link] = []
    position = 0

    def skip() -> None:
        nonlocal position
        while position < len(text) and text[position] in " \t\r\n":
            position += 1

    while True:
        skip()
        if position == len(text):
            return links
        assert text[position] == "<", f"expected '<' at {position}: {text[position:][:40]!r}"
        end = text.index(">", position)
        target, position, params = text[position + 1 : end], end + 1, {}
        skip()
        while position < len(text) and text[position] == ";":
            position += 1
            skip()
            name = re.match(r"[A-Za-z0-9!#$&+\-.^_`|~*]+", text[position:])
            assert name is not None, f"no parameter name at {position}"
            position += name.end()
            skip()
            value = ""
            if position < len(text) and text[position] == "=":
                position += 1
                skip()
                if text[position] == '"':  # quoted-string, RFC 9110 §5.6.4
                    position += 1
                    while text[position] != '"':
                        if text[position] == "\\":
                            position += 1
                        value += text[position]
                        position += 1
                    position += 1
                else:
                    token = re.match(r"[^;,\s]+", text[position:])
                    assert token is not None
                    value, position = token[0], position + token.end()
            params[name[0].lower()] = value
            skip()
        links.append(Link(target, params))
        skip()
        if position < len(text):
            assert text[position] == ",", f"expected ',' at {position}"
            position += 1


@pytest.fixture(scope="module")
def league() -> League:
    return build_league()


@pytest.fixture
def archive(league: League) -> Iterator[DemoWebArchive]:
    # Pacing is not the point here: served at once, violations only logged.
    with DemoWebArchive(site=SITE, league=league, crawl_delay=0.01, enforce=False) as host:
        yield host


@pytest.fixture
def client(archive: DemoWebArchive) -> Iterator[httpx.Client]:
    with new_client(archive) as http:
        yield http


def test_the_parser_in_this_file_reads_rfc_style_values() -> None:
    # The parser must not split inside quoted datetimes, which hold commas (RFC 7089 §5).
    text = '<a>; rel="first memento"; datetime="Mon, 03 Jan 2022 09:15:00 GMT",\n<b>\n  ; REL=x'
    assert parse_link_format(text) == [
        Link("a", {"rel": "first memento", "datetime": "Mon, 03 Jan 2022 09:15:00 GMT"}),
        Link("b", {"rel": "x"}),
    ]


def test_the_timemap_is_link_format_with_every_memento_dated(
    archive: DemoWebArchive, client: httpx.Client
) -> None:
    response = client.get(f"/timemap/{PLAYERS_2019}")
    assert response.status_code == 200
    assert response.headers["content-type"] == "application/link-format"  # RFC 7089 §5
    assert ",\n<" in response.text  # newlines between link-values, as in RFC 7089 §5's figures
    links = parse_link_format(response.text)
    originals = [link for link in links if "original" in link.rels]
    assert [link.target for link in originals] == [PLAYERS_2019]  # RFC 7089 §5, §2.2.1: once
    selves = [link for link in links if "self" in link.rels]
    assert [link.target for link in selves] == [archive.timemap_url(PLAYERS_2019)]
    assert selves[0].params["type"] == "application/link-format"  # RFC 7089 §5
    assert (selves[0].params["from"], selves[0].params["until"]) == (DATES_2019[0], DATES_2019[3])
    gates = [link.target for link in links if "timegate" in link.rels]
    assert gates == [archive.timegate_url(PLAYERS_2019)]  # RFC 7089 §5: SHOULD list URI-Gs
    mementos = [link for link in links if "memento" in link.rels]
    # RFC 7089 §2.2.4: a memento link MUST carry datetime, in rfc1123-date form (§2.1.1).
    assert all(IMF_FIXDATE.fullmatch(link.params["datetime"]) for link in mementos)
    assert [link.params["datetime"] for link in mementos] == list(DATES_2019)
    assert [link.target for link in mementos] == [c.uri_m for c in archive.captures(PLAYERS_2019)]
    assert mementos[0].rels == ["first", "memento"] and mementos[-1].rels == ["last", "memento"]
    assert all(link.rels == ["memento"] for link in mementos[1:-1])


def test_each_memento_answers_with_the_datetime_its_timemap_gives(
    archive: DemoWebArchive, client: httpx.Client
) -> None:
    links = parse_link_format(client.get(f"/timemap/{PLAYERS_2019}").text)
    for link in (link for link in links if "memento" in link.rels):
        response = client.get(link.target)
        # RFC 7089 §2.2.4: the datetime attribute equals the URI-M's Memento-Datetime.
        assert response.headers["memento-datetime"] == link.params["datetime"]


def test_an_unknown_uri_r_has_no_timemap_or_timegate(client: httpx.Client) -> None:
    for uri_r in (f"{SITE}/seasons/2025/players.html", f"{SITE}/seasons/2019/teams.html"):
        assert client.get(f"/timemap/{uri_r}").status_code == 404
        assert client.get(f"/timegate/{uri_r}").status_code == 404
        assert client.get(f"/web/20190628140509/{uri_r}").status_code == 404


def test_timegate_negotiation_ends_at_a_memento(
    archive: DemoWebArchive, client: httpx.Client
) -> None:
    asked = {"Accept-Datetime": "Sun, 30 Jun 2019 00:00:00 GMT"}  # RFC 7089 §2.1.1 form
    gate = client.get(f"/timegate/{PLAYERS_2019}", headers=asked)
    assert gate.status_code == 302  # RFC 7089 §4.2.1
    assert "accept-datetime" in gate.headers["vary"].lower()  # RFC 7089 §4.2.1
    assert "memento-datetime" not in gate.headers  # RFC 7089 §4.2.1
    links = parse_link_format(gate.headers["link"])
    assert [link.target for link in links if "original" in link.rels] == [PLAYERS_2019]
    assert [link.target for link in links if "timemap" in link.rels] == [
        archive.timemap_url(PLAYERS_2019)
    ]
    # June 28 14:05:09 is 33:54:51 before the target, July 3 08:30:00 80:30:00 after it. In
    # 2019 that capture is the archived 404 (the contract), replayed as such (RFC 7089 §4.5.5).
    assert gate.headers["location"] == archive.url(f"/web/20190628140509/{PLAYERS_2019}")
    landed = client.get(gate.headers["location"])
    assert landed.status_code == 404
    assert landed.headers["memento-datetime"] == DATES_2019[1]  # RFC 7089 §4.5.5


@pytest.mark.parametrize(
    ("accept_datetime", "status", "timestamp"),
    [
        ("Sat, 01 Jan 2000 00:00:00 GMT", 302, "20190315102000"),  # RFC 7089 §4.5.3: first
        ("Fri, 01 Jan 2027 00:00:00 GMT", 302, "20191120164500"),  # RFC 7089 §4.5.3: last
        (None, 302, "20191120164500"),  # RFC 7089 §4.5.3: none → the most recent
        ("30 Jun 2019", 400, None),  # RFC 7089 §4.5.3: malformed → 400
    ],
)
def test_timegate_edge_cases(
    archive: DemoWebArchive,
    client: httpx.Client,
    accept_datetime: str | None,
    status: int,
    timestamp: str | None,
) -> None:
    headers = {} if accept_datetime is None else {"Accept-Datetime": accept_datetime}
    gate = client.get(f"/timegate/{PLAYERS_2019}", headers=headers)
    assert gate.status_code == status
    if timestamp is not None:
        assert gate.headers["location"] == archive.url(f"/web/{timestamp}/{PLAYERS_2019}")


def test_a_memento_has_memento_headers_and_no_accept_datetime_vary(
    archive: DemoWebArchive, client: httpx.Client
) -> None:
    response = client.get(f"/web/20190703083000/{PLAYERS_2019}")
    assert response.status_code == 200
    assert response.headers["memento-datetime"] == DATES_2019[2]  # RFC 7089 §4.1.1: MUST
    moment = parsedate_to_datetime(response.headers["memento-datetime"])
    assert moment == datetime(2019, 7, 3, 8, 30, tzinfo=UTC)
    assert "accept-datetime" not in response.headers.get("vary", "").lower()  # RFC 7089 §4.1.1
    links = parse_link_format(response.headers["link"])
    rels = [" ".join(link.rels) for link in links]
    assert rels.count("original") == 1  # RFC 7089 §2.2.1
    assert {"timegate", "timemap", "first memento", "prev memento", "next memento"} <= set(rels)
    timemap = next(link for link in links if link.rels == ["timemap"])
    assert timemap.params["type"] == "application/link-format"  # RFC 7089 §2.2.3: SHOULD
    previous = next(link for link in links if link.rels == ["prev", "memento"])
    assert previous.params["datetime"] == DATES_2019[1]  # RFC 7089 §2.2.4


def test_raw_is_the_original_page_and_the_banner_view_is_rewritten(
    archive: DemoWebArchive, client: httpx.Client, league: League
) -> None:
    uri_r = f"{SITE}/seasons/2020/standings.html"
    raw = client.get(f"/web/20200703083000raw/{uri_r}")
    banner = client.get(f"/web/20200703083000/{uri_r}")
    expected = render_page(league, "/seasons/2020/standings.html")
    assert expected is not None
    assert raw.content == expected.encode("utf-8")
    assert 'id="demo-archive-banner"' not in raw.text
    assert banner.text.count('id="demo-archive-banner"') == 1
    assert 'href="/clubs/' in raw.text and 'href="/clubs/' not in banner.text
    assert f'href="/web/20200703083000/{SITE}/clubs/' in banner.text
    for header in ("content-type", "memento-datetime", "link"):
        assert raw.headers[header] == banner.headers[header]
    # A strong ETag of the body served, as on the live site (RFC 9110 §8.8.3).
    for response in (raw, banner):
        assert response.headers["etag"] == f'"{hashlib.sha256(response.content).hexdigest()[:16]}"'


def test_a_memento_etag_gets_a_304(client: httpx.Client) -> None:
    url = f"/web/20200703083000raw/{SITE}/seasons/2020/players.html"
    etag = client.get(url).headers["etag"]
    again = client.get(url, headers={"If-None-Match": etag})
    assert again.status_code == 304 and again.content == b""  # RFC 9110 §13.1.2, §15.4.5


def test_the_raw_url_is_what_the_recipes_original_rule_makes(
    archive: DemoWebArchive, client: httpx.Client
) -> None:
    # DESIGN §8: original = { pattern = '/(\d{14})/', replace = '/\1raw/' }.
    uri_m = archive.captures(f"{SITE}/seasons/2021/contracts.html")[2].uri_m
    raw = client.get(re.sub(r"/(\d{14})/", r"/\1raw/", uri_m, count=1))
    assert raw.status_code == 200 and "demo-archive-banner" not in raw.text


def test_the_503_capture_replays_with_its_status(client: httpx.Client) -> None:
    response = client.get(f"/web/20150628140509raw/{SITE}/seasons/2015/players.html")
    assert response.status_code == 503  # RFC 7089 §4.5.5
    assert response.headers["memento-datetime"] == "Sun, 28 Jun 2015 14:05:09 GMT"
    assert "text/html" in response.headers["content-type"]


def test_the_archived_redirect_is_a_302_that_is_a_memento(
    archive: DemoWebArchive, client: httpx.Client
) -> None:
    uri_r = f"{SITE}/seasons/2017/players.html"
    response = client.get(f"/web/20170628140509/{uri_r}")
    assert response.status_code == 302  # RFC 7089 §4.5.4
    assert response.headers["memento-datetime"] == "Wed, 28 Jun 2017 14:05:09 GMT"
    assert response.headers["location"] == f"{SITE}/index.html"
    assert [c.kind for c in archive.captures(uri_r)] == ["page", "redirect", "page", "page"]


def test_a_timestamp_between_captures_is_an_intermediate_redirect(
    archive: DemoWebArchive, client: httpx.Client
) -> None:
    response = client.get(f"/web/20190301000000raw/{PLAYERS_2019}")
    assert response.status_code == 302
    assert response.headers["location"] == archive.url(f"/web/20190315102000raw/{PLAYERS_2019}")
    assert "memento-datetime" not in response.headers  # RFC 7089 §4.5.7
    links = parse_link_format(response.headers["link"])
    assert [(link.target, link.rels) for link in links] == [(PLAYERS_2019, ["original"])]
    followed = client.get(response.headers["location"])
    assert followed.status_code == 200 and followed.headers["memento-datetime"] == DATES_2019[0]


def test_the_charset_capture_decodes_as_windows_1252(client: httpx.Client, league: League) -> None:
    response = client.get(f"/web/20130628140509raw/{SITE}/seasons/2013/players.html")
    assert response.headers["content-type"] == "text/html; charset=windows-1252"
    assert response.encoding == "windows-1252"  # httpx reads the charset parameter
    page = render_page(league, "/seasons/2013/players.html")
    assert page is not None
    # The players page has no U+2212, so the text is the page with its charset meta changed.
    assert "\u2212" not in page
    assert response.text == page.replace('<meta charset="utf-8">', '<meta charset="windows-1252">')


def test_paging_chains_the_timemap_documents(league: League) -> None:
    with (
        DemoWebArchive(site=SITE, league=league, enforce=False, timemap_page_size=3) as archive,
        new_client(archive) as client,
    ):
        first = parse_link_format(client.get(f"/timemap/{PLAYERS_2019}").text)
        assert [link.params["datetime"] for link in first if "memento" in link.rels] == list(
            DATES_2019[:3]
        )
        # RFC 7089 §5.1.1: the next page by rel="timemap", from/until RECOMMENDED.
        onward = [link for link in first if link.rels == ["timemap"]]
        assert [link.target for link in onward] == [archive.url(f"/timemap/page/2/{PLAYERS_2019}")]
        assert (onward[0].params["from"], onward[0].params["until"]) == (DATES_2019[3],) * 2
        second = parse_link_format(client.get(onward[0].target).text)
        mementos = [link for link in second if "memento" in link.rels]
        assert [(m.params["datetime"], m.rels) for m in mementos] == [
            (DATES_2019[3], ["last", "memento"])
        ]
        assert [link.target for link in second if "original" in link.rels] == [PLAYERS_2019]
        assert not [link for link in second if link.rels == ["timemap"]]
        assert client.get(f"/timemap/page/3/{PLAYERS_2019}").status_code == 404


def test_robots_txt_allows_everything_with_a_crawl_delay(league: League) -> None:
    with (
        DemoWebArchive(site=SITE, league=league, crawl_delay=0.25, enforce=False) as archive,
        new_client(archive) as client,
    ):
        response = client.get("/robots.txt")
        timemap = archive.url(f"/timemap/{PLAYERS_2019}")
        uri_m = archive.url(f"/web/20190315102000/{PLAYERS_2019}")
    assert response.headers["content-type"].startswith("text/plain")  # RFC 9309 §2.3
    lines = response.text.splitlines()
    assert lines == ["User-agent: *", "Crawl-delay: 0.25", "Allow: /"]  # RFC 9309 §2.2.1, §2.2.2
    # urllib.robotparser (reference library) reads whole-second delays only, so rules alone.
    parser = RobotFileParser()
    parser.parse(lines)
    assert parser.can_fetch("harvester", timemap) and parser.can_fetch("harvester", uri_m)


def test_a_client_that_hurries_gets_429_and_is_logged(league: League) -> None:
    with (
        DemoWebArchive(site=SITE, league=league, crawl_delay=5.0, retry_after=3) as archive,
        new_client(archive) as client,
    ):
        assert client.get(f"/timemap/{PLAYERS_2019}").status_code == 200
        hurried = client.get(f"/timegate/{PLAYERS_2019}")
        assert hurried.status_code == 429  # RFC 6585 §4
        assert hurried.headers["retry-after"] == "3"
        assert [record.status for record in archive.log] == [200, 429]
        assert [record.path for record in archive.violations()] == [f"/timegate/{PLAYERS_2019}"]


def test_a_polite_client_is_served_and_not_counted(league: League) -> None:
    with (
        DemoWebArchive(site=SITE, league=league, crawl_delay=0.05) as archive,
        new_client(archive) as client,
    ):
        for _ in range(2):
            assert client.get(f"/timegate/{PLAYERS_2019}").status_code == 302
            time.sleep(0.08)
        # loopback.py: the log holds every request, and marks none that kept the delay.
        assert [
            record.violation for record in archive.requests_for(f"/timegate/{PLAYERS_2019}")
        ] == [
            False,
            False,
        ]


def test_the_archive_names_its_holdings(archive: DemoWebArchive) -> None:
    assert archive.site == SITE
    assert archive.held_seasons == tuple(range(2012, 2024))
    assert archive.error_seasons == {2015: 503, 2019: 404}
    assert archive.redirect_seasons == (2017,)
    assert archive.cp1252_seasons == (2012, 2013, 2014)
    assert archive.uri_r(2016, "contracts") == f"{SITE}/seasons/2016/contracts.html"
    dates = [capture.datetime for capture in archive.captures(archive.uri_r(2016, "contracts"))]
    assert dates == [
        datetime(2016, 3, 15, 10, 20, tzinfo=UTC),
        datetime(2016, 6, 28, 14, 5, 9, tzinfo=UTC),
        datetime(2016, 7, 3, 8, 30, tzinfo=UTC),
        datetime(2016, 11, 20, 16, 45, tzinfo=UTC),
    ]
    assert archive.captures(f"{SITE}/seasons/2024/players.html") == []


def test_the_site_must_be_a_loopback_url() -> None:
    with pytest.raises(HarvesterError, match="option site"):
        DemoWebArchive(site="http://localhost:8650")
