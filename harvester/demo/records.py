"""The records of the invented league: clubs, players, their seasons, contracts and standings.

Plain frozen dataclasses, compared field by field; ``league.League`` holds them and
``league.build_league`` generates them.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date

__all__ = ["Club", "Contract", "Player", "PlayerSeason", "Season", "Standing"]


@dataclass(frozen=True)
class Club:
    """One club: a 3-letter code, its full name, home town and conference."""

    code: str
    name: str
    town: str
    conference: str


@dataclass(frozen=True)
class Player:
    """One player: stable id (``p`` + 4 digits), name, birth date, position and a generational
    suffix ("Jr." for a player named after an older one; empty for most)."""

    player_id: str
    first: str
    last: str
    born: date
    position: str
    suffix: str = ""

    @property
    def name(self) -> str:
        """The name as "First Last", or "First Last Jr." with a suffix."""
        return (
            f"{self.first} {self.last} {self.suffix}"
            if self.suffix
            else f"{self.first} {self.last}"
        )


@dataclass(frozen=True)
class PlayerSeason:
    """One player's statistics for one season at one club (``seconds`` is court time)."""

    player_id: str
    club: str
    captain: bool
    games: int
    seconds: int
    goals: int
    shots: int
    seven_goals: int
    seven_shots: int
    assists: int


@dataclass(frozen=True)
class Contract:
    """A player's contract as listed in one season; ``salary`` is None when not disclosed."""

    player_id: str
    club: str
    salary: int | None
    years: int
    expires: date


@dataclass(frozen=True)
class Standing:
    """One club's record over a season."""

    club: str
    games: int
    wins: int
    draws: int
    losses: int
    goals_for: int
    goals_against: int

    @property
    def points(self) -> int:
        """Two points a win, one a draw."""
        return 2 * self.wins + self.draws

    @property
    def goal_difference(self) -> int:
        """Goals for minus goals against."""
        return self.goals_for - self.goals_against


@dataclass(frozen=True)
class Season:
    """Everything recorded for one season."""

    year: int
    players: tuple[PlayerSeason, ...]
    contracts: tuple[Contract, ...]
    standings: tuple[Standing, ...]

    def ranked(self, conference_clubs: Sequence[str]) -> list[Standing]:
        """The standings of the given clubs, best first: points, then GD, then GF, then code."""
        rows = [row for row in self.standings if row.club in conference_clubs]
        return sorted(rows, key=lambda r: (-r.points, -r.goal_difference, -r.goals_for, r.club))
