"""Differential tests: our robots.txt rules against Python's ``urllib.robotparser``.

Where urllib.robotparser follows RFC 9309 (one group, plain prefix rules, '*' fallback, files
whose verdict does not depend on rule order) both must agree. Where it does not, a test pins both
sides: what urllib.robotparser does (read from its source, Lib/urllib/robotparser.py, and
observed by running it on this machine's Python 3.11.7 — said so beside each pin) and what RFC
9309 asks, which is what we do. CPython gh-138907 brings RFC 9309 semantics to later 3.13/3.14
patch releases, so on such a Python the "stdlib" half of a pin is expected to fail: a signal to
revisit these pins, not a bug in harvester.
"""

from __future__ import annotations

import urllib.robotparser

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from harvester.fetch.robots import RobotsTxt

AGENT = "harvester"


def stdlib(text: str) -> urllib.robotparser.RobotFileParser:
    parser = urllib.robotparser.RobotFileParser()
    parser.parse(text.splitlines())
    return parser


def ours(text: str, url: str, agent: str = AGENT) -> bool:
    return RobotsTxt.parse(text).check(url, agent).allowed


# --- where both follow RFC 9309 -----------------------------------------------------------------

AGREEING = [
    ("User-agent: *\nDisallow: /admin/\n", "/admin/users"),
    ("User-agent: *\nDisallow: /admin/\n", "/standings"),
    ("User-agent: *\nDisallow: /\n", "/standings"),
    ("", "/standings"),
    ("User-agent: otherbot\nDisallow: /\n", "/standings"),  # no group, no '*': no rules
    ("User-agent: harvester\nDisallow: /a\n\nUser-agent: *\nDisallow: /b\n", "/b"),  # no inherit
    ("User-agent: harvester\nDisallow: /a\n\nUser-agent: *\nDisallow: /b\n", "/a"),
    ("User-agent: otherbot\nDisallow: /a\n\nUser-agent: *\nDisallow: /b\n", "/b"),  # '*' fallback
    ("User-agent: HARVESTER\nDisallow: /a\n", "/a"),  # case-insensitive agent
    ("USER-AGENT: *\nDISALLOW: /a\n", "/a"),  # case-insensitive keys
    ("User-agent: *\nDisallow: /Foo\n", "/foo"),  # case-sensitive paths
    ("User-agent: *\nDisallow: /a # comment\n", "/a/b"),
    ("Disallow: /a\nUser-agent: *\nDisallow: /b\n", "/a"),  # rules before any group ignored
    ("User-agent: *\nDisallow: /a\nSitemap: https://league.example/s.xml\nDisallow: /b\n", "/b"),
    ("User-agent: *\nDisallow: /%7Efoo\n", "/~foo/x"),  # unreserved %XX decoded
    ("User-agent: *\nDisallow: /~foo\n", "/%7Efoo/x"),
    ("User-agent: *\nDisallow: /page\n", "https://league.example/page#top"),
    ("User-agent: *\nAllow: /p/q\nDisallow: /p\n", "/p/q/r"),  # longest written first
    ("User-agent: *\nDisallow:\n", "/anything"),
]


@pytest.mark.parametrize(("text", "url"), AGREEING)
def test_agrees_with_stdlib(text: str, url: str) -> None:
    assert ours(text, url) is stdlib(text).can_fetch(AGENT, url)


def test_other_records_agree() -> None:
    text = (
        "Sitemap: https://league.example/a.xml\nUser-agent: *\nCrawl-delay: 5\n"
        "Request-rate: 3/10\nDisallow: /x\nSitemap: https://league.example/b.xml\n"
    )
    parser, robots = stdlib(text), RobotsTxt.parse(text)
    stdlib_delay: object = parser.crawl_delay(AGENT)  # typeshed says str | None; it is an int
    assert stdlib_delay == 5
    assert robots.crawl_delay(AGENT) == 5.0
    rate = parser.request_rate(AGENT)
    assert rate is not None
    assert robots.request_interval(AGENT) == rate.seconds / rate.requests
    assert robots.sitemaps() == parser.site_maps()


# No leading "//": stdlib reads "//a" (rule or URL) as an authority (pinned below).
_PATHS = (
    st.text(alphabet="ab/", max_size=8)
    .filter(lambda s: not s.startswith("/"))
    .map(lambda s: "/" + s)
)


