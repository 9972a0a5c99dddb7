"""The invented handball league behind the demo site, generated deterministically from a seed.

Everything here is made up: towns and player names are built from invented syllables, and every
number comes from ``random.Random(seed)``. The same seed gives the same league on every run.

Consistency holds by construction, so tests (and harvested tables) can check it:

- every club plays a double round robin, so GP = 18, W + D + L = GP, points = 2·W + D;
- a club's goals for (GF) equal the sum of its players' goals in that season;
- each position's two players share that position's court time, so a player's minutes never
  exceed 60 per game played, and a club's minutes never exceed 7 × 60 per game;
- 7m goals ≤ 7m shots, 7m goals ≤ goals, 7m misses ≤ misses, goals ≤ shots.

``League.season(year, revision)`` "advances the clock": revision n > 0 changes a few values of
the latest season only (goals moved between teammates, one salary), keeping the rules above.

This module builds the league and its careers (debuts, retirements, transfers, contracts) and
revises it; the record types are in ``records`` (and importable from here), the names in
``names``, and each season's games and player statistics in ``simulation``.
"""

from __future__ import annotations

import random
from dataclasses import dataclass, field, replace
from datetime import date

from harvester.demo.names import club_name, person_name, town_name
from harvester.demo.records import Club, Contract, Player, PlayerSeason, Season, Standing
from harvester.demo.simulation import play_season, player_seasons
from harvester.errors import HarvesterError

__all__ = [
    "CONFERENCES",
    "DEFAULT_SEED",
    "FIRST_SEASON",
    "LAST_SEASON",
    "LEAGUE_NAME",
    "POSITIONS",
    "SEASONS",
    "Club",
    "Contract",
    "League",
    "Player",
    "PlayerSeason",
    "Season",
    "Standing",
    "build_league",
]

DEFAULT_SEED = 7309
FIRST_SEASON = 2012
LAST_SEASON = 2026
SEASONS: tuple[int, ...] = tuple(range(FIRST_SEASON, LAST_SEASON + 1))
LEAGUE_NAME = "Quellmark Regional Handball League"
CONFERENCES: tuple[str, str] = ("North Conference", "South Conference")
POSITIONS: tuple[str, ...] = ("GK", "LW", "RW", "LB", "CB", "RB", "PV")
CLUBS_PER_CONFERENCE = 5
JUNIOR_EVERY, JUNIOR_AT = (
    37,
    5,
)  # players whose number % 37 == 5 are named after the one before, "Jr."


@dataclass(frozen=True)
class League:
    """The whole invented league: clubs, players and every season at revision 0."""

    seed: int
    clubs: tuple[Club, ...]
    players: tuple[Player, ...]
    seasons: tuple[Season, ...]
    _players_by_id: dict[str, Player] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        # A lookup table; frozen dataclasses need object.__setattr__ to fill derived fields.
        object.__setattr__(self, "_players_by_id", {p.player_id: p for p in self.players})

    @property
    def latest(self) -> int:
        """The latest season, the only one revisions change."""
        return self.seasons[-1].year

    def player(self, player_id: str) -> Player | None:
        """The player with this id, or None."""
        return self._players_by_id.get(player_id)

    def club(self, code: str) -> Club | None:
        """The club with this code, or None."""
        return next((club for club in self.clubs if club.code == code), None)

    def season(self, year: int, revision: int = 0) -> Season:
        """One season's data; for the latest season, after ``revision`` clock advances."""
        if revision < 0:
            raise HarvesterError(
                f"demo league: revision {revision} is negative",
                hint="pass 0 for the base data or a positive number of clock advances",
            )
        for season in self.seasons:
            if season.year == year:
                if year == self.latest and revision > 0:
                    return _revise(season, self.seed, revision)
                return season
        raise HarvesterError(
            f"demo league: no season {year}",
            hint=f"use a season from {self.seasons[0].year} to {self.latest}",
        )


def build_league(seed: int = DEFAULT_SEED) -> League:
    """Generate the whole league from ``seed``; the same seed always gives the same league."""
    rng = random.Random(seed)
    clubs = _make_clubs(rng)
    people = _People(rng)
    # rosters[club][position] holds that position's two player ids, starter first.
    rosters = {
        club.code: {
            pos: [people.new(pos, FIRST_SEASON), people.new(pos, FIRST_SEASON)] for pos in POSITIONS
        }
        for club in clubs
    }
    captains: dict[str, str] = {}
    contracts: dict[str, Contract] = {}
    seasons: list[Season] = []
    for year in SEASONS:
        if year > FIRST_SEASON:
            _retire_and_transfer(rng, people, rosters, year)
        for club in clubs:
            members = [pid for pair in rosters[club.code].values() for pid in pair]
            if captains.get(club.code) not in members:
                # The oldest player takes over; ties go to the lowest id, so no randomness needed.
                captains[club.code] = min(members, key=lambda pid: (people.by_id[pid].born, pid))
        standings = play_season(rng, clubs)
        rows: list[PlayerSeason] = []
        for club, standing in zip(clubs, standings, strict=True):
            rows.extend(player_seasons(rng, club.code, rosters[club.code], standing, captains))
        season_contracts = []
        for row in rows:
            contract = contracts.get(row.player_id)
            if contract is None or contract.club != row.club or contract.expires.year < year:
                contract = _new_contract(rng, row.player_id, row.club, year)
                contracts[row.player_id] = contract
            season_contracts.append(contract)
        seasons.append(Season(year, tuple(rows), tuple(season_contracts), standings))
    return League(seed, clubs, tuple(people.players), tuple(seasons))


