"""The committed cassettes (tests/data/cassettes/): they replay offline into the league's tables,
their rows lead to their own records, warcio accepts them, they stay small, and they are not stale.

Expected tables come from the league model (harvester/demo/league.py); what a cassette holds is
read with warcio, never with the code under test; staleness is judged against a fresh recording
by tools/record_cassettes.py from the live loopback demo site.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import importlib.util
import json
import subprocess
import sys
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from types import ModuleType
from urllib.parse import urlsplit

import httpx
import pyarrow.parquet as pq
import pytest
from warcio.archiveiterator import ArchiveIterator

from harvester.demo.league import build_league
from harvester.demo.records import Season
from harvester.demo.server import DemoServer
from harvester.recipe import load_recipe
from harvester.run import RunReport, harvest
from harvester.snapshots.stored_source import StoredSource
from tests.cassettes import CASSETTE_DIR, NetworkGuard

ROOT = Path(__file__).resolve().parents[2]
RECIPES = ROOT / "recipes"
MANIFEST = json.loads((CASSETTE_DIR / "cassettes.json").read_text(encoding="utf-8"))
NAMES = sorted(name.removesuffix(".warc.gz") for name in MANIFEST["cassettes"])
# Committed to git: every re-record adds each file again to the history, so a cassette must stay
# a few kilobytes. One season page with robots.txt is about 3-9 KiB gzipped; 64 KiB would mean a
# recording caught far more than its one page (retries, every season, a bigger site).
MAX_CASSETTE_BYTES = 64 * 1024
Rows = list[dict[str, object]]


@dataclass(frozen=True)
class Stored:
    """One WARC record as warcio reads it."""

    kind: str
    url: str | None
    record_id: str
    status: str | None
    payload: bytes


def stored(path: Path) -> list[Stored]:
    with path.open("rb") as stream:
        return [
            Stored(
                record.rec_type,
                record.rec_headers.get_header("WARC-Target-URI"),
                record.rec_headers.get_header("WARC-Record-ID"),
                record.http_headers.get_statuscode() if record.http_headers else None,
                record.content_stream().read(),
            )
            for record in ArchiveIterator(stream)
        ]


def about(name: str) -> dict[str, object]:
    entry: dict[str, object] = MANIFEST["cassettes"][f"{name}.warc.gz"]
    return entry


def page_url(site: str, name: str) -> str:
    """The demo site's season page a cassette holds: /seasons/<year>/<kind>.html."""
    entry = about(name)
    kind = str(entry["recipe"]).removeprefix("league-")
    return f"{site}/seasons/{entry['season']}/{kind}.html"


def replay(cassette: Path, name: str, site: str, archive: Path) -> RunReport:
    entry = about(name)
    recipe = load_recipe(
        RECIPES / f"{entry['recipe']}.toml", {"site": site, "season": str(entry["season"])}
    )
    return harvest(recipe, archive=str(archive), source=StoredSource.from_cassette(cassette))


def rows_of(archive: Path, name: str, table: str) -> Rows:
    entry = about(name)
    (path,) = archive.glob(f"tables/{entry['recipe']}/{table}/*/version=1/part-0.parquet")
    rows: Rows = pq.read_table(path).to_pylist()
    return rows


def check_players(season: Season, tables: dict[str, Rows]) -> None:
    league = build_league()
    by_id = {row["player_id"]: row for row in tables["players"]}
    assert len(tables["players"]) == len(by_id) == len(season.players)  # totals row dropped
    for expected in season.players:
        row = by_id[expected.player_id]
        assert row["club"] == expected.club
        assert row["shooting_goals"] == expected.goals
        assert row["min"] == expected.seconds  # mm:ss on the page, seconds in the table
        assert row["ast"] == expected.assists
        assert row["player_flags"] == ("*" if expected.captain else None)
    # The advanced table is served inside an HTML comment, one row per player.
    advanced = {(row["player"], row["club"]): row for row in tables["advanced"]}
    assert len(advanced) == len(season.players)
    for expected in season.players:
        player = league.player(expected.player_id)
        assert player is not None
        per_60 = advanced[(player.name, expected.club)]["goals_per_60"]
        assert isinstance(per_60, float)
        # Goals per 60 minutes, written to two decimals.
        assert abs(per_60 - expected.goals * 3600 / expected.seconds) <= 0.005 + 1e-9


