"""Harvests that take retired seasons from the demo web archive, end to end on 127.0.0.1.

The live demo site (harvester/demo/routes.py: 2024-2026 served, 404 for 2021-2023, 410 for
2012-2020) and its web archive (harvester/demo/archive_routes.py, whose module docstring is the
contract) are real servers; what they were asked is their own request logs. Stored rows are read
back with DuckDB; expected values come from the contract's schedule, the archive's listing API
(``DemoWebArchive.captures``), bytes fetched from the archive with httpx and hashed with hashlib,
and pages rendered by ``render_page`` and read with ``pandas.read_html`` — never from harvester's
own extraction or capture choice. WARC files are judged by warcio's checker.
"""

from __future__ import annotations

import dataclasses
import hashlib
import io
import re
from collections.abc import Iterator
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import duckdb
import pandas as pd
import pytest
from warcio.archiveiterator import ArchiveIterator

from harvester.demo.league import build_league
from harvester.demo.pages import render_page
from harvester.demo.replies import Reply
from harvester.demo.server import DemoServer
from harvester.demo.tour import with_demo_archive
from harvester.demo.web_archive import DemoWebArchive
from harvester.recipe import Recipe, load_recipe
from harvester.run import Outcome, RunReport, harvest, reparse
from harvester.snapshots.index import SnapshotIndex
from harvester.snapshots.stored_source import StoredSource
from tests.demo.polite import Polite
from tests.fetch.misbehaving import ScriptedSite
from tests.warc_check import warcio_check

TEST_CRAWL_DELAY = 0.05  # tests/conftest.py starts the demo hosts with this Crawl-delay
RECIPES = Path(__file__).resolve().parents[2] / "recipes"
MINUS = "\u2212"  # U+2212 MINUS SIGN, the demo's negative goal difference
EM_DASH = "\u2014"  # the demo's "salary not disclosed"


def recipe(name: str, site: str, web: DemoWebArchive, season: int, **fetch: Any) -> Recipe:
    """A demo recipe for ``season`` on ``site``, its [captures] at ``web``, without a delay."""
    loaded = load_recipe(RECIPES / f"{name}.toml", {"site": site, "season": str(season)})
    moved = with_demo_archive(loaded, web.base_url)
    # No recipe delay: the hosts' 0.05 s Crawl-delay governs (docs/fetching.md), tests stay quick.
    settings = dataclasses.replace(moved.fetch, delay=None, **fetch)
    return dataclasses.replace(moved, fetch=settings)


def part_file(archive: Path, dataset: str, table: str) -> str:
    (path,) = archive.glob(f"tables/{dataset}/{table}/*/version=1/part-0.parquet")
    return str(path)


def provenance(archive: Path, dataset: str, table: str) -> list[tuple[Any, ...]]:
    """The distinct provenance values of a stored table, read with DuckDB."""
    rows: list[tuple[Any, ...]] = duckdb.execute(
        "SELECT DISTINCT _capture_origin, _memento_datetime, _source_url, _final_url,"
        " _body_sha256, _http_status FROM read_parquet(?)",
        [part_file(archive, dataset, table)],
    ).fetchall()
    return rows


def stamp(moment: datetime) -> str:
    return moment.strftime("%Y%m%d%H%M%S")


def raw_uri(web: DemoWebArchive, uri_r: str, moment: datetime) -> str:
    """The contract's URI of a capture's unmodified bytes: ``/web/{timestamp}raw/{URI-R}``."""
    return web.url(f"/web/{stamp(moment)}raw/{uri_r}")


def raw_bytes(web: DemoWebArchive, uri_r: str, moment: datetime) -> bytes:
    """A capture's unmodified bytes, fetched with httpx at the archive's pace."""
    polite = Polite(web, margin=TEST_CRAWL_DELAY)
    try:
        agent = {"User-Agent": "harvester-tests (+mailto:t@example.org)"}
        response = polite.get(f"/web/{stamp(moment)}raw/{uri_r}", headers=agent)
    finally:
        polite.client.close()
    assert response.status_code == 200
    return response.content


def table_frame(html: str, table_id: str, **converters: Any) -> pd.DataFrame:
    """The table ``#table_id`` of ``html`` as pandas.read_html (lxml) reads it, cells as text."""
    frames: list[pd.DataFrame] = pd.read_html(
        io.StringIO(html),
        flavor="lxml",
        attrs={"id": table_id},
        keep_default_na=False,
        thousands=None,
        converters=converters,
    )
    assert len(frames) == 1
    return frames[0]


def lines(report: RunReport) -> dict[str, str]:
    return {outcome.table: outcome.line() for outcome in report.outcomes}


