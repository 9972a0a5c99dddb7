"""Tests for harvester.fetch.robots against RFC 9309 (Robots Exclusion Protocol, Sept 2022).

Every expected value is worked out by hand from the RFC text (section cited beside each test) or
from the project's documented choices (marked "our choice"). The §5.1/§5.2 example files under
tests/data/robots/ are written out from memory of the RFC text. Cache-age behaviour (23 h / 25 h,
REFERENCES §1.9) belongs to the fetcher, which owns the cache, and is not tested here.
"""

from __future__ import annotations

import tracemalloc
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from harvester.errors import FetchError
from harvester.fetch.robots import (
    ROBOTS_PARSE_LIMIT,
    RobotsRule,
    RobotsTxt,
    Verdict,
    robots_url,
)

DATA = Path(__file__).resolve().parents[1] / "data" / "robots"
AGENT = "harvester"


def parse(text: str | bytes) -> RobotsTxt:
    return RobotsTxt.parse(text)


def allowed(robots: RobotsTxt | str | bytes, url: str, agent: str = AGENT) -> bool:
    if not isinstance(robots, RobotsTxt):
        robots = RobotsTxt.parse(robots)
    return robots.check(url, agent).allowed


# --- the RFC's own examples ---------------------------------------------------------------------


@pytest.mark.parametrize(
    ("agent", "url", "expected"),
    [
        # RFC 9309 §5.1 (file from memory): foobot may fetch only the two allowed pages.
        ("foobot", "/example/page.html", True),
        ("foobot", "/example/allowed.gif", True),
        ("foobot", "/example/other.html", False),
        ("foobot", "/publications/a.html", False),  # nothing inherited from '*'
        # barbot and bazbot share one group: only /example/page.html is off limits.
        ("barbot", "/example/page.html", False),
        ("bazbot", "/example/page.html", False),
        ("bazbot", "/example/other.gif", True),  # '*' rules do not apply to them
        # quxbot's group has no rules: everything allowed (§2.1).
        ("quxbot", "/example/page.html", True),
        # everyone else follows '*': *.gif$ and /example/ blocked, /publications/ allowed.
        ("otherbot", "/images/logo.gif", False),
        ("otherbot", "/images/logo.gif?v=2", True),
        ("otherbot", "/example/page.html", False),
        ("otherbot", "/publications/a.html", True),
    ],
)
def test_rfc_section_5_1_example(agent: str, url: str, expected: bool) -> None:
    robots = parse((DATA / "rfc9309_5_1.txt").read_text(encoding="utf-8"))
    assert robots.check(url, agent).allowed is expected


def test_rfc_section_5_2_longest_match_example() -> None:
    # RFC 9309 §5.2 (file from memory): the longer disallow rule decides for the .gif.
    robots = parse((DATA / "rfc9309_5_2.txt").read_bytes())
    assert robots.check("/example/page/", "foobot").allowed
    verdict = robots.check("/example/page/disallowed.gif", "foobot")
    assert verdict == Verdict(
        False, RobotsRule(False, "/example/page/disallowed.gif", 3), verdict.reason
    )