def check_contracts(season: Season, tables: dict[str, Rows]) -> None:
    got = Counter((row["salary"], row["expires"]) for row in tables["contracts"])
    expected = Counter(
        (None if c.salary is None else float(c.salary), c.expires) for c in season.contracts
    )
    assert got == expected  # "—" (not disclosed) is null
    assert all(isinstance(row["expires"], dt.date) for row in tables["contracts"])


def check_standings(season: Season, tables: dict[str, Rows]) -> None:
    conference = {club.code: club.conference for club in build_league().clubs}
    by_club = {row["club_code"]: row for row in tables["standings"]}
    assert len(tables["standings"]) == len(by_club) == len(season.standings)
    for standing in season.standings:
        row = by_club[standing.club]
        assert row["conference"] == conference[standing.club]
        assert row["gd"] == standing.goal_difference  # U+2212 for negatives on the page
        assert row["pts"] == standing.points


CHECKS: dict[str, Callable[[Season, dict[str, Rows]], None]] = {
    "league-players": check_players,
    "league-contracts": check_contracts,
    "league-standings": check_standings,
}


def test_the_manifest_lists_every_committed_cassette() -> None:
    on_disk = sorted(path.name for path in CASSETTE_DIR.glob("*.warc.gz"))
    assert on_disk == sorted(MANIFEST["cassettes"])
    assert {str(about(name)["recipe"]) for name in NAMES} == set(CHECKS)  # every bundled recipe
    # The recipes' own site, so `harvester harvest RECIPE --replay` needs no --param site=….
    assert MANIFEST["site"] == "http://127.0.0.1:8650"


@pytest.mark.parametrize("name", NAMES)
def test_a_replay_gives_the_league_models_tables(
    name: str, cassette: Callable[[str], Path], cassette_site: str, tmp_path: Path
) -> None:
    entry = about(name)
    report = replay(cassette(name), name, cassette_site, tmp_path)
    assert [(o.table, o.status, o.version) for o in report.outcomes] == [
        (table, "new", 1)
        for table in entry["tables"]  # type: ignore[attr-defined]
    ]
    tables = {o.table: rows_of(tmp_path, name, o.table) for o in report.outcomes}
    season = build_league().season(int(str(entry["season"])))
    CHECKS[str(entry["recipe"])](season, tables)


@pytest.mark.parametrize("name", NAMES)
def test_replayed_rows_name_their_record_in_the_cassette(
    name: str, cassette: Callable[[str], Path], cassette_site: str, tmp_path: Path
) -> None:
    path = cassette(name)
    report = replay(path, name, cassette_site, tmp_path)
    url = page_url(cassette_site, name)
    (page,) = [r for r in stored(path) if r.kind == "response" and r.url == url]
    for outcome in report.outcomes:
        rows = rows_of(tmp_path, name, outcome.table)
        assert {row["_capture_origin"] for row in rows} == {"cassette"}
        assert {row["_source_url"] for row in rows} == {url}
        # The row's record is the page's response record inside this very file, and its
        # payload is the body the row was read from.
        assert {row["_warc_record_id"] for row in rows} == {page.record_id}
        assert {row["_body_sha256"] for row in rows} == {hashlib.sha256(page.payload).hexdigest()}


