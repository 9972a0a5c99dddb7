"""Playing one season of the invented league: the round robin's results and the players' share.

``play_season`` plays a double round robin and returns each club's record; ``player_seasons``
then splits a club's record among its roster so the league's rules hold by construction: the
players' goals add up to the club's goals for, a position's two players share its court time,
and 7m goals ≤ 7m shots, 7m goals ≤ goals, 7m misses ≤ misses, goals ≤ shots.
"""

from __future__ import annotations

import math
import random

from harvester.demo.records import Club, PlayerSeason, Standing

__all__ = ["GAME_SECONDS", "apportion", "play_season", "player_seasons"]

GAME_SECONDS = 60 * 60  # two halves of 30 minutes (IHF Rules of the Game, rule 2:1; from memory)
# Share of a club's goals by position, and usual scoring rate (invented, loosely plausible).
_GOAL_WEIGHT = {"LW": 0.8, "RW": 0.8, "LB": 1.1, "CB": 1.0, "RB": 1.1, "PV": 0.9}
_SHOT_RATE = {"LW": 0.66, "RW": 0.66, "LB": 0.52, "CB": 0.55, "RB": 0.52, "PV": 0.70}
_ASSISTS_PER_GAME = {"GK": 0.2, "LW": 1.0, "RW": 1.0, "LB": 2.5, "CB": 4.0, "RB": 2.5, "PV": 1.2}


def play_season(rng: random.Random, clubs: tuple[Club, ...]) -> tuple[Standing, ...]:
    """Play a double round robin and return each club's record, in club order."""
    strength = {club.code: rng.randint(-3, 3) for club in clubs}
    # Per club: wins, draws, losses, goals for, goals against.
    record = {club.code: [0, 0, 0, 0, 0] for club in clubs}
    for home in record:
        for away in record:
            if home == away:
                continue
            home_goals = rng.randint(23, 33) + strength[home] + 1  # home advantage
            away_goals = rng.randint(23, 33) + strength[away]
            for own, scored, conceded in (
                (home, home_goals, away_goals),
                (away, away_goals, home_goals),
            ):
                result = 0 if scored > conceded else 1 if scored == conceded else 2
                record[own][result] += 1
                record[own][3] += scored
                record[own][4] += conceded
    return tuple(Standing(code, sum(r[:3]), *r) for code, r in record.items())


def player_seasons(
    rng: random.Random,
    code: str,
    roster: dict[str, list[str]],
    standing: Standing,
    captains: dict[str, str],
) -> list[PlayerSeason]:
    """Each player's season at club ``code``, adding up to its ``standing``, in roster order."""
    games = standing.games
    seconds: dict[str, int] = {}
    played: dict[str, int] = {}
    for pair in roster.values():
        # The two players of a position share its court time, less time lost to suspensions.
        total = games * GAME_SECONDS - rng.randint(0, 45 * 60)
        starter = round(total * rng.uniform(0.55, 0.95))
        for pid, floor, share in ((pair[0], 14, starter), (pair[1], 6, total - starter)):
            seconds[pid] = share
            played[pid] = rng.randint(max(floor, math.ceil(share / GAME_SECONDS)), games)
    goals, shots = dict.fromkeys(seconds, 0), dict.fromkeys(seconds, 0)
    for pid in roster["GK"]:
        if rng.random() < 0.12:  # a rare long throw into an empty goal
            goals[pid] = rng.randint(1, 2)
            shots[pid] = goals[pid] + rng.randint(0, 2)
    field_players = [(pos, pid) for pos, pair in roster.items() if pos != "GK" for pid in pair]
    weights = [
        _GOAL_WEIGHT[pos] * seconds[pid] * rng.uniform(0.5, 1.5) for pos, pid in field_players
    ]
    shares = apportion(standing.goals_for - sum(goals.values()), weights)
    for (pos, pid), share in zip(field_players, shares, strict=True):
        goals[pid] = share
        rate = _SHOT_RATE[pos] * rng.uniform(0.88, 1.12)
        shots[pid] = math.ceil(share / rate) if share else rng.randint(0, 2)
    seven_goals, seven_shots = dict.fromkeys(seconds, 0), dict.fromkeys(seconds, 0)
    takers = sorted((pid for pos, pid in field_players if pos != "PV"), key=lambda p: -goals[p])
    for pid, attempts in zip(takers[:2], (rng.randint(40, 65), rng.randint(5, 20)), strict=True):
        scored = min(goals[pid], round(attempts * rng.uniform(0.65, 0.85)))
        seven_goals[pid] = scored
        seven_shots[pid] = scored + min(shots[pid] - goals[pid], attempts - scored)
    assists = {
        pid: round(played[pid] * _ASSISTS_PER_GAME[pos] * rng.uniform(0.6, 1.4))
        for pos, pair in roster.items()
        for pid in pair
    }
    columns = (played, seconds, goals, shots, seven_goals, seven_shots, assists)
    return [
        PlayerSeason(pid, code, captains[code] == pid, *(column[pid] for column in columns))
        for pid in assists
    ]


def apportion(total: int, weights: list[float]) -> list[int]:
    """Split ``total`` into integers proportional to ``weights`` (largest remainder method)."""
    exact = [total * w / sum(weights) for w in weights]
    shares = [math.floor(x) for x in exact]
    by_remainder = sorted(range(len(exact)), key=lambda i: (shares[i] - exact[i], i))
    for i in by_remainder[: total - sum(shares)]:
        shares[i] += 1
    return shares
