"""Harvests keep every exchange in the snapshot archive; cassettes replay; reparse reads offline.

Against the real demo server on 127.0.0.1. What was asked and answered is judged by the server's
own request log; WARC files by warcio (`warcio check`, its reader); tables by re-extraction and
by the league model, never by a copy of the code under test.
"""

from __future__ import annotations

import hashlib
import json
import random
import re
import shutil
from collections.abc import Callable
from pathlib import Path
from urllib.parse import urlsplit

import httpx
import pyarrow as pa
import pyarrow.parquet as pq
from typer.testing import CliRunner
from warcio.archiveiterator import ArchiveIterator

from harvester.cli import app
from harvester.demo.league import build_league
from harvester.demo.server import DemoServer
from harvester.extract.table import extract_table, read_page
from harvester.fetch.capture import charset_of
from harvester.recipe import Recipe, load_recipe
from harvester.run import harvest, reparse
from harvester.snapshots.entry import NOT_MODIFIED_PROFILE, SAME_PAYLOAD_PROFILE
from harvester.snapshots.index import SnapshotIndex
from harvester.snapshots.reader import read_record
from harvester.snapshots.stored_source import StoredSource
from harvester.store.contract import data_columns
from tests.cassettes import NetworkGuard
from tests.warc_check import warcio_check as run_warcio_check

RECIPES = Path(__file__).resolve().parents[2] / "recipes"
Factory = Callable[..., DemoServer]


def recipe(name: str, site: DemoServer | str, **overrides: str) -> Recipe:
    base = site if isinstance(site, str) else site.base_url
    return load_recipe(RECIPES / f"{name}.toml", {"site": base, **overrides})


def warc_files(archive: Path) -> list[Path]:
    return sorted((archive / "snapshots" / "warc").iterdir())


def warcio_check(path: Path) -> None:
    done = run_warcio_check(path)
    assert done.returncode == 0, done.stdout + done.stderr


def table_of(archive: Path, dataset: str, table: str, version: int = 1) -> pa.Table:
    (path,) = archive.glob(f"tables/{dataset}/{table}/*/version={version}/part-0.parquet")
    return pq.read_table(path)


def target(url: str) -> str:
    parts = urlsplit(url)
    return parts.path + (f"?{parts.query}" if parts.query else "")


