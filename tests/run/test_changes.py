"""What changed in a run: the lines' row counts and `harvester diff` without --partition.

The reference is DuckDB reading the two versions' Parquet files directly and comparing them by
the recorded key (player_id), not harvester's own diff.
"""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import duckdb
from typer.testing import CliRunner

from harvester.cli import app
from harvester.demo.server import DemoServer
from harvester.recipe import Recipe, load_recipe
from harvester.run import harvest

RECIPES = Path(__file__).resolve().parents[2] / "recipes"


def players(site: DemoServer, seasons: str) -> Recipe:
    recipe = load_recipe(
        RECIPES / "league-players.toml", {"site": site.base_url, "season": seasons}
    )
    return dataclasses.replace(recipe, fetch=dataclasses.replace(recipe.fetch, delay=None))


def duckdb_changed(root: Path, season: int) -> int:
    """Players whose data columns differ between versions 1 and 2 of a season, by player_id."""
    folder = root / "tables" / "league-players" / "players" / f"season={season}"
    data = ["player", "club", "shooting_goals", "shooting_shots", "shooting_pct", "min", "ast"]
    differs = " OR ".join(f"a.{c} IS DISTINCT FROM b.{c}" for c in data)
    rows = duckdb.execute(
        f"SELECT count(*) FROM read_parquet('{folder}/version=1/part-0.parquet') a "
        f"JOIN read_parquet('{folder}/version=2/part-0.parquet') b USING (player_id) "
        f"WHERE {differs}"
    ).fetchall()
    return int(rows[0][0])


def test_a_new_version_counts_its_changes_and_diff_lists_the_partitions_that_moved(
    tmp_path: Path, demo_site: DemoServer
) -> None:
    root = tmp_path / "archive"
    first = harvest(players(demo_site, "2024..2026"), archive=str(root))
    assert {o.status for o in first.outcomes} == {"new"}
    assert all(o.row_changes is None for o in first.outcomes)  # first versions: nothing before
    demo_site.advance()  # the demo clock moves: some goals of the latest season change
    second = harvest(players(demo_site, "2024..2026"), archive=str(root), mode="refresh")
    moved = [o for o in second.outcomes if o.status == "new" and o.table == "players"]
    assert [o.partition for o in moved] == [{"season": 2026}]  # only the latest season moves
    changed = duckdb_changed(root, 2026)
    assert changed > 0
    assert moved[0].row_changes == {"added": 0, "removed": 0, "changed": changed}
    assert f"version 2 (0 added, 0 removed, {changed} changed)" in moved[0].line()

    run = CliRunner().invoke(app, ["diff", "league-players/players", "--archive", str(root)])
    assert run.exit_code == 0, run.stderr
    assert run.stdout.splitlines() == [
        "league-players/players: 1 partition(s) changed",
        f"season=2026: version 1 → 2; rows: 0 added, 0 removed, {changed} changed, "
        f"{140 - changed} unchanged (key player_id)",
    ]
    as_json = CliRunner().invoke(
        app, ["diff", "league-players/players", "--archive", str(root), "--format", "json"]
    )
    (only,) = json.loads(as_json.stdout)
    assert only["partition"] == {"season": 2026}
    assert (only["from_version"], only["to_version"]) == (1, 2)
    assert only["counts"]["changed"] == changed

    everything = CliRunner().invoke(
        app, ["diff", "league-players/players", "--archive", str(root), "--since", "2000-01-01"]
    )
    lines = everything.stdout.splitlines()
    assert lines[0] == "league-players/players: 3 partition(s) changed"
    assert lines[1:3] == [
        "season=2024: new, version 1 (140 rows)",
        "season=2025: new, version 1 (140 rows)",
    ]
    future = CliRunner().invoke(
        app, ["diff", "league-players/players", "--archive", str(root), "--since", "2999-01-01"]
    )
    assert future.stdout.splitlines() == ["league-players/players: 0 partition(s) changed"]
    bad = CliRunner().invoke(
        app, ["diff", "league-players/players", "--archive", str(root), "--since", "soon"]
    )
    assert bad.exit_code == 2 and "--since" in bad.stderr