def test_league_file_end_to_end() -> None:
    robots = parse((DATA / "league.txt").read_bytes())
    # Two "harvester" groups (lines 11 and 20) merge; '*' (line 4) is not inherited (§2.2.1).
    assert robots.check("/tmp/x", AGENT).rule == RobotsRule(False, "/tmp/", 21)
    assert allowed(robots, "/admin/")
    assert not allowed(robots, "/admin/", "otherbot")
    assert robots.check("/clubs/hc-oskvik/private/roster", AGENT).rule == RobotsRule(
        False, "/clubs/*/private/", 13
    )
    assert robots.check("/clubs/hc-oskvik/private/fixtures", AGENT).rule == RobotsRule(
        True, "/clubs/hc-oskvik/private/fixtures", 15
    )
    assert not allowed(robots, "https://league.example/report.pdf")
    assert allowed(robots, "https://league.example/report.pdf?page=2")
    # the Sitemap on line 16 does not end the group: line 18 still belongs to it (§2.2.4)
    assert robots.check("/archive/–old/2019", AGENT).rule == RobotsRule(
        False, "/archive/%E2%80%93old/", 18
    )
    assert robots.sitemaps() == [
        "https://league.example/sitemap.xml",
        "https://league.example/sitemap-clubs.xml",
    ]
    assert robots.crawl_delay(AGENT) == 2.5  # the '*' group's 10 is not inherited
    assert robots.request_interval(AGENT) == 5.0
    assert robots.min_interval(AGENT) == 5.0
    assert robots.crawl_delay("otherbot") == 10.0
    assert robots.request_interval("otherbot") is None
    assert robots.min_interval("otherbot") == 10.0


# --- parsing (§2.2) -----------------------------------------------------------------------------


def test_keys_are_case_insensitive() -> None:
    # §2.2: quoted ABNF literals are case-insensitive (RFC 5234 §2.3).
    robots = parse("USER-AGENT: *\nDISALLOW: /a\naLLoW: /a/b\n")
    assert not allowed(robots, "/a/x")
    assert allowed(robots, "/a/b")


def test_whitespace_around_colon_and_comments() -> None:
    # §2.2: optional whitespace around ':'; '#' starts a comment (§2.2.3).
    robots = parse(
        "# User-agent: harvester\nUser-agent :\t*  # everyone\nDisallow :/a\nDisallow:\t/b # x\n"
    )
    assert robots.check("/a", AGENT).rule == RobotsRule(False, "/a", 3)
    assert robots.check("/b", AGENT).rule == RobotsRule(False, "/b", 4)
    assert allowed(robots, "/c")


def test_cr_lf_and_crlf_line_ends_count_one_line_each() -> None:
    # §2.2: eol = %x0D / %x0A / %x0D.0A
    robots = parse(b"User-agent: *\r\nDisallow: /a\rDisallow: /b\nDisallow: /c")
    assert [robots.check(p, AGENT).rule for p in ("/a", "/b", "/c")] == [
        RobotsRule(False, "/a", 2),
        RobotsRule(False, "/b", 3),
        RobotsRule(False, "/c", 4),
    ]


def test_leading_utf8_bom_is_stripped() -> None:
    # REFERENCES §1.1 practice; unstripped, line 1 would not parse and /a would stay allowed.
    assert not allowed(b"\xef\xbb\xbfUser-agent: *\nDisallow: /a\n", "/a")


def test_invalid_utf8_is_bridged_not_fatal() -> None:
    # §2.2.2 MAY bridge encodings; §2.3.1.5 MUST use whatever parses. 0xE9 alone is not UTF-8,
    # so it reads as U+FFFD, whose UTF-8 octets are EF BF BD.
    robots = parse(b"User-agent: *\nDisallow: /caf\xe9\nDisallow: /b\n")
    assert not allowed(robots, "/b")
    assert robots.check("/caf%EF%BF%BD", AGENT).rule == RobotsRule(False, "/caf\ufffd", 2)
    assert allowed(robots, "/cafe")


def test_lines_that_do_not_parse_are_skipped() -> None:
    # §2.3.1.5: try every line, use whatever parses; a junk line neither ends nor splits a group.
    robots = parse(
        "User-agent: *\nthis is not a record\nDisallow /no-colon\n: no key\nDisallow: /ok\n"
    )
    assert not allowed(robots, "/ok")
    assert allowed(robots, "/no-colon")


def test_rules_before_the_first_user_agent_are_ignored() -> None:
    # §2.2.2: rules outside any group SHOULD be ignored.
    robots = parse("Disallow: /a\nCrawl-delay: 9\nUser-agent: *\nDisallow: /b\n")
    assert allowed(robots, "/a")
    assert not allowed(robots, "/b")
    assert robots.crawl_delay(AGENT) is None


