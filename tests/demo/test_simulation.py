"""Tests for playing a season: round-robin records and the players' share of them.

Clubs, rosters and records are built by hand; whatever the generator draws, the rules in
harvester/demo/simulation.py must hold, and the apportioning examples are worked out by hand
(largest remainder method, ties to the lower index).
"""

from __future__ import annotations

import random

import pytest

from harvester.demo.records import Club, Standing
from harvester.demo.simulation import GAME_SECONDS, apportion, play_season, player_seasons

CLUBS = tuple(
    Club(code, f"HC {code.title()}", code.title(), "North Conference")
    for code in ("AAA", "BBB", "CCC", "DDD")
)
POSITIONS = ("GK", "LW", "RW", "LB", "CB", "RB", "PV")
# Two players a position, starter first: p01/p02 keep goal, p03/p04 play left wing, and so on.
ROSTER = {pos: [f"p{2 * i + 1:02d}", f"p{2 * i + 2:02d}"] for i, pos in enumerate(POSITIONS)}


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_a_double_round_robin_of_four_clubs(seed: int) -> None:
    standings = play_season(random.Random(seed), CLUBS)
    assert [row.club for row in standings] == ["AAA", "BBB", "CCC", "DDD"]
    for row in standings:
        assert row.games == 6  # meets 3 others twice
        assert row.wins + row.draws + row.losses == 6
        # 23-33 a game, plus a strength of -3 to 3, plus 1 at home: 20 to 37 goals a game.
        assert 6 * 20 <= row.goals_for <= 6 * 37
    # 12 matches: each has a winner and a loser, or two drawers, and one score for each side.
    assert sum(r.wins for r in standings) == sum(r.losses for r in standings)
    assert sum(r.wins for r in standings) + sum(r.draws for r in standings) // 2 == 12
    assert sum(r.goals_for for r in standings) == sum(r.goals_against for r in standings)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_player_seasons_add_up_to_the_club(seed: int) -> None:
    standing = Standing("AAA", 18, 10, 2, 6, 540, 500)
    rows = player_seasons(random.Random(seed), "AAA", ROSTER, standing, {"AAA": "p05"})
    assert [row.player_id for row in rows] == [f"p{n:02d}" for n in range(1, 15)]
    assert sum(row.goals for row in rows) == 540
    assert [row.player_id for row in rows if row.captain] == ["p05"]
    seconds = {row.player_id: row.seconds for row in rows}
    for pair in ROSTER.values():
        # A position's court time is shared, less up to 45 minutes lost to suspensions.
        shared = seconds[pair[0]] + seconds[pair[1]]
        assert 18 * GAME_SECONDS - 45 * 60 <= shared <= 18 * GAME_SECONDS
    for row in rows:
        assert row.club == "AAA"
        assert 1 <= row.games <= 18 and row.seconds <= row.games * GAME_SECONDS
        assert 0 <= row.seven_goals <= row.seven_shots and row.seven_goals <= row.goals
        assert row.seven_shots - row.seven_goals <= row.shots - row.goals
        assert row.goals <= row.shots and row.assists >= 0


@pytest.mark.parametrize(
    ("total", "weights", "shares"),
    [
        (10, [1.0, 1.0, 1.0], [4, 3, 3]),  # 3.33 each; the one left over goes to the first
        (7, [0.5, 0.25, 0.25], [3, 2, 2]),  # 3.5, 1.75, 1.75: the larger remainders win
        (9, [2.0, 1.0], [6, 3]),  # exact
        (0, [1.0, 2.0], [0, 0]),
        (5, [0.3], [5]),
    ],
)
def test_apportion(total: int, weights: list[float], shares: list[int]) -> None:
    assert apportion(total, weights) == shares
