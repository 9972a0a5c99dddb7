"""The first end-to-end path: recipe → polite fetch → extract → versioned archive.

Against the real demo server on 127.0.0.1 wherever fetching is the subject; tests of what a run
writes (the run report, refused drift) replay the committed cassettes instead (tests/data/
cassettes/, the same deterministic pages). Expected values come from the league model and the
server's request log, never from the code under test.
"""

from __future__ import annotations

import asyncio
import dataclasses
import json
from collections.abc import Callable
from pathlib import Path

import duckdb
import pyarrow.parquet as pq
import pytest

from harvester.demo.league import build_league
from harvester.demo.server import DemoServer
from harvester.fetch.pacing import host_key
from harvester.recipe import Recipe, load_recipe
from harvester.run import Outcome, harvest, live_source
from harvester.snapshots.stored_source import StoredSource

TEST_CRAWL_DELAY = 0.05  # tests/conftest.py starts demo servers with this Crawl-delay

RECIPES = Path(__file__).resolve().parents[2] / "recipes"
Factory = Callable[..., DemoServer]


def recipe(name: str, site: DemoServer | str, **overrides: str) -> Recipe:
    base = site if isinstance(site, str) else site.base_url
    return load_recipe(RECIPES / f"{name}.toml", {"site": base, **overrides})


def parquet_files(root: Path) -> list[Path]:
    return sorted(root.glob("tables/**/part-0.parquet"))


def test_players_land_as_version_1_with_provenance(demo_site: DemoServer, tmp_path: Path) -> None:
    report = harvest(recipe("league-players", demo_site), archive=str(tmp_path))
    assert [(o.table, o.status, o.version) for o in report.outcomes] == [
        ("players", "new", 1),
        ("advanced", "new", 1),
    ]
    season = build_league().season(2026)
    path = tmp_path / "tables/league-players/players/season=2026/version=1/part-0.parquet"
    table = pq.read_table(path)
    assert table.num_rows == len(season.players)
    page = demo_site.url("/seasons/2026/players.html")
    assert set(table.column("_source_url").to_pylist()) == {page}
    assert set(table.column("_capture_origin").to_pylist()) == {"live"}
    assert set(table.column("_http_status").to_pylist()) == {200}
    assert set(table.column("_recipe").to_pylist()) == {"league-players"}
    # The request log shows what was fetched: robots.txt first, the page once, nothing else.
    assert [record.path for record in demo_site.log] == [
        "/robots.txt",
        "/seasons/2026/players.html",
    ]
    assert demo_site.violations() == []


def test_an_unchanged_rerun_adds_no_version(demo_site: DemoServer, tmp_path: Path) -> None:
    players = recipe("league-players", demo_site)
    harvest(players, archive=str(tmp_path))
    again = harvest(players, archive=str(tmp_path))
    assert {o.status for o in again.outcomes} == {"unchanged"}
    assert len(parquet_files(tmp_path)) == 2
    # The second run came from the fresh cache: the page was asked for once only.
    assert len(demo_site.requests_for("/seasons/2026/players.html")) == 1


def test_a_changed_page_becomes_version_2(demo_site_factory: Factory, tmp_path: Path) -> None:
    site = demo_site_factory(max_age=0)
    players = recipe("league-players", site)
    harvest(players, archive=str(tmp_path))
    site.advance()  # the demo clock moves: some goals change in the latest season
    report = harvest(players, archive=str(tmp_path))
    statuses = {o.table: (o.status, o.version) for o in report.outcomes}
    assert statuses["players"] == ("new", 2)
    rows = (
        duckdb.connect()
        .sql(
            f"SELECT version, count(*) FROM read_parquet('{tmp_path}/tables/league-players/players/"
            "*/*/part-0.parquet', hive_partitioning=true) GROUP BY version ORDER BY version"
        )
        .fetchall()
    )
    assert [version for version, _ in rows] == [1, 2]


def test_a_failing_table_does_not_stop_the_others(demo_site: DemoServer, tmp_path: Path) -> None:
    # Season 2019 is retired on the live demo site (410), 2026 is served; live only here.
    players = recipe("league-players", demo_site, season="2019")
    players = dataclasses.replace(players, fetch=dataclasses.replace(players.fetch, past="live"))
    report = harvest(players, archive=str(tmp_path))
    assert {o.status for o in report.outcomes} == {"failed"}
    assert all("HTTP 410" in o.message for o in report.outcomes)
    assert report.failed
    assert parquet_files(tmp_path) == []
    standings = recipe("league-standings", demo_site)
    assert not harvest(standings, archive=str(tmp_path)).failed


