"""The demo end to end: demo recipes → loopback demo site → polite fetch → archive.

``run_demo`` itself runs against the live loopback site. The tables it lands are checked on a
replay of the demo recipes' committed cassettes (tests/data/cassettes/: the same pages, recorded
from the same deterministic site; tests/run/test_cassettes.py holds them to what the site serves
now), so those checks wait on no Crawl-delay. Expected values come from the league's data model
(harvester/demo/league.py), never from the code under test.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pyarrow.parquet as pq
import pytest

from harvester.demo.league import build_league
from harvester.demo.tour import DEMO_RECIPES, demo_recipe_dir, run_demo
from harvester.recipe import load_recipe
from harvester.run import harvest
from harvester.snapshots.stored_source import StoredSource


def latest(root: Path, dataset: str, table: str) -> list[dict[str, object]]:
    """Rows of the only version of the 2026 partition, read with pyarrow (not our reader)."""
    path = root / "tables" / dataset / table / "season=2026" / "version=1" / "part-0.parquet"
    rows: list[dict[str, object]] = pq.read_table(path).to_pylist()
    return rows


@pytest.fixture(scope="module")
def demo_archive(
    tmp_path_factory: pytest.TempPathFactory, cassette: Callable[[str], Path], cassette_site: str
) -> Path:
    """The demo recipes' 2026 tables, replayed from their cassettes into one archive."""
    root = tmp_path_factory.mktemp("archive")
    for file_name in DEMO_RECIPES:
        name = file_name.removesuffix(".toml")
        recipe = load_recipe(demo_recipe_dir() / file_name, {"site": cassette_site})
        source = StoredSource.from_cassette(cassette(f"{name}-2026"))
        assert not harvest(recipe, archive=str(root), source=source).failed
    return root


def test_every_demo_table_is_harvested(tmp_path: Path) -> None:
    done = run_demo(str(tmp_path), crawl_delay=0.02)
    outcomes = [(o.dataset, o.table, o.status) for r in done.reports for o in r.outcomes]
    assert outcomes == [
        ("league-players", "players", "new"),
        ("league-players", "advanced", "new"),
        ("league-contracts", "contracts", "new"),
        ("league-standings", "standings", "new"),
    ]
    assert done.site.startswith("http://127.0.0.1:")


def test_players_match_the_league_model(demo_archive: Path) -> None:
    root = demo_archive
    season = build_league().season(2026)
    by_id = {row["player_id"]: row for row in latest(root, "league-players", "players")}
    # One row per player: repeated header rows and the tfoot totals row are gone.
    assert set(by_id) == {p.player_id for p in season.players}
    for expected in season.players:
        row = by_id[expected.player_id]
        assert row["shooting_goals"] == expected.goals
        assert row["min"] == expected.seconds  # written as mm:ss, read back as seconds
        assert row["7m_shots"] == expected.seven_shots
        assert row["player_flags"] == ("*" if expected.captain else None)


def test_contract_salaries_are_numbers_and_unknown_is_null(
    demo_archive: Path,
) -> None:
    root = demo_archive
    season = build_league().season(2026)
    rows = latest(root, "league-contracts", "contracts")

    def order(value: object) -> tuple[bool, float]:
        return (value is None, float(value) if isinstance(value, int | float) else 0.0)

    salaries = sorted((row["salary"] for row in rows), key=order)
    expected = sorted(
        (float(c.salary) if c.salary is not None else None for c in season.contracts), key=order
    )
    assert salaries == expected


def test_standings_keep_the_conference_and_signed_goal_difference(
    demo_archive: Path,
) -> None:
    root = demo_archive
    league = build_league()
    season = league.season(2026)
    conference = {club.code: club.conference for club in league.clubs}
    rows = latest(root, "league-standings", "standings")
    assert len(rows) == len(season.standings)
    by_club = {row["club_code"]: row for row in rows}
    for standing in season.standings:
        row = by_club[standing.club]
        assert row["conference"] == conference[standing.club]
        assert row["gd"] == standing.goal_difference  # written with U+2212 for negatives
        assert row["pts"] == standing.points