def test_consecutive_user_agents_share_a_group_and_blank_lines_do_not_split() -> None:
    # §2.2 (startgroupline and emptyline inside a group), §5.1 barbot/bazbot.
    robots = parse("User-agent: a-bot\n\nUser-agent: harvester\n\nDisallow: /x\n\nDisallow: /y\n")
    for agent in ("a-bot", AGENT):
        assert not allowed(robots, "/x", agent)
        assert not allowed(robots, "/y", agent)


def test_other_records_never_open_or_end_a_group() -> None:
    # §2.2.4: other records MUST NOT interfere with the defined ones. Crawl-delay between two
    # user-agent lines does not split them (only allow/disallow end a run of them), and a
    # Sitemap or an unknown record between rules does not end the group.
    robots = parse(
        "User-agent: otherbot\nCrawl-delay: 3\nUser-agent: harvester\nDisallow: /x\n"
        "Sitemap: https://league.example/s.xml\nNoindex: /y\nDisallow: /z\n"
    )
    for agent in ("otherbot", AGENT):
        assert not allowed(robots, "/x", agent)
        assert not allowed(robots, "/z", agent)
        assert robots.crawl_delay(agent) == 3.0
    assert allowed(robots, "/y")


def test_group_with_only_other_records_joins_the_next_group() -> None:
    # §2.2 + §2.2.4: with the Crawl-delay line set aside, the file below is one run of
    # user-agent lines then one rule, i.e. one group, so '*' gets the harvester's rule too.
    robots = parse("User-agent: *\nCrawl-delay: 10\n\nUser-agent: harvester\nDisallow: /x\n")
    assert not allowed(robots, "/x", "otherbot")
    assert robots.crawl_delay(AGENT) == 10.0


def test_rules_after_a_crawl_delay_still_belong_to_the_group() -> None:
    # §2.2.4: other records MUST NOT end a group.
    robots = parse("User-agent: harvester\nCrawl-delay: 2\nDisallow: /x\n")
    assert not allowed(robots, "/x", AGENT)
    assert robots.crawl_delay(AGENT) == 2.0


def test_sitemaps_anywhere_in_order_and_empty_ones_dropped() -> None:
    robots = parse(
        "Sitemap: https://league.example/a.xml\nUser-agent: *\nSitemap:\n"
        "sitemap: https://league.example/b.xml\n"
    )
    assert robots.sitemaps() == ["https://league.example/a.xml", "https://league.example/b.xml"]
    robots.sitemaps().clear()  # a copy: the caller cannot change our list
    assert len(robots.sitemaps()) == 2


def test_no_groups_means_no_rules() -> None:
    # §2.2.1: no matching group and no '*' group, or no groups at all: no rules apply.
    for text in ("", "# nothing\n", "User-agent: otherbot\nDisallow: /\n"):
        verdict = parse(text).check("/anything", AGENT)
        assert verdict.allowed
        assert verdict.rule is None
        assert "no rules apply" in verdict.reason


# --- group selection (§2.2.1) -------------------------------------------------------------------


def test_agent_match_is_case_insensitive_on_both_sides() -> None:
    robots = parse("User-agent: HarVester\nDisallow: /\n")
    assert not allowed(robots, "/x", "harvester")
    assert not allowed(robots, "/x", "HARVESTER")


def test_matching_groups_merge() -> None:
    # §2.2.1 Figure 2: all groups that match MUST be merged; "examplebot" matches "ExampleBot".
    robots = parse(
        "User-agent: ExampleBot\nDisallow: /a\n\nUser-agent: *\nDisallow: /c\n\n"
        "User-agent: examplebot\nDisallow: /b\n"
    )
    assert not allowed(robots, "/a", "examplebot")
    assert not allowed(robots, "/b", "examplebot")
    assert allowed(robots, "/c", "examplebot")  # a specific group replaces '*' (Figure 3)


