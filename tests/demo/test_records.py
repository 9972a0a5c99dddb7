"""Tests for the league's record types: derived values and the ranking's tie-breakers.

Records are built by hand; the expected points, differences and orders are worked out by hand
from the rules in harvester/demo/records.py (two points a win, one a draw; points, then goal
difference, then goals for, then the club code).
"""

from __future__ import annotations

from datetime import date

from harvester.demo.records import Player, Season, Standing


def standing(club: str, wins: int, draws: int, goals_for: int, goals_against: int) -> Standing:
    """A record over 18 games; the losses are what is left."""
    return Standing(club, 18, wins, draws, 18 - wins - draws, goals_for, goals_against)


def test_points_and_goal_difference() -> None:
    row = standing("VRE", wins=11, draws=3, goals_for=512, goals_against=498)
    assert row.losses == 4
    assert row.points == 25  # 2 x 11 + 3
    assert row.goal_difference == 14
    assert standing("OSK", 0, 0, 400, 450).goal_difference == -50


def test_ranking_breaks_ties_by_difference_then_goals_then_code() -> None:
    rows = (
        standing("AAA", 10, 0, 500, 480),  # 20 points, GD +20, GF 500
        standing("BBB", 9, 2, 470, 450),  # 20 points, GD +20, GF 470
        standing("CCC", 10, 0, 520, 490),  # 20 points, GD +30
        standing("DDD", 12, 0, 400, 430),  # 24 points
        standing("EEE", 9, 2, 470, 450),  # BBB's twin: the code decides
        standing("FFF", 18, 0, 600, 300),  # not asked for
    )
    season = Season(2026, (), (), rows)
    ranked = season.ranked(["AAA", "BBB", "CCC", "DDD", "EEE"])
    assert [row.club for row in ranked] == ["DDD", "CCC", "AAA", "BBB", "EEE"]
    assert season.ranked([]) == []


def test_player_name_is_first_then_last() -> None:
    player = Player("p0001", "Karen", "Vornevik", date(1990, 5, 17), "CB")
    assert player.name == "Karen Vornevik"
