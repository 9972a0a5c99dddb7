"""What every command shares: NAME=VALUE options parsed once, the same way everywhere."""

from __future__ import annotations

from pathlib import Path

import pytest
from typer.testing import CliRunner

from harvester.cli import app

RECIPE = str(Path(__file__).resolve().parents[2] / "recipes" / "league-players.toml")


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (
            ["check", RECIPE, "--param", "season"],
            "--param 'season' is not NAME=VALUE",
        ),
        (
            ["check", RECIPE, "--param", "=2024"],
            "--param '=2024' is not NAME=VALUE",
        ),
        (
            [
                "check",
                RECIPE,
                "--param",
                "season=2024",
                "--param",
                "season=2025",
            ],
            "--param names 'season' twice",
        ),
        (
            ["diff", "league-players/players", "--partition", "season"],
            "--partition 'season' is not KEY=VALUE",
        ),
        (
            ["diff", "league-players/players", "-p", "season=1", "-p", "season=2"],
            "--partition names 'season' twice",
        ),
    ],
)
def test_a_bad_pair_is_a_one_line_usage_error(args: list[str], message: str) -> None:
    result = CliRunner().invoke(app, args)
    assert result.exit_code == 2
    assert result.stderr.startswith(f"error: {message}")
    assert result.stderr.count("\n") == 1


def test_blanks_around_a_name_and_a_value_are_ignored() -> None:
    result = CliRunner().invoke(app, ["check", RECIPE, "--param", " season = 2024 ", "-f", "json"])
    assert result.exit_code == 0, result.stderr
    assert '"parameters": {"season": 2024}' in result.stdout