def test_star_groups_merge_when_no_specific_group_matches() -> None:
    robots = parse("User-agent: *\nDisallow: /a\n\nUser-agent: *\nDisallow: /b\n")
    assert not allowed(robots, "/a")
    assert not allowed(robots, "/b")


def test_versioned_user_agent_compares_leading_token_only() -> None:
    # Our choice (REFERENCES §1.2 practice): "ExampleBot/2.0" names the token "examplebot".
    robots = parse("User-agent: ExampleBot/2.0\nDisallow: /\n\nUser-agent: examplebot-news\n")
    assert not allowed(robots, "/x", "examplebot")
    assert not allowed(robots, "/x", "ExampleBot/9.1 (+https://league.example/bot)")
    assert allowed(robots, "/x", "examplebot-news")  # whole-token equality, not prefix
    assert allowed(robots, "/x", "example")  # ... and not substring


def test_user_agent_without_token_opens_a_group_nobody_matches() -> None:
    # Our choice: "42bot" has no leading [A-Za-z_-]; its rules must not leak into harvester's.
    robots = parse("User-agent: harvester\nDisallow: /a\nUser-agent: 42bot\nDisallow: /b\n")
    assert not allowed(robots, "/a")
    assert allowed(robots, "/b")


@pytest.mark.parametrize("agent", ["", "*", "/1.0", "  "])
def test_caller_agent_must_start_with_a_product_token(agent: str) -> None:
    with pytest.raises(FetchError, match="product token"):
        parse("User-agent: *\nDisallow: /\n").check("/x", agent)


def test_agent_cache_does_not_mix_agents() -> None:
    robots = parse("User-agent: a-bot\nDisallow: /a\n\nUser-agent: b-bot\nDisallow: /b\n")
    assert not allowed(robots, "/a", "a-bot")
    assert allowed(robots, "/a", "b-bot")
    assert not allowed(robots, "/b", "b-bot")
    assert allowed(robots, "/b", "a-bot")


# --- matching (§2.2.2, §2.2.3) ------------------------------------------------------------------


def test_longest_match_wins_in_either_order() -> None:
    for text in ("Allow: /p\nDisallow: /p/q\n", "Disallow: /p/q\nAllow: /p\n"):
        robots = parse("User-agent: *\n" + text)
        assert not allowed(robots, "/p/q/r")
        assert allowed(robots, "/p/x")


def test_allow_wins_a_tie_and_is_reported() -> None:
    # §2.2.2: equivalent allow and disallow rules: allow SHOULD be used.
    for text, line in (("Allow: /a\nDisallow: /a\n", 2), ("Disallow: /a\nAllow: /a\n", 3)):
        verdict = parse("User-agent: *\n" + text).check("/a/b", AGENT)
        assert verdict.allowed
        assert verdict.rule == RobotsRule(True, "/a", line)


def test_matching_is_case_sensitive_prefix_from_first_octet() -> None:
    robots = parse("User-agent: *\nDisallow: /Foo\nDisallow: fish\n")
    assert not allowed(robots, "/Foo/bar")
    assert allowed(robots, "/foo")  # §2.2.2 SHOULD be case-sensitive
    assert allowed(robots, "/fish")  # our choice: "fish" must match from '/', so never does


def test_path_and_query_count_never_the_fragment() -> None:
    robots = parse("User-agent: *\nDisallow: /search?q=\nDisallow: /page$\n")
    assert not allowed(robots, "https://league.example/search?q=oskvik#results")
    assert allowed(robots, "/search")
    assert not allowed(robots, "/page#top")
    assert not allowed(robots, "http://league.example/page")
    assert allowed(robots, "/page?x=1")


