"""Judging URLs by robots.txt as a library: by a saved file, and live against the demo site."""

from __future__ import annotations

import json

from harvester.demo.server import DemoServer
from harvester.fetch.identity import Identity
from harvester.fetch.robots_check import judge_by_file, judge_live

FILE = b"User-agent: *\nDisallow: /private/\nAllow: /private/open/\n"


def test_verdicts_keep_the_order_given_and_name_the_deciding_rule() -> None:
    urls = ["/private/x", "/seasons/2026/", "/private/open/y"]
    report = judge_by_file(FILE, urls, "harvester")
    # RFC 9309 §2.2.2: the longest match decides; no match means allowed.
    assert report.text_lines() == [
        "disallowed\t/private/x",
        "allowed\t/seasons/2026/",
        "allowed\t/private/open/y",
    ]
    assert (
        report.text_lines(explain=True)[0] == "disallowed\t/private/x\tline 2: Disallow: /private/"
    )
    record = json.loads(json.dumps(report.to_dict()))
    assert record["urls"][2]["rule"] == "Allow: /private/open/" and record["urls"][2]["line"] == 3
    assert record["crawl_delay"] == {}


def test_a_saved_file_reports_its_crawl_delay_for_the_agent() -> None:
    content = FILE + b"Crawl-delay: 2.5\n\nUser-agent: otherbot\nCrawl-delay: 9\n"
    # Crawl-delay is common practice, not RFC 9309: read from the group the agent selects.
    report = judge_by_file(content, ["/seasons/2026/"], "harvester")
    assert report.to_dict()["crawl_delay"] == {"robots.txt": 2.5}
    assert report.text_lines() == ["allowed\t/seasons/2026/", "crawl-delay\t2.5"]
    named = judge_by_file(content, ["/x"], "otherbot", location="saved/robots.txt")
    assert named.crawl_delays == {"saved/robots.txt": 9.0}


def test_live_judging_reads_each_site_once_and_reports_its_crawl_delay(
    demo_site: DemoServer,
) -> None:
    urls = [demo_site.url("/seasons/2026/players.html"), demo_site.url("/private/notes.html")]
    report = judge_live(urls, "harvester", Identity.from_contact("analyst@example.org"))
    assert [verdict.verdict.allowed for verdict in report.verdicts] == [True, False]
    # The demo's robots.txt asks for the fixture's Crawl-delay (tests/conftest.py: 0.05 s).
    assert report.crawl_delays == {demo_site.url("/robots.txt"): 0.05}
    assert report.text_lines()[-1] == "crawl-delay\t0.05"
    assert [record.path for record in demo_site.log] == ["/robots.txt"]