def by_table(report: RunReport) -> dict[str, Outcome]:
    return {outcome.table: outcome for outcome in report.outcomes}


def assert_polite(*hosts: DemoServer | DemoWebArchive | ScriptedSite) -> None:
    for host in hosts:
        assert host.violations() == [], host.base_url  # Crawl-delay kept, start to start


# -- live-then-capture on a gone page -----------------------------------------------------------


@pytest.mark.parametrize(("season", "status"), [(2022, 404), (2018, 410)])
def test_a_gone_season_is_stored_from_its_capture(
    demo_site: DemoServer,
    demo_archive: DemoWebArchive,
    tmp_path: Path,
    season: int,
    status: int,
) -> None:
    contracts = recipe("league-contracts", demo_site.base_url, demo_archive, season)
    report = harvest(contracts, archive=str(tmp_path))
    (outcome,) = report.outcomes
    assert (outcome.status, outcome.origin) == ("new", "web-archive")
    # RFC 9110 §15.5.5 (404) and §15.5.11 (410): the live page is gone, so the capture is asked.
    assert f"the live page answers HTTP {status}" in outcome.notes
    page = f"/seasons/{season}/contracts.html"
    assert [r.status for r in demo_site.requests_for(page)] == [status]
    uri_r = demo_archive.uri_r(season, "contracts")
    june_28 = demo_archive.captures(uri_r)[1].datetime  # the archive's own listing
    assert june_28 == datetime(season, 6, 28, 14, 5, 9, tzinfo=UTC)  # the contract's schedule
    body = raw_bytes(demo_archive, uri_r, june_28)
    expected = table_frame(body.decode("utf-8"), "contracts")
    assert outcome.rows == len(expected)  # pandas.read_html counts the same rows
    ((origin, memento, source, final, sha256, http_status),) = provenance(
        tmp_path, "league-contracts", "contracts"
    )
    assert origin == "web-archive"
    assert memento == june_28  # RFC 7089 §2.1.1 Memento-Datetime, as the TimeMap lists it
    assert source == demo_site.url(page)  # the page's own URL (URI-R)
    assert final == raw_uri(demo_archive, uri_r, june_28)  # the memento URI actually fetched
    assert sha256 == hashlib.sha256(body).hexdigest()
    assert http_status == 200
    assert_polite(demo_site, demo_archive)