def test_url_forms_reduce_to_path_and_query() -> None:
    # §2.2.2 matches the path from its first octet; an empty path is "/" (RFC 3986 §6.2.3).
    robots = parse("User-agent: *\nDisallow: /$\nDisallow: /?\nDisallow: /standings?\n")
    assert not allowed(robots, "https://league.example")
    assert not allowed(robots, "https://league.example?season=2024")
    assert not allowed(robots, "standings?season=2024")  # a relative path is read from '/'
    assert allowed(robots, "standings")
    assert not allowed(robots, "/standings?")
    assert allowed(robots, "//standings?x")  # no scheme: a path (our choice), not an authority


def test_empty_disallow_is_a_no_op() -> None:
    # REFERENCES §1.3 practice: "Disallow:" means nothing disallowed, even before other rules.
    assert allowed("User-agent: *\nDisallow:\n", "/anything")
    robots = parse("User-agent: *\nDisallow:\nDisallow: /x\n")
    assert not allowed(robots, "/x")
    assert allowed(robots, "/y")


def test_robots_txt_is_always_allowed() -> None:
    # §2.2.2: /robots.txt is implicitly allowed.
    robots = parse("User-agent: *\nDisallow: /\n")
    assert allowed(robots, "/robots.txt")
    assert allowed(robots, "https://league.example/robots.txt")
    assert not allowed(robots, "/robots.txt.bak")
    assert allowed(RobotsTxt.unreachable("HTTP 503"), "/robots.txt")


@pytest.mark.parametrize(
    ("pattern", "url", "blocked"),
    [
        ("/*.gif$", "/x/y.gif", True),  # §2.2.3: '*' spans '/', '$' anchors the end
        ("/*.gif$", "/x/y.gif?z=1", False),
        ("/*.gif$", "/x/y.gifs", False),
        ("*.gif$", "/x/y.gif", True),  # §5.1 uses a pattern without a leading '/'
        ("/a$", "/a", True),
        ("/a$", "/ab", False),
        ("/clubs/*/private", "/clubs/a/b/private/x", True),
        ("/a*b*c$", "/a-b-c", True),
        ("/a*b*c$", "/abc-c", True),
        ("/a*bc$", "/abc", True),
        ("/ab*bc$", "/abc", False),  # the two pieces would have to overlap
        ("/*b*a", "/ab", False),  # each piece is found after the one before
        ("/*b*a", "/aba", True),
        ("/a$b", "/a$b", True),  # '$' not last is a literal character
        ("/a$b", "/a%24b", True),
        ("/a$b", "/a", False),
        # §2.2.3 Figure 6: a literal '*' or '$' in the URI is matched by %2A / %24
        ("/path/file-with-a-%2A.html", "/path/file-with-a-*.html", True),
        ("/path/foo-%24", "/path/foo-$", True),
        ("*", "/anything", True),
    ],
)
def test_wildcards(pattern: str, url: str, blocked: bool) -> None:
    assert allowed(f"User-agent: *\nDisallow: {pattern}\n", url) is not blocked


def test_disallow_star_loses_to_any_matching_allow() -> None:
    # "*" normalises to zero octets (our choice), so any matching allow is longer.
    robots = parse("User-agent: *\nDisallow: *\nAllow: /public\n")
    assert allowed(robots, "/public/x")
    assert not allowed(robots, "/private")


def test_hostile_wildcard_pattern_is_decided() -> None:
    # §3: content is untrusted; a backtracking regex would take exponential time here (the
    # time it takes is measured in bench/robots_bench.py, not asserted).
    robots = parse("User-agent: *\nDisallow: /" + "*a" * 40 + "*b$\n")
    assert allowed(robots, "/" + "a" * 20_000 + "c")
    assert not allowed(robots, "/" + "a" * 200 + "b")


# --- percent-encoding (§2.2.2 Figure 4, REFERENCES §1.4) ---------------------------------------


