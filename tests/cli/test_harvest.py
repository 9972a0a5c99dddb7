"""``harvester harvest``: one line per table, exit status 1 on a failure, the cache modes.

Against the real demo server on 127.0.0.1.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest
from typer.testing import CliRunner

from harvester.cli import app
from harvester.demo.server import DemoServer

RECIPES = Path(__file__).resolve().parents[2] / "recipes"
Factory = Callable[..., DemoServer]


def test_harvest_command_prints_one_line_per_table(demo_site: DemoServer, tmp_path: Path) -> None:
    result = CliRunner().invoke(
        app,
        [
            "harvest",
            str(RECIPES / "league-standings.toml"),
            "--archive",
            str(tmp_path),
            "--param",
            f"site={demo_site.base_url}",
        ],
    )
    assert result.exit_code == 0, result.stderr
    first = result.stdout.splitlines()[0].split("\t")
    assert first[:3] == ["new", "league-standings/standings", "season=2026"]
    assert first[3] == "10 rows, version 1"


def test_harvest_command_exits_non_zero_when_a_table_fails(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    result = CliRunner().invoke(
        app,
        [
            "harvest",
            str(RECIPES / "league-players.toml"),
            "--archive",
            str(tmp_path),
            "--param",
            f"site={demo_site.base_url}",
            "--param",
            "season=2013",
        ],
    )
    assert result.exit_code == 1
    assert result.stdout.startswith("failed\tleague-players/players")


@pytest.mark.parametrize("flag", ["--offline", "--refresh"])
def test_cache_modes_reach_the_fetcher(demo_site: DemoServer, tmp_path: Path, flag: str) -> None:
    args = ["harvest", str(RECIPES / "league-contracts.toml"), "--archive", str(tmp_path)]
    args += ["--param", f"site={demo_site.base_url}"]
    assert CliRunner().invoke(app, args).exit_code == 0
    demo_site.clear_log()
    # No pause: the second run knows from the archive's cache when the first one last asked.
    result = CliRunner().invoke(app, [*args, flag])
    assert result.exit_code == 0, result.stderr
    requests = demo_site.requests_for("/seasons/2026/contracts.html")
    if flag == "--offline":
        assert requests == []
    else:
        assert [record.status for record in requests] == [304]