def test_run_report_is_written_as_json_lines(
    cassette: Callable[[str], Path], cassette_site: str, tmp_path: Path
) -> None:
    source = StoredSource.from_cassette(cassette("league-contracts-2026"))
    report = harvest(
        recipe("league-contracts", cassette_site), archive=str(tmp_path), source=source
    )
    lines = (tmp_path / "runs" / f"{report.run_id}.jsonl").read_text().splitlines()
    header, *rest = (json.loads(line) for line in lines)
    assert header["run_id"] == report.run_id and header["failed"] is False
    assert [item["table"] for item in rest] == ["contracts"]
    assert rest[0]["status"] == "new"


def test_refused_drift_keeps_the_archive_and_fails_the_run(
    cassette: Callable[[str], Path], cassette_site: str, tmp_path: Path
) -> None:
    # The standings page has a row per club; a recipe that demands 50 rows refuses it.
    assert len(build_league().season(2026).standings) < 50
    text = (RECIPES / "league-standings.toml").read_text(encoding="utf-8")
    strict = tmp_path / "strict.toml"
    strict.write_text(text + "\n[store]\nmin_rows = 50\n", encoding="utf-8")
    loaded = load_recipe(strict, {"site": cassette_site})
    assert loaded.store.min_rows == 50
    source = StoredSource.from_cassette(cassette("league-standings-2026"))
    report = harvest(loaded, archive=str(tmp_path / "archive"), source=source)
    (outcome,) = report.outcomes
    assert outcome.status == "refused"
    assert "min_rows" in outcome.message and "refused" in outcome.line()
    assert report.failed
    assert parquet_files(tmp_path / "archive") == []


def test_each_outcome_is_reported_as_soon_as_it_is_known(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    # Two tables on two pages: the first outcome must arrive before the second page is asked for.
    text = (RECIPES / "league-standings.toml").read_text(encoding="utf-8")
    two_pages = tmp_path / "two.toml"
    two_pages.write_text(
        text + '\n[tables.contracts]\nurl = "{site}/seasons/{season}/contracts.html"\n'
        'select = "table#contracts"\n',
        encoding="utf-8",
    )
    seen: list[tuple[str, int]] = []

    def note(outcome: Outcome) -> None:
        seen.append((outcome.table, len(demo_site.log)))

    loaded = load_recipe(two_pages, {"site": demo_site.base_url})
    report = harvest(loaded, archive=str(tmp_path / "archive"), on_outcome=note)
    assert [table for table, _ in seen] == [o.table for o in report.outcomes]
    # robots.txt + standings when the first is reported; + contracts when the second is.
    assert seen == [("standings", 2), ("contracts", 3)]


@pytest.mark.parametrize(("delay", "interval"), [(None, TEST_CRAWL_DELAY), (0.5, 0.5)])
def test_without_a_delay_the_sites_crawl_delay_governs(
    demo_site: DemoServer, tmp_path: Path, delay: float | None, interval: float
) -> None:
    # docs/fetching.md: the interval is the site's Crawl-delay, raised by the recipe's delay if
    # that is larger; with no delay in the recipe, the Crawl-delay alone (not a 1 s default).
    players = recipe("league-players", demo_site)
    chosen = dataclasses.replace(players, fetch=dataclasses.replace(players.fetch, delay=delay))
    page = demo_site.url("/seasons/2026/players.html")

    async def interval_in_force() -> float:
        async with live_source(chosen, str(tmp_path)) as fetcher:
            await fetcher.check_robots(page)
            return fetcher.pacer.interval(host_key(page))

    assert asyncio.run(interval_in_force()) == interval


def test_the_recipes_max_wait_reaches_the_fetcher(
    demo_site_factory: Factory, tmp_path: Path
) -> None:
    site = demo_site_factory(crawl_delay=2.0)
    standings = recipe("league-standings", site)
    strict = dataclasses.replace(standings, fetch=dataclasses.replace(standings.fetch, max_wait=1))
    (outcome,) = harvest(strict, archive=str(tmp_path)).outcomes
    assert outcome.status == "failed" and "over the 1 s cap" in outcome.message