def test_every_exchange_is_kept_as_the_server_logged_it(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    report = harvest(recipe("league-players", demo_site), archive=str(tmp_path))
    harvest(recipe("league-standings", demo_site), archive=str(tmp_path))
    entries = SnapshotIndex.load(tmp_path / "snapshots").entries()
    # One record per request the server answered, in order: robots.txt and both pages.
    assert [(target(e.url), e.status) for e in entries] == [
        (record.path, record.status) for record in demo_site.log
    ]
    files = warc_files(tmp_path)
    assert all(path.name.endswith(".warc.gz") for path in files)  # no .open file left behind
    for path in files:
        warcio_check(path)  # WARC 1.1 §5.8/§5.9: every block and payload digest verifies
    with files[0].open("rb") as stream:
        info = next(iter(ArchiveIterator(stream))).content_stream().read().decode()
    # WARC 1.1 §6.2: the warcinfo record says what wrote the file, for which recipe and run.
    assert f"run-id: {report.run_id}" in info and "recipe: league-players" in info
    assert "software: harvester/" in info and "operator: mailto:analyst@example.org" in info


def test_rows_lead_to_their_record_whose_payload_gives_the_rows_again(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    players = recipe("league-players", demo_site)
    harvest(players, archive=str(tmp_path))
    index = SnapshotIndex.load(tmp_path / "snapshots")
    rng = random.Random(20261202)
    for name in ("players", "advanced"):
        table = table_of(tmp_path, "league-players", name)
        rows = table.to_pylist()
        for row in rng.sample(rows, 8):
            entry = index.record(row["_warc_record_id"])
            assert entry is not None and entry.record_type == "response"
            stored = read_record(tmp_path / "snapshots" / "warc" / entry.file, entry.offset)
            assert stored.warc_header("WARC-Record-ID") == row["_warc_record_id"]
            assert hashlib.sha256(stored.payload).hexdigest() == row["_body_sha256"]
            page = read_page(
                stored.payload, entry.url, charset_of(stored.http_header("content-type"))
            )
            again = extract_table(page, players.table_rule(name), base_url=entry.url)
            position = list(again.source_rows).index(row["_source_row"])
            expected = {column: row[column] for column in data_columns(table)}
            assert again.table.slice(position, 1).to_pylist()[0] == expected


def test_an_unchanged_rerun_adds_revisits_not_copies(demo_site: DemoServer, tmp_path: Path) -> None:
    standings = recipe("league-standings", demo_site)
    harvest(standings, archive=str(tmp_path))
    first = SnapshotIndex.load(tmp_path / "snapshots").entries()
    shutil.rmtree(tmp_path / "cache")  # no validators left: the site sends the same bytes again
    harvest(standings, archive=str(tmp_path))
    later = SnapshotIndex.load(tmp_path / "snapshots").entries()[len(first) :]
    assert [target(e.url) for e in later] == ["/robots.txt", "/seasons/2026/standings.html"]
    originals = {e.url: e.record_id for e in first}
    for entry in later:
        # WARC 1.1 §6.7.2: the same payload again is a revisit that refers to the original.
        assert entry.record_type == "revisit" and entry.profile == SAME_PAYLOAD_PROFILE
        assert entry.payload_record_id == originals[entry.url]
    (newer,) = [path for path in warc_files(tmp_path) if path.name == later[0].file]
    with newer.open("rb") as stream:
        kept = [(r.rec_type, r.content_stream().read()) for r in ArchiveIterator(stream)]
    assert [kind for kind, _ in kept] == ["warcinfo", "revisit", "request", "revisit", "request"]
    assert [body for kind, body in kept if kind == "revisit"] == [b"", b""]  # no copies


def test_a_revalidation_is_kept_as_a_server_not_modified_revisit(
    demo_site_factory: Factory, tmp_path: Path
) -> None:
    site = demo_site_factory(max_age=0)  # every cached copy is stale at once
    standings = recipe("league-standings", site)
    harvest(standings, archive=str(tmp_path))
    harvest(standings, archive=str(tmp_path))
    assert [r.status for r in site.requests_for("/seasons/2026/standings.html")] == [200, 304]
    page = site.url("/seasons/2026/standings.html")
    original, confirmed = SnapshotIndex.load(tmp_path / "snapshots").for_url(page)
    # WARC 1.1 §6.7.3: a 304 is a revisit with the server-not-modified profile.
    assert confirmed.status == 304 and confirmed.profile == NOT_MODIFIED_PROFILE
    assert confirmed.payload_record_id == original.record_id
    assert confirmed.body_sha256 == original.body_sha256


def test_replay_gives_the_recorded_tables_with_no_network(
    demo_site_factory: Factory, tmp_path: Path
) -> None:
    site = demo_site_factory()
    base = site.base_url
    cassette = tmp_path / "players.warc.gz"
    recorded = tmp_path / "recorded"
    harvest(recipe("league-players", site), archive=str(recorded), record=cassette)
    warcio_check(cassette)
    site.stop()  # nothing answers any more: a request would fail
    replayed = tmp_path / "replayed"
    report = harvest(
        recipe("league-players", base), archive=str(replayed),
        source=StoredSource.from_cassette(cassette),
    )  # fmt: skip
    assert [o.status for o in report.outcomes] == ["new", "new"]
    assert not (replayed / "cache").exists()  # no fetcher was ever made
    with cassette.open("rb") as stream:
        ids = {r.rec_headers.get_header("WARC-Record-ID") for r in ArchiveIterator(stream)}
    for name in ("players", "advanced"):
        one, two = (
            table_of(recorded, "league-players", name),
            table_of(replayed, "league-players", name),
        )
        assert one.select(data_columns(one)).equals(two.select(data_columns(two)))
        assert set(two.column("_capture_origin").to_pylist()) == {"cassette"}
        assert set(two.column("_warc_record_id").to_pylist()) <= ids  # records of the cassette
        assert two.column("_body_sha256").equals(one.column("_body_sha256"))
    season = build_league().season(2026)
    assert table_of(replayed, "league-players", "players").num_rows == len(season.players)


def test_a_cassette_is_self_contained(demo_site: DemoServer, tmp_path: Path) -> None:
    cassette = tmp_path / "run.warc.gz"
    archive = tmp_path / "archive"
    harvest(recipe("league-standings", demo_site), archive=str(archive))
    # The archive already holds these payloads; the cassette must not refer to them.
    harvest(recipe("league-standings", demo_site), archive=str(archive), record=cassette)
    with cassette.open("rb") as stream:
        records = [(r.rec_type, dict(r.rec_headers.headers)) for r in ArchiveIterator(stream)]
    ids = {headers["WARC-Record-ID"] for _, headers in records}
    assert [kind for kind, _ in records].count("response") == 2  # robots.txt and the page
    referred = {headers.get("WARC-Refers-To") for _, headers in records} - {None}
    assert referred <= ids  # WARC 1.1 §5.11: a revisit's original is in the same file


def test_a_page_missing_from_the_cassette_names_the_url_and_the_cassette(
    cassette: Callable[[str], Path],
    cassette_site: str,
    no_network: NetworkGuard,
    tmp_path: Path,
) -> None:
    standings = cassette("league-standings-2026")  # the 2026 page only
    args = ["harvest", str(RECIPES / "league-standings.toml"), "--archive", str(tmp_path / "b")]
    args += ["--param", f"site={cassette_site}", "--param", "season=2024"]
    result = CliRunner().invoke(app, [*args, "--replay", str(standings)])
    assert result.exit_code == 1
    (line,) = result.stdout.splitlines()[:-1]
    assert line.startswith("failed\tleague-standings/standings\tseason=2024")
    assert f"{cassette_site}/seasons/2024/standings.html" in line and str(standings) in line
    assert no_network.attempts == []  # nothing was asked of any site


def test_cassette_options_are_checked_before_anything_runs(tmp_path: Path) -> None:
    args = ["harvest", str(RECIPES / "league-standings.toml"), "--archive", str(tmp_path)]
    cases = [
        (["--record", "a.warc.gz", "--replay", "b.warc.gz"], "--record and --replay"),
        (["--record", "a.warc"], "a cassette is a .warc.gz file"),
        (["--replay", "b.warc.gz", "--offline"], "cassettes do not use"),
    ]
    for extra, message in cases:
        result = CliRunner().invoke(app, [*args, *extra])
        assert result.exit_code == 2 and message in result.stderr, result.stderr
    assert not (tmp_path / "snapshots").exists()


def test_reparse_reads_the_snapshot_archive_with_the_site_stopped_and_no_cache(
    demo_site_factory: Factory, tmp_path: Path
) -> None:
    site = demo_site_factory()
    base = site.base_url
    harvest(recipe("league-standings", site), archive=str(tmp_path))
    site.stop()
    shutil.rmtree(tmp_path / "cache")
    same = reparse(recipe("league-standings", base), archive=str(tmp_path))
    assert [o.status for o in same.outcomes] == ["unchanged"]  # the same data: no new version
    assert not (tmp_path / "cache").exists()
    # Fix a rule (here: keep only the code's first letter) and read the same capture again.
    text = (RECIPES / "league-standings.toml").read_text(encoding="utf-8")
    fixed = tmp_path / "league-standings.toml"
    fixed.write_text(text.replace(r'"/clubs/(\\w+)\\.html"', r'"/clubs/(\\w)\\w*\\.html"'))
    changed = reparse(load_recipe(fixed, {"site": base}), archive=str(tmp_path))
    assert [(o.status, o.version) for o in changed.outcomes] == [("new", 2)]
    one = table_of(tmp_path, "league-standings", "standings", 1)
    two = table_of(tmp_path, "league-standings", "standings", 2)
    assert [code[:1] for code in one.column("club_code").to_pylist()] == two.column(
        "club_code"
    ).to_pylist()
    assert set(two.column("_capture_origin").to_pylist()) == {"snapshot-archive"}
    for column in ("_body_sha256", "_warc_record_id", "_captured_at"):
        assert two.column(column).equals(one.column(column)), column
    missing = reparse(recipe("league-standings", base, season="2024"), archive=str(tmp_path))
    (outcome,) = missing.outcomes
    assert outcome.status == "failed" and "not in the snapshot archive" in outcome.message
    assert f"{base}/seasons/2024/standings.html" in outcome.line()


def test_snapshots_lists_shows_and_writes_the_payload(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    harvest(recipe("league-standings", demo_site), archive=str(tmp_path))
    listed = CliRunner().invoke(app, ["snapshots", "--archive", str(tmp_path), "--format", "json"])
    assert listed.exit_code == 0, listed.stderr
    captures = json.loads(listed.stdout)
    assert [urlsplit(c["url"]).path for c in captures] == [
        "/robots.txt",
        "/seasons/2026/standings.html",
    ]
    only = CliRunner().invoke(app, ["snapshots", "--archive", str(tmp_path), "--url", "standings"])
    (line,) = only.stdout.splitlines()
    assert line.split("\t")[1:4] == [
        "200",
        "response",
        demo_site.url("/seasons/2026/standings.html"),
    ]
    # RFC 3339 §5.6 in UTC with microseconds, as every JSON output writes time.
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{6}Z", captures[1]["date"])
    assert captures[1]["memento_datetime"] is None and captures[1]["origin"] == "live"
    record_id = captures[1]["record_id"]
    body = tmp_path / "page.html"
    shown = CliRunner().invoke(
        app, ["snapshots", "show", record_id, "--archive", str(tmp_path), "--payload", str(body)]
    )
    assert shown.exit_code == 0, shown.stderr
    assert f"WARC-Record-ID: {record_id}" in shown.stdout and "HTTP status 200" in shown.stdout
    assert hashlib.sha256(body.read_bytes()).hexdigest() == captures[1]["body_sha256"]
    assert body.read_bytes() == demo_site_page(demo_site, "/seasons/2026/standings.html")
    unknown = CliRunner().invoke(
        app, ["snapshots", "show", "<urn:uuid:x>", "--archive", str(tmp_path)]
    )
    assert unknown.exit_code == 5 and unknown.stderr.startswith("error: no record <urn:uuid:x>")


def demo_site_page(site: DemoServer, path: str) -> bytes:
    return httpx.get(site.url(path)).content