def _make_clubs(rng: random.Random) -> tuple[Club, ...]:
    towns: list[str] = []
    while len(towns) < 2 * CLUBS_PER_CONFERENCE:
        town = town_name(rng)
        # Codes are the town's first three letters, so those must be unique.
        if all(other[:3] != town[:3] for other in towns):
            towns.append(town)
    return tuple(
        Club(
            code=town[:3].upper(),
            name=club_name(rng, town),
            town=town,
            conference=CONFERENCES[index // CLUBS_PER_CONFERENCE],
        )
        for index, town in enumerate(towns)
    )


class _People:
    """Creates players with unique ids and unique names, in creation order."""

    def __init__(self, rng: random.Random) -> None:
        self.rng = rng
        self.players: list[Player] = []
        self.by_id: dict[str, Player] = {}
        self.names: set[str] = set()

    def new(self, position: str, year: int) -> str:
        rng = self.rng
        while True:
            first, last = person_name(rng)
            if f"{first} {last}" not in self.names:
                break
        suffix = ""
        number = len(self.players) + 1
        if number % JUNIOR_EVERY == JUNIOR_AT and self.players and not self.players[-1].suffix:
            # Named after the player created just before (the same squad's season): "Jr.".
            first, last, suffix = self.players[-1].first, self.players[-1].last, "Jr."
        self.names.add(f"{first} {last} {suffix}".rstrip())
        # Debut ages 18-30 in the first season (an established league), 18-22 afterwards.
        age = rng.randint(18, 30 if year == FIRST_SEASON else 22)
        born = date(year - age, rng.randint(1, 12), rng.randint(1, 28))
        player = Player(f"p{number:04d}", first, last, born, position, suffix)
        self.players.append(player)
        self.by_id[player.player_id] = player
        return player.player_id


def _retire_and_transfer(
    rng: random.Random, people: _People, rosters: dict[str, dict[str, list[str]]], year: int
) -> None:
    for code in rosters:
        for position, pair in rosters[code].items():
            for slot, pid in enumerate(pair):
                age = year - people.by_id[pid].born.year
                if age > 34 or rng.random() < 0.07:
                    pair[slot] = people.new(position, year)
            if rng.random() < 0.3:
                pair.reverse()  # the backup wins the starting place
    codes = list(rosters)
    for _ in range(rng.randint(2, 4)):
        # A swap of same-position players keeps every squad at two per position.
        one, other = rng.sample(codes, 2)
        position = rng.choice(POSITIONS)
        slot_one, slot_other = rng.randrange(2), rng.randrange(2)
        pair_one, pair_other = rosters[one][position], rosters[other][position]
        pair_one[slot_one], pair_other[slot_other] = pair_other[slot_other], pair_one[slot_one]


def _new_contract(rng: random.Random, player_id: str, club: str, year: int) -> Contract:
    years = rng.randint(1, 5)
    # About one salary in ten is not disclosed; known ones are rounded to $5,000.
    salary = None if rng.random() < 0.1 else 5000 * round(rng.lognormvariate(12.0, 0.8) / 5000)
    if salary is not None:
        salary = min(max(salary, 40_000), 1_900_000)
    # A season ends on 30 June of its year; a contract runs through the end of its last season.
    return Contract(player_id, club, salary, years, date(year + years - 1, 6, 30))


def _revise(season: Season, seed: int, revision: int) -> Season:
    rows = {row.player_id: row for row in season.players}
    contracts = {c.player_id: c for c in season.contracts}
    for step in range(1, revision + 1):
        rng = random.Random(seed * 1_000_003 + step)
        for _ in range(3):
            # Goals move between teammates, so the club's GF (and the standings) stay right.
            club = rng.choice(sorted({row.club for row in rows.values()}))
            team = [row for row in rows.values() if row.club == club]
            donors = [row for row in team if row.goals > row.seven_goals]
            donor = rng.choice(donors)
            taker = rng.choice([row for row in team if row is not donor and row.shots > 0])
            moved = rng.randint(1, min(3, donor.goals - donor.seven_goals))
            rows[donor.player_id] = replace(donor, goals=donor.goals - moved)
            rows[taker.player_id] = replace(
                taker, goals=taker.goals + moved, shots=taker.shots + moved
            )
        known = [c for c in contracts.values() if c.salary is not None]
        contract = rng.choice(known)
        raise_by = 5000 * rng.randint(2, 40)
        contracts[contract.player_id] = replace(contract, salary=(contract.salary or 0) + raise_by)
    return replace(
        season,
        players=tuple(rows[row.player_id] for row in season.players),
        contracts=tuple(contracts[c.player_id] for c in season.contracts),
    )
