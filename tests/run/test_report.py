"""The run report: one tab-separated line per table, which no value can split; its JSON lines.

The JSON lines' request counts are judged by the demo server's own request log.
"""

from __future__ import annotations

import json
from dataclasses import asdict
from datetime import UTC, datetime
from pathlib import Path

from harvester.demo.server import DemoServer
from harvester.fetch.identity import Identity
from harvester.fetch.sync import SyncFetcher
from harvester.run.report import Outcome, RunReport, summary, write_report

STARTED = datetime(2026, 3, 1, 12, 0, tzinfo=UTC)


def test_an_outcome_line_has_one_field_per_part() -> None:
    outcome = Outcome("league-players", "players", "http://127.0.0.1:8650/p", {"season": 2026},
                      "new", rows=140, version=1)  # fmt: skip
    assert outcome.line().split("\t") == [
        "new",
        "league-players/players",
        "season=2026",
        "140 rows, version 1",
        "http://127.0.0.1:8650/p",
    ]


def test_a_value_holding_a_tab_or_line_break_cannot_forge_a_line() -> None:
    outcome = Outcome("d", "t", "http://127.0.0.1/p", {"league": "north\tsouth"}, "failed",
                      message="HTTP 404\nnew\td/t")  # fmt: skip
    line = outcome.line()
    assert "\n" not in line
    assert line.split("\t") == [
        "failed",
        "d/t",
        "league=north\\tsouth",
        "http://127.0.0.1/p",
        "HTTP 404\\nnew\\td/t",
    ]


def test_summary_counts_by_status_in_order_of_first_appearance() -> None:
    def outcome(status: str) -> Outcome:
        return Outcome("d", "t", "u", {}, status)  # type: ignore[arg-type]

    assert summary([outcome("new"), outcome("failed"), outcome("new")]) == "2 new, 1 failed"
    assert summary([]) == "nothing to do"


def test_json_lines_mark_tables_and_requests_and_keep_every_outcome_key() -> None:
    outcome = Outcome("d", "t", "http://127.0.0.1/p", {"season": 2026}, "new", rows=3, version=1)
    request: dict[str, object] = {
        "started_at": "2026-03-01T12:00:01.000000Z",
        "host": "http://127.0.0.1",
        "url": "http://127.0.0.1/p",
        "status": 200,
        "gap_seconds": None,
    }
    hosts: dict[str, dict[str, object]] = {"http://127.0.0.1": {"requests": 1}}
    report = RunReport("r1", "d", "archive", STARTED, outcomes=[outcome], hosts=hosts,
                       requests=[request])  # fmt: skip
    header, table, sent = (json.loads(line) for line in report.to_json_lines().splitlines())
    assert header["hosts"] == {"http://127.0.0.1": {"requests": 1}}
    assert "kind" not in header
    assert table == {"kind": "table", **json.loads(json.dumps(asdict(outcome)))}
    assert sent == {"kind": "request", **request}


def test_a_report_without_requests_has_empty_hosts_and_no_request_lines() -> None:
    lines = RunReport("r2", "d", "archive", STARTED).to_json_lines().splitlines()
    assert len(lines) == 1
    assert json.loads(lines[0])["hosts"] == {}


def test_the_fetchers_counts_in_the_kept_report_equal_the_servers_log(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    identity = Identity.from_contact("mailto:analyst@example.org")
    with SyncFetcher(identity, cache_dir=tmp_path / "cache") as client:
        for path in ("/seasons/2026/players.html", "/seasons/2026/standings.html"):
            client.fetch(demo_site.url(path))
            client.fetch(demo_site.url(path))  # fresh in the cache: a hit, not a request
        report = RunReport("r3", "d", str(tmp_path), STARTED)
        report.hosts, report.requests = client.fetcher.stats.to_report()  # harvest.py's wiring
    write_report(str(tmp_path), report)
    lines = (tmp_path / "runs" / "r3.jsonl").read_text().splitlines()
    header, *rest = (json.loads(line) for line in lines)
    sent = [item for item in rest if item["kind"] == "request"]
    log = demo_site.log
    assert [item["url"] for item in sent] == [demo_site.url(record.path) for record in log]
    assert [item["status"] for item in sent] == [record.status for record in log]
    (counts,) = header["hosts"].values()
    assert counts["requests"] == len(log) == 3
    assert counts["cache_hits"] == 2
    assert counts["interval_seconds"] == demo_site.routes.crawl_delay