@pytest.mark.parametrize(
    ("pattern", "url"),
    [
        ("/foo/bar/%E3%83%84", "/foo/bar/ツ"),  # Figure 4, first row, both ways round
        ("/foo/bar/ツ", "/foo/bar/%E3%83%84"),
        ("/foo/bar/ツ", "/foo/bar/%e3%83%84"),  # RFC 3986 §2.1: hex digits are case-insensitive
        ("/foo/bar/baz", "/foo/bar/%62%61%7A"),  # Figure 4, second row, both ways round
        ("/foo/bar/%62%61%7A", "/foo/bar/baz"),
        ("/~foo", "/%7Efoo"),  # unreserved '~' (RFC 3986 §2.3)
        ("/%7Efoo", "/~foo"),
        ("/a%2fb", "/a%2Fb"),
        ("/a b", "/a%20b"),  # space is encoded on both sides
        ("/foo/bar?baz=https://foo.bar", "/foo/bar?baz=https://foo.bar"),
    ],
)
def test_equivalent_encodings_match(pattern: str, url: str) -> None:
    assert not allowed(f"User-agent: *\nDisallow: {pattern}\n", url)


@pytest.mark.parametrize(
    ("pattern", "url"),
    [
        ("/a/b", "/a%2Fb"),  # %2F is not '/' (RFC 3986 §2.2: reserved, encoded or not, differ)
        ("/a%2Fb", "/a/b"),
        # Figure 4, third row, pinned (our choice): we leave delimiters as written, so the
        # encoded rule does not match the plain query. Encoding every reserved character would
        # also encode '/' and '?' and break every match; decoding would change the URI's meaning.
        ("/foo/bar?baz=https%3A%2F%2Ffoo.bar", "/foo/bar?baz=https://foo.bar"),
    ],
)
def test_reserved_characters_are_not_equivalent_to_their_encoding(pattern: str, url: str) -> None:
    assert allowed(f"User-agent: *\nDisallow: {pattern}\n", url)


def test_longest_match_counts_normalised_octets() -> None:
    # "/%62" normalises to "/b" (2 octets), so "/b/" (3) is longer; as written it would tie (4).
    robots = parse("User-agent: *\nAllow: /%62\nDisallow: /b/\n")
    assert not allowed(robots, "/b/x")
    # "/a**b" is "/a*b" (a run of '*' matches what one does), so the two tie and allow wins.
    assert allowed("User-agent: *\nAllow: /a*b\nDisallow: /a**b\n", "/axb")


# --- Crawl-delay and Request-rate (not RFC 9309: common practice, no published source) ----------


@pytest.mark.parametrize(
    ("value", "expected"),
    [("2.5", 2.5), ("10", 10.0), ("0", 0.0), (".5", 0.5), ("-1", None), ("abc", None),
     ("1e3", None), ("inf", None), ("", None)],
)  # fmt: skip
def test_crawl_delay_values(value: str, expected: float | None) -> None:
    assert parse(f"User-agent: *\nCrawl-delay: {value}\n").crawl_delay(AGENT) == expected


def test_crawl_delay_merged_groups_take_largest_and_specific_replaces_star() -> None:
    robots = parse(
        "User-agent: *\nCrawl-delay: 30\nDisallow: /a\n\n"
        "User-agent: harvester\nCrawl-delay: 4\nDisallow: /b\n\n"
        "User-agent: harvester\ncrawl_delay: 7\nDisallow: /c\n\n"
        "User-agent: other-bot\nDisallow: /\n"
    )
    assert robots.crawl_delay(AGENT) == 7.0
    assert robots.crawl_delay("other-bot") is None
    assert robots.crawl_delay("third-bot") == 30.0


@pytest.mark.parametrize(
    ("value", "expected"),
    [("1/5s", 5.0), ("3/10", 10 / 3), ("1/2m", 120.0), ("2/1h", 1800.0), ("1/5s 0600-0845", 5.0),
     ("4 / 2", 0.5), ("0/5", None), ("abc", None), ("5", None), ("1/5x", None)],
)  # fmt: skip
def test_request_rate_values(value: str, expected: float | None) -> None:
    assert parse(f"User-agent: *\nRequest-rate: {value}\n").request_interval(AGENT) == expected