@pytest.mark.parametrize("name", NAMES)
def test_every_cassette_passes_warcio_check(name: str, cassette: Callable[[str], Path]) -> None:
    done = subprocess.run(
        [str(Path(sys.executable).with_name("warcio")), "check", "-v", str(cassette(name))],
        capture_output=True, text=True, check=False,
    )  # fmt: skip
    assert done.returncode == 0, done.stdout + done.stderr
    assert "digest pass" in done.stdout  # the digests were checked, not just the framing


@pytest.mark.parametrize("name", NAMES)
def test_each_cassette_is_small_and_holds_robots_txt_and_its_page(
    name: str, cassette: Callable[[str], Path], cassette_site: str
) -> None:
    path = cassette(name)
    assert path.stat().st_size < MAX_CASSETTE_BYTES
    records = stored(path)
    # WARC 1.1 §6.2: the warcinfo record first; then each exchange (response, request).
    assert [r.kind for r in records] == ["warcinfo", "response", "request", "response", "request"]
    responses = [(r.url, r.status) for r in records if r.kind == "response"]
    assert responses == [
        (f"{cassette_site}/robots.txt", "200"),
        (page_url(cassette_site, name), "200"),
    ]
    assert b"operator: mailto:analyst@example.org" in records[0].payload


def test_a_replay_asks_nothing_of_the_network(
    no_network: NetworkGuard, cassette: Callable[[str], Path], cassette_site: str, tmp_path: Path
) -> None:
    for name in NAMES:
        report = replay(cassette(name), name, cassette_site, tmp_path / name)
        assert not report.failed, [o.line() for o in report.outcomes]
        assert not (tmp_path / name / "cache").exists()  # no fetcher, so no HTTP cache
    assert no_network.attempts == []


def test_the_network_guard_stops_a_real_connection(
    demo_site: DemoServer, no_network: NetworkGuard
) -> None:
    # Without this, the test above would pass with a guard that guards nothing.
    async def fetch() -> None:
        async with httpx.AsyncClient() as client:
            await client.get(demo_site.url("/robots.txt"))

    with pytest.raises(httpx.ConnectError):
        import asyncio

        asyncio.run(fetch())
    assert no_network.attempts == [("127.0.0.1", demo_site.port)]
    assert demo_site.log == []


def load_tool() -> ModuleType:
    """tools/record_cassettes.py (a repository tool, so it is loaded from its file)."""
    spec = importlib.util.spec_from_file_location(
        "record_cassettes", ROOT / "tools" / "record_cassettes.py"
    )
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # its dataclasses look their module up by name
    spec.loader.exec_module(module)
    return module


def test_a_re_record_gives_the_committed_pages(tmp_path: Path) -> None:
    # A free port, never 8650: a demo someone runs there must not break the suite. Pages do not
    # name the host; robots.txt does (its Sitemap line), so it is compared with the site put in.
    # delay=0 leaves the site's Crawl-delay in force and changes no recorded byte.
    tool = load_tool()
    manifest = tool.record_cassettes(tmp_path, port=0, delay=0)
    fresh_site = manifest["site"]
    assert fresh_site != MANIFEST["site"]
    assert manifest["cassettes"] == MANIFEST["cassettes"]
    for name in NAMES:
        committed = [r for r in stored(CASSETTE_DIR / f"{name}.warc.gz") if r.kind == "response"]
        fresh = [r for r in stored(tmp_path / f"{name}.warc.gz") if r.kind == "response"]
        assert [urlsplit(r.url or "").path for r in fresh] == [
            urlsplit(r.url or "").path for r in committed
        ]
        for old, new in zip(committed, fresh, strict=True):
            stale = (
                f"{name}: {urlsplit(old.url or '').path} is stale: run tools/record_cassettes.py"
            )
            if urlsplit(old.url or "").path == "/robots.txt":
                moved = old.payload.replace(MANIFEST["site"].encode(), fresh_site.encode())
                assert new.payload == moved, stale
            else:
                digest = hashlib.sha256(new.payload).hexdigest()
                assert digest == hashlib.sha256(old.payload).hexdigest(), stale
