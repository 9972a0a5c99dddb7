"""``harvester demo``: harvests the invented league and reads it back; writes or serves the site."""

from __future__ import annotations

import shlex
import subprocess
from pathlib import Path

import duckdb
from typer.testing import CliRunner

from harvester.cli import app


def outcome_lines(stdout: str) -> list[list[str]]:
    statuses = ("new\t", "unchanged\t", "refused\t", "failed\t", "skipped\t")
    lines = [line.split("\t") for line in stdout.splitlines() if line.startswith(statuses)]
    return [[line[0], line[1], line[2], line[4]] for line in lines]


# The live demo site serves 2024-2026 and answers 404 for 2021-2023, 410 before; the demo
# archive's schedule (harvester/demo/archive_routes.py) puts the capture nearest 30 June on 28
# June at 14:05:09, except 2019, whose 28 June capture is an archived 404: 3 July 08:30:00 is
# next. The demo harvests 2026, then backfills 2019..2025 (both included).
SOURCES = {
    "2026": "live",
    "2019": "capture of 2019-07-03T08:30:00Z",
    **{str(year): f"capture of {year}-06-28T14:05:09Z" for year in range(2020, 2024)},
    "2024": "live",
    "2025": "live",
}
PAGES = {
    "league-players": ["players", "advanced"],
    "league-contracts": ["contracts"],
    "league-standings": ["standings"],
}


def expected() -> list[list[str]]:
    return [
        [f"{dataset}/{table}", f"season={season}", source]
        for dataset, tables in PAGES.items()
        for season, source in SOURCES.items()
        for table in tables
    ]


def test_demo_command_harvests_and_reads_back(tmp_path: Path) -> None:
    result = CliRunner().invoke(app, ["demo", "--archive", str(tmp_path), "--rows", "2"])
    assert result.exit_code == 0, result.stderr
    first = outcome_lines(result.stdout)
    assert [line[1:] for line in first] == expected()
    assert {line[0] for line in first} == {"new"}
    assert "read_parquet(" in result.stdout  # shows how to read it without harvester
    # The demo's contracts page writes two first names short (harvester/demo/pages.py,
    # contract_name) and five with accents: the join check on person keys shows the two.
    assert "  matched 138 keys; 2 left without a match, 2 right without a match" in result.stdout
    # Suffixes (common practice, no published source): "Last Jr., First" and "Last, First Jr"
    # key to "first last jr", which the players page's "First Last Jr." shares, and which stays
    # apart from the "first last" of the player named before; DuckDB reads our Parquet.
    parquet = f"{tmp_path}/tables/league-%s/season=2026/version=1/part-0.parquet"
    contracts_sql = f"read_parquet('{parquet % 'contracts/contracts'}')"
    players_sql = f"read_parquet('{parquet % 'players/players'}')"
    keys = duckdb.execute(
        f"SELECT c.player, c.player_key, p.player_key FROM {contracts_sql} c LEFT JOIN"
        f" (SELECT player_key FROM {players_sql}) p USING (player_key) WHERE c.player LIKE '%Jr%'"
    ).fetchall()
    assert {written.endswith(" Jr") for written, _, _ in keys} == {True, False}
    assert all(key.endswith(" jr") and key == joined for _, key, joined in keys)
    seniors = {key.removesuffix(" jr") for _, key, _ in keys}
    found = duckdb.execute(f"SELECT DISTINCT player_key FROM {players_sql}").fetchall()
    assert seniors <= {key for (key,) in found}
    # The pandas one runs with what harvester installed: 8 seasons × 10 clubs, latest versions.
    shown = result.stdout.splitlines()
    query = shown[shown.index("or with the pandas and pyarrow harvester installed:") + 1]
    ran = subprocess.run(shlex.split(query), capture_output=True, text=True, timeout=60)
    assert ran.returncode == 0, ran.stderr
    assert "[80 rows x" in ran.stdout
    again = CliRunner().invoke(app, ["demo", "--archive", str(tmp_path), "--rows", "2"])
    assert again.exit_code == 0, again.stderr
    # Nothing changed: the current season is unchanged, the backfill skips what it stored.
    second = outcome_lines(again.stdout)
    assert [line[1:3] for line in second] == [line[:2] for line in expected()]
    assert [line[0] for line in second] == [
        "unchanged" if season == "season=2026" else "skipped" for _, season, _ in expected()
    ]
    moved = CliRunner().invoke(
        app, ["demo", "--archive", str(tmp_path), "--rows", "2", "--advance"]
    )
    assert moved.exit_code == 0, moved.stderr
    players = [line for line in outcome_lines(moved.stdout) if line[1:3] == [
        "league-players/players", "season=2026"]]  # fmt: skip
    assert players[0][0] == "new"
    assert "league-players/players season=2026: version 1 → 2" in moved.stdout.splitlines()


def test_demo_writes_the_site(tmp_path: Path) -> None:
    result = CliRunner().invoke(app, ["demo", "--write-site", str(tmp_path)])
    assert result.exit_code == 0
    assert (tmp_path / "seasons" / "2026" / "players.html").is_file()


def test_demo_serve_runs_a_loopback_site_until_stopped() -> None:
    import signal
    import subprocess
    import sys

    import httpx

    script = Path(sys.executable).with_name("harvester")
    with subprocess.Popen(
        [str(script), "demo", "--serve", "--port", "0", "--crawl-delay", "0.1"],
        stdout=subprocess.PIPE,
        text=True,
    ) as process:
        try:
            assert process.stdout is not None
            base = process.stdout.readline().split()[3]
            assert base.startswith("http://127.0.0.1:")
            robots = httpx.get(f"{base}/robots.txt", timeout=5)
            assert "Crawl-delay: 0.1" in robots.text
        finally:
            process.send_signal(signal.SIGINT)
            process.wait(timeout=10)
    assert process.returncode == 0


def test_a_bad_crawl_delay_is_named_not_blamed_on_the_port() -> None:
    result = CliRunner().invoke(app, ["demo", "--serve", "--crawl-delay", "-5"])
    assert result.exit_code != 0
    assert "crawl_delay = -5" in result.stderr and "--port" not in result.stderr
    assert result.stderr.count("\n") == 1