def test_min_interval_is_the_larger_of_the_two() -> None:
    assert parse("User-agent: *\nCrawl-delay: 2\nRequest-rate: 1/5\n").min_interval(AGENT) == 5.0
    assert parse("User-agent: *\nCrawl-delay: 8\nRequest-rate: 1/5\n").min_interval(AGENT) == 8.0
    assert parse("User-agent: *\nRequest-rate: 1/5\n").min_interval(AGENT) == 5.0
    assert parse("User-agent: *\nDisallow: /x\n").min_interval(AGENT) is None


# --- access results (§2.3.1) --------------------------------------------------------------------


def test_unavailable_allows_everything() -> None:
    # §2.3.1.3: 4xx; also the fetcher's choice after too many redirects (MAY, §2.3.1.2).
    for robots, reason in (
        (RobotsTxt.unavailable(404), "robots.txt unavailable (HTTP 404): everything allowed"),
        (RobotsTxt.unavailable(), "robots.txt unavailable: everything allowed"),
    ):
        assert robots.check("https://league.example/admin/", AGENT) == Verdict(True, None, reason)
        assert robots.sitemaps() == []
        assert robots.min_interval(AGENT) is None


@pytest.mark.parametrize("detail", ["HTTP 503", "connection refused"])
def test_unreachable_disallows_everything(detail: str) -> None:
    # §2.3.1.4: 5xx or network error: MUST assume complete disallow.
    verdict = RobotsTxt.unreachable(detail).check("/standings", AGENT)
    assert verdict == Verdict(
        False, None, f"robots.txt unreachable ({detail}): everything disallowed"
    )


def test_rules_from_a_redirected_fetch_apply_by_path_to_the_original_host() -> None:
    # §2.3.1.2: after a redirect the rules apply to the original authority; the object only
    # looks at path+query, and robots_url names the original authority as the cache key.
    robots = parse("User-agent: *\nDisallow: /admin/\n")
    assert not allowed(robots, "https://league.example/admin/x")
    assert robots_url("https://league.example/admin/x") == "https://league.example/robots.txt"


# --- robots_url (§2.3) --------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("url", "expected"),
    [
        ("https://League.Example/standings?season=2024#top", "https://league.example/robots.txt"),
        ("HTTP://league.example:80/x", "http://league.example/robots.txt"),
        ("https://league.example:443", "https://league.example/robots.txt"),
        ("https://league.example:8443/x", "https://league.example:8443/robots.txt"),
        ("http://league.example:443/", "http://league.example:443/robots.txt"),
        ("https://user:pw@league.example/", "https://league.example/robots.txt"),
        ("http://[::1]:8080/a", "http://[::1]:8080/robots.txt"),
    ],
)
def test_robots_url(url: str, expected: str) -> None:
    assert robots_url(url) == expected


@pytest.mark.parametrize("url", ["/standings", "league.example/x", "https://league.example:99999/"])
def test_robots_url_rejects_what_has_no_authority(url: str) -> None:
    with pytest.raises(FetchError, match=r"cannot derive robots\.txt URL"):
        robots_url(url)


# --- limits (§2.5) ------------------------------------------------------------------------------