@settings(max_examples=300, deadline=None)
@given(
    star=st.booleans(),
    rules=st.lists(st.tuples(st.booleans(), _PATHS), max_size=8),
    path=_PATHS,
)
def test_agrees_when_rules_are_written_longest_first(
    star: bool, rules: list[tuple[bool, str]], path: str
) -> None:
    # urllib.robotparser takes the first matching rule; written longest first (allow first on
    # equal length) the first match is the RFC 9309 §2.2.2 longest match.
    ordered = sorted(rules, key=lambda rule: (-len(rule[1]), not rule[0]))
    lines = [f"{'Allow' if allow else 'Disallow'}: {pattern}" for allow, pattern in ordered]
    text = f"User-agent: {'*' if star else AGENT}\n" + "\n".join(lines) + "\n"
    assert ours(text, path) is stdlib(text).can_fetch(AGENT, path)


# --- where urllib.robotparser (3.11, observed) does not follow RFC 9309 -------------------------

DIFFERING = [
    # first match wins in stdlib; RFC 9309 §2.2.2 longest match
    ("User-agent: *\nAllow: /\nDisallow: /cgi-bin\n", "/cgi-bin/a", True, False),
    (
        "User-agent: *\nDisallow: /private\nAllow: /private/public\n",
        "/private/public/x",
        False,
        True,
    ),
    # no '*' wildcard or '$' anchor in stdlib (§2.2.3); it also never honours "Disallow: *"
    ("User-agent: *\nDisallow: /*.pdf\n", "/report.pdf", True, False),
    ("User-agent: *\nDisallow: /a$\n", "/a", True, False),
    ("User-agent: *\nDisallow: *\n", "/x", True, False),
    # stdlib: a blank line after User-agent drops the group; §2.2 allows emptyline inside it
    ("User-agent: harvester\n\nDisallow: /a\n", "/a", True, False),
    # stdlib uses the first matching group only; §2.2.1 MUST merge all matching groups
    (
        "User-agent: harvester\nDisallow: /a\n\nUser-agent: harvester\nDisallow: /b\n",
        "/b",
        True,
        False,
    ),
    ("User-agent: *\nDisallow: /a\n\nUser-agent: *\nDisallow: /b\n", "/b", True, False),
    # stdlib matches agent names as substrings ("harv" in "harvester"); §2.2.1 compares tokens
    ("User-agent: harv\nDisallow: /\n", "/x", False, True),
    # stdlib compares "harvester/2.0" whole; we compare its leading token (our choice)
    ("User-agent: Harvester/2.0\nDisallow: /\n", "/x", True, False),
    # §2.2.2: /robots.txt is implicitly allowed; stdlib blocks it under "Disallow: /"
    ("User-agent: *\nDisallow: /\n", "/robots.txt", False, True),
    # stdlib turns "Disallow:" into "allow everything", and the first match wins
    ("User-agent: *\nDisallow:\nDisallow: /x\n", "/x", True, False),
    # stdlib decodes %2F to '/'; RFC 3986 §2.2 / REFERENCES §1.4: %2F is not '/'
    ("User-agent: *\nDisallow: /a%2Fb\n", "/a/b", False, True),
    # stdlib parses the rule "//" as an empty authority, i.e. an empty path matching everything
    ("User-agent: *\nDisallow: //\n", "/standings", False, True),
]


@pytest.mark.parametrize(("text", "url", "stdlib_allows", "we_allow"), DIFFERING)
def test_pins_where_stdlib_differs(
    text: str, url: str, stdlib_allows: bool, we_allow: bool
) -> None:
    assert stdlib(text).can_fetch(AGENT, url) is stdlib_allows  # observed on Python 3.11.7
    assert ours(text, url) is we_allow  # RFC 9309


def test_crawl_delay_between_user_agents_splits_groups_only_in_stdlib() -> None:
    # stdlib: Crawl-delay moves its parser to "saw a rule", so the next User-agent starts a new
    # group (observed on 3.11.7). RFC 9309 §2.2.4: other records MUST NOT change the groups.
    text = "User-agent: otherbot\nCrawl-delay: 3\nUser-agent: harvester\nDisallow: /x\n"
    parser, robots = stdlib(text), RobotsTxt.parse(text)
    assert parser.can_fetch("otherbot", "/x") is True
    assert parser.crawl_delay(AGENT) is None
    assert robots.check("/x", "otherbot").allowed is False
    assert robots.crawl_delay(AGENT) == 3.0


def test_decimal_crawl_delay_and_unit_request_rate_only_here() -> None:
    # stdlib accepts digits only (str.isdigit), so 2.5 and "1/5s" are dropped (observed on
    # 3.11.7); REFERENCES §1.8: the common reading allows decimals.
    text = "User-agent: *\nCrawl-delay: 2.5\nRequest-rate: 1/5s\n"
    parser, robots = stdlib(text), RobotsTxt.parse(text)
    assert parser.crawl_delay(AGENT) is None
    assert parser.request_rate(AGENT) is None
    assert robots.crawl_delay(AGENT) == 2.5
    assert robots.request_interval(AGENT) == 5.0