def test_an_archived_404_is_skipped_and_the_line_says_so(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    standings = recipe("league-standings", demo_site.base_url, demo_archive, 2019)
    report = harvest(standings, archive=str(tmp_path))
    line = lines(report)["standings"]
    assert line.startswith("new\t")
    assert "capture of 2019-07-03T08:30:00Z" in line  # the contract: 2019's July 3 capture
    # RFC 7089 §4.5.5: June 28 holds an archived 404; it is skipped, and the line says so.
    assert "skipped 1 nearer capture(s)" in line
    assert "2019-06-28T14:05:09Z" in line and "HTTP 404" in line
    ((_, memento, _, final, _, _),) = provenance(tmp_path, "league-standings", "standings")
    july_3 = demo_archive.captures(demo_archive.uri_r(2019, "standings"))[2].datetime
    assert memento == july_3
    assert final == raw_uri(demo_archive, demo_archive.uri_r(2019, "standings"), july_3)
    assert_polite(demo_site, demo_archive)


# -- live-then-capture on a live page that lacks a table ----------------------------------------


def players_page_without_advanced(season: int) -> str:
    """The demo's players page of ``season`` as a redesigned live site serves it: the
    commented-out advanced table is gone, the players table is still there."""
    html = render_page(build_league(), f"/seasons/{season}/players.html")
    assert html is not None
    redesigned, removed = re.subn(r'<div id="all_advanced">.*?</div>\n', "", html, flags=re.S)
    assert removed == 1 and 'id="advanced"' not in redesigned and 'id="players"' in redesigned
    return redesigned


@pytest.fixture
def redesigned_site() -> Iterator[ScriptedSite]:
    """A live site whose 2020 players page answers 200 but no longer has the advanced table.

    The demo site serves the same page layout for every season it serves, and the archive holds
    only seasons it no longer serves, so no demo page is both live and lacking a table that its
    capture has. A scripted loopback host (tests/fetch/misbehaving.py) plays the live site after
    a redesign; the demo archive is started with it as its ``site``, so its URI-Rs are this
    host's pages and its captures (rendered from the league, as the contract says) still hold
    the table.
    """
    page = players_page_without_advanced(2020).encode("utf-8")
    reply = Reply(200, {"Content-Type": "text/html; charset=utf-8"}, page)
    with ScriptedSite(
        {"/seasons/2020/players.html": [reply]}, crawl_delay=TEST_CRAWL_DELAY
    ) as host:
        yield host
    assert not host.errors, host.errors[0]


def test_a_table_the_live_page_lacks_is_taken_from_the_capture(
    redesigned_site: ScriptedSite, tmp_path: Path
) -> None:
    with DemoWebArchive(site=redesigned_site.base_url, crawl_delay=TEST_CRAWL_DELAY) as web:
        players = recipe("league-players", redesigned_site.base_url, web, 2020)
        report = harvest(players, archive=str(tmp_path))
        uri_r = web.uri_r(2020, "players")
        june_28 = web.captures(uri_r)[1].datetime
        body = raw_bytes(web, uri_r, june_28)
        memento_uri = raw_uri(web, uri_r, june_28)
        assert_polite(web, redesigned_site)
        assert not web.errors
    outcomes = by_table(report)
    assert (outcomes["players"].status, outcomes["players"].origin) == ("new", "live")
    advanced = outcomes["advanced"]
    assert (advanced.status, advanced.origin) == ("new", "web-archive")
    assert "the live page lacks the table" in advanced.notes
    assert advanced.memento_datetime == "2020-06-28T14:05:09Z"
    # The reference: the advanced table inside the capture's comment, read by pandas.
    hidden = re.search(r"<!--(.*?)-->", body.decode("utf-8"), flags=re.S)
    assert hidden is not None
    assert advanced.rows == len(table_frame(hidden[1], "advanced"))
    ((origin, memento, source, final, sha256, _),) = provenance(
        tmp_path, "league-players", "advanced"
    )
    assert (origin, memento, source) == ("web-archive", june_28, uri_r)
    assert final == memento_uri
    assert sha256 == hashlib.sha256(body).hexdigest()
    ((live_origin, live_memento, *_),) = provenance(tmp_path, "league-players", "players")
    assert (live_origin, live_memento) == ("live", None)
    # The live page was asked for once: the second try went to the archive only.
    assert len(redesigned_site.requests_for("/seasons/2020/players.html")) == 1


def test_a_second_run_takes_the_memento_from_the_cache(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    contracts = recipe("league-contracts", demo_site.base_url, demo_archive, 2018)
    harvest(contracts, archive=str(tmp_path))
    (again,) = harvest(contracts, archive=str(tmp_path)).outcomes
    assert again.status == "unchanged"
    # Still a capture, and said so, although its bytes came from the HTTP cache this time.
    assert (again.origin, again.memento_datetime) == ("web-archive", "2018-06-28T14:05:09Z")
    uri_r = demo_archive.uri_r(2018, "contracts")
    june_28 = demo_archive.captures(uri_r)[1].datetime
    # RFC 7089 §2.1.1: a memento "will no longer change"; REFERENCES §4.6: cached by URI-M.
    assert len(demo_archive.requests_for(f"/web/{stamp(june_28)}raw/{uri_r}")) == 1
    assert_polite(demo_site, demo_archive)


# -- windows-1252 captures ----------------------------------------------------------------------


def test_a_windows_1252_contracts_capture_gives_the_live_pages_values(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    contracts = recipe("league-contracts", demo_site.base_url, demo_archive, 2013)
    (outcome,) = harvest(contracts, archive=str(tmp_path)).outcomes
    assert (outcome.status, outcome.origin) == ("new", "web-archive")
    uri_r = demo_archive.uri_r(2013, "contracts")
    body = raw_bytes(demo_archive, uri_r, demo_archive.captures(uri_r)[1].datetime)
    # Contract: seasons up to 2014 are stored in cp1252, where the em dash is byte 0x97.
    assert b"\x97" in body and b'<meta charset="windows-1252">' in body
    live = render_page(build_league(), "/seasons/2013/contracts.html")  # as the site served it
    assert live is not None
    frame = table_frame(live, "contracts", Salary=str)
    assert (frame["Salary"] == EM_DASH).any()  # the test needs an undisclosed salary
    expected = {
        player: None if salary == EM_DASH else float(salary.lstrip("$").replace(",", ""))
        for player, salary in zip(frame["Player"], frame["Salary"], strict=True)
    }
    stored = duckdb.execute(
        "SELECT player, salary FROM read_parquet(?)",
        [part_file(tmp_path, "league-contracts", "contracts")],
    ).fetchall()
    assert dict(stored) == expected
    assert len(stored) == len(frame)


def test_a_windows_1252_standings_capture_keeps_the_minus_sign(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    standings = recipe("league-standings", demo_site.base_url, demo_archive, 2013)
    (outcome,) = harvest(standings, archive=str(tmp_path)).outcomes
    assert (outcome.status, outcome.origin) == ("new", "web-archive")
    uri_r = demo_archive.uri_r(2013, "standings")
    body = raw_bytes(demo_archive, uri_r, demo_archive.captures(uri_r)[1].datetime)
    # Contract: U+2212 is not in cp1252, so the capture writes it as a character reference.
    assert b"&#8722;" in body
    live = render_page(build_league(), "/seasons/2013/standings.html")
    assert live is not None
    frame = table_frame(live, "standings", GD=str, Rank=str)
    clubs = frame[frame["Rank"].str.fullmatch(r"\d+")]  # not the conference rows
    assert clubs["GD"].str.startswith(MINUS).any()  # the test needs a negative difference
    expected = {
        club: int(gd.replace(MINUS, "-"))
        for club, gd in zip(clubs["Club"], clubs["GD"], strict=True)
    }
    stored = duckdb.execute(
        "SELECT club, gd FROM read_parquet(?)",
        [part_file(tmp_path, "league-standings", "standings")],
    ).fetchall()
    assert dict(stored) == expected


# -- past = "capture" and past = "live" ---------------------------------------------------------


def test_past_capture_for_a_live_season_fails_that_table_only(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    # Two tables on two pages: standings of 2026 (live, never archived) and, by its own url,
    # contracts of 2022 (archived); capture_near is fixed, since one page has no {season}.
    text = (RECIPES / "league-standings.toml").read_text(encoding="utf-8")
    assert 'capture_near = "{season}-06-30"' in text
    text = text.replace('capture_near = "{season}-06-30"', 'capture_near = "2022-06-30"')
    two_pages = tmp_path / "two.toml"
    two_pages.write_text(
        text + '\n[tables.contracts]\nurl = "{site}/seasons/2022/contracts.html"\n'
        'select = "table#contracts"\n',
        encoding="utf-8",
    )
    loaded = load_recipe(two_pages, {"site": demo_site.base_url, "season": "2026"})
    moved = with_demo_archive(loaded, demo_archive.base_url)
    fetch = dataclasses.replace(moved.fetch, delay=None, past="capture")
    report = harvest(dataclasses.replace(moved, fetch=fetch), archive=str(tmp_path / "archive"))
    outcomes = by_table(report)
    assert outcomes["standings"].status == "failed"
    assert "holds no capture" in outcomes["standings"].line()
    contracts = outcomes["contracts"]
    assert (contracts.status, contracts.origin) == ("new", "web-archive")
    assert contracts.memento_datetime == "2022-06-28T14:05:09Z"  # the contract's schedule
    # past = "capture": the live site is never asked for a season page.
    assert [r.path for r in demo_site.log if r.path.startswith("/seasons/")] == []
    assert_polite(demo_site, demo_archive)


def test_past_live_on_a_gone_season_fails_and_asks_no_archive(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    players = recipe("league-players", demo_site.base_url, demo_archive, 2018, past="live")
    report = harvest(players, archive=str(tmp_path))
    assert {o.status for o in report.outcomes} == {"failed"}
    assert all("HTTP 410" in o.message for o in report.outcomes)  # RFC 9110 §15.5.11
    assert demo_archive.log == []  # past = "live": the archive hears nothing, not even robots
    assert list(tmp_path.glob("tables/**/part-0.parquet")) == []


# -- politeness over a backfill ------------------------------------------------------------------


def test_a_backfill_keeps_both_hosts_pace(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    for name in ("league-players", "league-contracts", "league-standings"):
        for season in (2015, 2017, 2021, 2026):
            report = harvest(
                recipe(name, demo_site.base_url, demo_archive, season), archive=str(tmp_path)
            )
            assert not report.failed, [o.line() for o in report.outcomes]
    assert_polite(demo_site, demo_archive)
    # The site's live page (2026) came from the site, the rest from captures.
    assert [r.path for r in demo_archive.log if "/2026/" in r.path] == []
    # RFC 7089 §4.5.4: 2017's archived 302 points at the live front page; it is never followed.
    assert demo_site.requests_for("/index.html") == []


# -- the snapshot archive ------------------------------------------------------------------------


def test_the_snapshot_archive_keeps_the_memento_exchange(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    standings = recipe("league-standings", demo_site.base_url, demo_archive, 2022)
    harvest(standings, archive=str(tmp_path))
    uri_r = demo_archive.uri_r(2022, "standings")
    june_28 = demo_archive.captures(uri_r)[1].datetime
    memento = raw_uri(demo_archive, uri_r, june_28)
    index = SnapshotIndex.load(tmp_path / "snapshots")
    kept = [entry for entry in index.entries() if entry.url == memento]
    assert [(e.record_type, e.status, e.origin) for e in kept] == [("response", 200, "web-archive")]
    assert kept[0].memento_datetime == june_28  # RFC 7089 §2.1.1, as the memento said it
    body = raw_bytes(demo_archive, uri_r, june_28)
    assert kept[0].body_sha256 == hashlib.sha256(body).hexdigest()
    record_ids = duckdb.execute(
        "SELECT DISTINCT _warc_record_id FROM read_parquet(?)",
        [part_file(tmp_path, "league-standings", "standings")],
    ).fetchall()
    assert record_ids == [(kept[0].record_id,)]  # rows lead to the record of their page's body
    files = sorted((tmp_path / "snapshots" / "warc").iterdir())
    assert files
    for path in files:
        done = warcio_check(path)  # WARC 1.1 §5.8/§5.9: every block and payload digest verifies
        assert done.returncode == 0, done.stdout + done.stderr
    # Read by warcio itself: the memento's response record, its Memento-Datetime kept as sent.
    found: list[tuple[str, str | None, bytes]] = []
    for path in files:
        with path.open("rb") as stream:
            for record in ArchiveIterator(stream):
                if (
                    record.rec_type == "response"
                    and record.rec_headers.get_header("WARC-Target-URI") == memento
                ):
                    record_id = record.rec_headers.get_header("WARC-Record-ID")
                    said = record.http_headers.get_header("Memento-Datetime")
                    found.append((record_id, said, record.content_stream().read()))
    # RFC 7089 §2.1.1 IMF-fixdate; 28 June 2022 was a Tuesday (checked with GNU date).
    assert found == [(kept[0].record_id, "Tue, 28 Jun 2022 14:05:09 GMT", body)]


# -- replaying a run that took a capture ---------------------------------------------------------

CONTRACT_COLUMNS = "player, club, salary, years, expires"  # recipes/league-contracts.toml


def test_a_cassette_of_a_capture_run_replays_the_capture(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    contracts = recipe("league-contracts", demo_site.base_url, demo_archive, 2018)
    cassette = tmp_path / "run.warc.gz"
    recorded = harvest(contracts, archive=str(tmp_path / "recorded"), record=cassette)
    assert [o.status for o in recorded.outcomes] == ["new"]
    source = StoredSource.from_cassette(cassette)
    (replayed,) = harvest(contracts, archive=str(tmp_path / "replayed"), source=source).outcomes
    # docs/snapshots.md: "Replaying a recorded run gives tables identical in their data
    # columns" — the recorded run's page came from the memento, so the replay must too.
    assert replayed.status == "new", replayed.line()
    before = part_file(tmp_path / "recorded", "league-contracts", "contracts")
    after = part_file(tmp_path / "replayed", "league-contracts", "contracts")
    differ = duckdb.execute(
        f"(SELECT {CONTRACT_COLUMNS} FROM read_parquet(?) EXCEPT ALL"
        f" SELECT {CONTRACT_COLUMNS} FROM read_parquet(?)) UNION ALL"
        f" (SELECT {CONTRACT_COLUMNS} FROM read_parquet(?) EXCEPT ALL"
        f" SELECT {CONTRACT_COLUMNS} FROM read_parquet(?))",
        [before, after, after, before],
    ).fetchall()
    assert differ == []
    origins = duckdb.execute("SELECT DISTINCT _capture_origin FROM read_parquet(?)", [after])
    assert origins.fetchall() == [("cassette",)]  # docs/snapshots.md


def test_reparse_of_a_capture_run_reads_the_kept_memento(
    demo_site: DemoServer, demo_archive: DemoWebArchive, tmp_path: Path
) -> None:
    contracts = recipe("league-contracts", demo_site.base_url, demo_archive, 2018)
    harvest(contracts, archive=str(tmp_path))
    asked = len(demo_archive.log), len(demo_site.log)
    (again,) = reparse(contracts, archive=str(tmp_path)).outcomes
    # docs/snapshots.md: reparse reads "the newest capture of that page" from the snapshot
    # archive, and "a table whose data is the same stays the version it was". The page's
    # capture is the memento kept there, not the live site's 410 (RFC 9110 §15.5.11).
    assert (again.status, again.version) == ("unchanged", 1), again.line()
    assert (len(demo_archive.log), len(demo_site.log)) == asked  # no network at all