def _padded(before: int, line: bytes) -> bytes:
    """'User-agent: *' then comment lines so that ``line`` starts at octet ``before``."""
    head = b"User-agent: *\n"
    filler = b"#" + b"x" * 98 + b"\n"
    body = head + filler * ((before - len(head) - 1) // len(filler))
    data = body + b"#" * (before - len(body) - 1) + b"\n" + line
    assert data.index(line) == before
    return data


def test_600_kb_file_honours_a_rule_at_499_kib_and_not_past_the_limit() -> None:
    data = _padded(499 * 1024, b"Disallow: /late/\n")
    data = data + b"#" * (550_000 - len(data) - 1) + b"\nDisallow: /too-late/\n"
    data = data + b"#" * (600_000 - len(data) - 1) + b"\n"
    line = data[: 499 * 1024].count(b"\n") + 1
    robots = parse(data)
    assert robots.check("/late/x", AGENT).rule == RobotsRule(False, "/late/", line)
    assert allowed(robots, "/too-late/x")


def test_cut_off_last_line_is_dropped_but_a_line_ending_at_the_limit_is_kept() -> None:
    # Without the drop, the cut-off "Disallow: /c" would block "/cab".
    cut = _padded(ROBOTS_PARSE_LIMIT - 12, b"Disallow: /cut-off\n")
    assert allowed(cut, "/cab")
    assert allowed(cut, "/cut-off")
    edge = _padded(ROBOTS_PARSE_LIMIT - 15, b"Disallow: /edge\n")  # '\n' is octet 512,000
    assert not allowed(edge, "/edge")
    assert allowed(edge, "/edgy")  # the whole line was kept, not "Disallow: /edg"


def test_limit_counts_utf8_octets_of_text_input() -> None:
    # 200,000 three-octet characters = 600,000 octets, so the rule after them is past the limit.
    text = "User-agent: *\n#" + "ツ" * 200_000 + "\nDisallow: /x\n"
    assert allowed(text, "/x")


@pytest.mark.parametrize("as_text", [False, True])
def test_ten_megabyte_file_is_read_in_little_memory(as_text: bool) -> None:
    # 10 MiB of rules. Reading only the first 512,000 octets must not even copy the whole input
    # once, so the peak stays below the input's own size (as rule objects it would be >100 MB).
    data = b"User-agent: *\n" + b"Disallow: /0123456789/abcdefghij\n" * (10 * 2**20 // 33)
    data += b"Disallow: /last\n"
    content: str | bytes = data.decode("ascii") if as_text else data
    tracemalloc.start()
    try:
        robots = parse(content)
        assert allowed(robots, "/last")  # past the limit
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 10 * 2**20  # memory, not time: bench/robots_bench.py measures the time


# --- properties ---------------------------------------------------------------------------------

_PATHS = st.text(alphabet="ab/?=", max_size=8).map(lambda s: "/" + s)
_RULES = st.lists(st.tuples(st.booleans(), _PATHS), max_size=8)


def _file(rules: list[tuple[bool, str]]) -> str:
    lines = [f"{'Allow' if allow else 'Disallow'}: {pattern}" for allow, pattern in rules]
    return "User-agent: harvester\n" + "\n".join(lines) + "\n"


def _oracle(rules: list[tuple[bool, str]], path: str) -> bool:
    """Brute-force longest match (§2.2.2): longest matching prefix decides, allow wins ties."""
    hits = [(len(pattern), allow) for allow, pattern in rules if path.startswith(pattern)]
    if not hits:
        return True
    longest = max(length for length, _ in hits)
    return any(allow for length, allow in hits if length == longest)


@settings(max_examples=300, deadline=None)
@given(rules=_RULES, path=_PATHS)
def test_plain_prefix_rules_follow_longest_match(rules: list[tuple[bool, str]], path: str) -> None:
    assert allowed(_file(rules), path) is _oracle(rules, path)


@settings(max_examples=300, deadline=None)
@given(
    rules=st.lists(
        st.tuples(st.booleans(), st.text(alphabet="ab/*", max_size=6).map(lambda s: "/" + s)),
        max_size=6,
    ),
    starred=st.lists(st.booleans(), min_size=6, max_size=6),
    path=_PATHS,
)
def test_trailing_star_never_changes_the_verdict(
    rules: list[tuple[bool, str]], starred: list[bool], path: str
) -> None:
    # §2.2.3: '*' matches zero or more characters, so a trailing one adds nothing to a prefix.
    stars = [
        (allow, pattern + "*" * int(add))
        for (allow, pattern), add in zip(rules, starred, strict=False)
    ]
    assert allowed(_file(stars), path) is allowed(_file(rules), path)
