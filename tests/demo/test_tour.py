"""The demo tour end to end: demo recipes → generated pages → extractor.

Expected values come from the league's data model (harvester/demo/league.py), never from the
extractor's own output.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from typer.testing import CliRunner

from harvester.cli import app
from harvester.demo.league import build_league
from harvester.demo.tour import TourStop, run_tour


@pytest.fixture(scope="module")
def stops() -> dict[str, TourStop]:
    return {stop.result.name: stop for stop in run_tour(2024)}


def test_every_demo_table_is_read(stops: dict[str, TourStop]) -> None:
    assert sorted(stops) == ["advanced", "contracts", "players", "standings"]
    assert {stop.path for stop in stops.values()} == {
        "/seasons/2024/players.html",
        "/seasons/2024/contracts.html",
        "/seasons/2024/standings.html",
    }


def test_players_match_the_league_model(stops: dict[str, TourStop]) -> None:
    season = build_league().season(2024)
    table = stops["players"].result.table
    by_id = {row["player_id"]: row for row in table.to_pylist()}
    # One row per player: repeated header rows and the tfoot totals row are gone.
    assert set(by_id) == {p.player_id for p in season.players}
    for expected in season.players:
        row = by_id[expected.player_id]
        assert row["shooting_goals"] == expected.goals
        assert row["min"] == expected.seconds  # written as mm:ss, read back as seconds
        assert row["7m_shots"] == expected.seven_shots
        assert row["player_flags"] == ("*" if expected.captain else None)


def test_advanced_table_comes_from_inside_a_comment(stops: dict[str, TourStop]) -> None:
    result = stops["advanced"].result
    assert result.in_comment
    assert result.table.num_rows == len(build_league().season(2024).players)


def test_contract_salaries_are_numbers_and_unknown_is_null(stops: dict[str, TourStop]) -> None:
    season = build_league().season(2024)
    salaries = sorted(
        (row["salary"] for row in stops["contracts"].result.table.to_pylist()),
        key=lambda value: (value is None, value),
    )
    expected = sorted(
        (float(c.salary) if c.salary is not None else None for c in season.contracts),
        key=lambda value: (value is None, value),
    )
    assert salaries == expected


def test_standings_keep_the_conference_and_signed_goal_difference(
    stops: dict[str, TourStop],
) -> None:
    league = build_league()
    season = league.season(2024)
    conference = {club.code: club.conference for club in league.clubs}
    rows = stops["standings"].result.table.to_pylist()
    assert len(rows) == len(season.standings)
    by_club = {row["club_code"]: row for row in rows}
    for standing in season.standings:
        row = by_club[standing.club]
        assert row["conference"] == conference[standing.club]
        assert row["gd"] == standing.goal_difference  # written with U+2212 for negatives
        assert row["pts"] == standing.points


def test_demo_command_prints_every_table() -> None:
    result = CliRunner().invoke(app, ["demo", "--season", "2024", "--rows", "2"])
    assert result.exit_code == 0, result.stderr
    for name in ("players", "advanced", "contracts", "standings"):
        assert f"· {name} (" in result.stdout


def test_demo_rejects_a_season_the_league_never_played() -> None:
    result = CliRunner().invoke(app, ["demo", "--season", "1999"])
    assert result.exit_code != 0
    assert "1999" in result.stderr and result.stderr.count("\n") == 1


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
