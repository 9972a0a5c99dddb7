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
"""

from __future__ import annotations

import math
import random
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from datetime import date

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
GAME_SECONDS = 60 * 60  # two halves of 30 minutes (IHF Rules of the Game, rule 2:1; from memory)

# Syllables chosen to sound plausible without spelling real places or people.
_TOWN_HEADS = ("Vrel", "Osk", "Quen", "Thar", "Mib", "Dask", "Yol", "Zen", "Brak", "Hurn", "Sveld")
_TOWN_TAILS = ("mark", "vik", "usk", "ovo", "ane", "ith", "orra", "emby", "aldt", "ingue")
_CLUB_PATTERNS = ("HC {}", "{} Handball", "{} HC", "Handball {}")
_FIRST_HEADS = ("Ka", "Ve", "Lo", "Mi", "Da", "Ro", "Se", "Ti", "Bo", "Ne", "Jo", "Fa", "Ul")
_FIRST_TAILS = ("ren", "lis", "vo", "dan", "mir", "tek", "sa", "nor", "bel", "quin", "rik")
_LAST_HEADS = ("Vor", "Kel", "Dra", "Mun", "Sil", "Tav", "Bre", "Osk", "Hal", "Zem", "Pry")
_LAST_MIDS = ("ne", "ka", "lo", "ri", "va", "du", "")
_LAST_TAILS = ("vik", "dar", "strom", "mek", "lund", "sen", "ard", "ovic", "berk")
# Share of a club's goals by position, and usual scoring rate (invented, loosely plausible).
_GOAL_WEIGHT = {"LW": 0.8, "RW": 0.8, "LB": 1.1, "CB": 1.0, "RB": 1.1, "PV": 0.9}
_SHOT_RATE = {"LW": 0.66, "RW": 0.66, "LB": 0.52, "CB": 0.55, "RB": 0.52, "PV": 0.70}
_ASSISTS_PER_GAME = {"GK": 0.2, "LW": 1.0, "RW": 1.0, "LB": 2.5, "CB": 4.0, "RB": 2.5, "PV": 1.2}


@dataclass(frozen=True)
class Club:
    """One club: a 3-letter code, its full name, home town and conference."""

    code: str
    name: str
    town: str
    conference: str


@dataclass(frozen=True)
class Player:
    """One player: stable id (``p`` + 4 digits), name, birth date and position."""

    player_id: str
    first: str
    last: str
    born: date
    position: str

    @property
    def name(self) -> str:
        """The name as "First Last"."""
        return f"{self.first} {self.last}"


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
        standings = _play_season(rng, clubs)
        rows: list[PlayerSeason] = []
        for club, standing in zip(clubs, standings, strict=True):
            rows.extend(_club_stats(rng, club.code, rosters[club.code], standing, captains))
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
        town = rng.choice(_TOWN_HEADS) + rng.choice(_TOWN_TAILS)
        # Codes are the town's first three letters, so those must be unique.
        if all(other[:3] != town[:3] for other in towns):
            towns.append(town)
    return tuple(
        Club(
            code=town[:3].upper(),
            name=rng.choice(_CLUB_PATTERNS).format(town),
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
            first = rng.choice(_FIRST_HEADS) + rng.choice(_FIRST_TAILS)
            last = rng.choice(_LAST_HEADS) + rng.choice(_LAST_MIDS) + rng.choice(_LAST_TAILS)
            if f"{first} {last}" not in self.names:
                break
        self.names.add(f"{first} {last}")
        # Debut ages 18-30 in the first season (an established league), 18-22 afterwards.
        age = rng.randint(18, 30 if year == FIRST_SEASON else 22)
        born = date(year - age, rng.randint(1, 12), rng.randint(1, 28))
        player = Player(f"p{len(self.players) + 1:04d}", first, last, born, position)
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


def _play_season(rng: random.Random, clubs: tuple[Club, ...]) -> tuple[Standing, ...]:
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


def _club_stats(
    rng: random.Random,
    code: str,
    roster: dict[str, list[str]],
    standing: Standing,
    captains: dict[str, str],
) -> list[PlayerSeason]:
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
    shares = _apportion(standing.goals_for - sum(goals.values()), weights)
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


def _apportion(total: int, weights: list[float]) -> list[int]:
    """Split ``total`` into integers proportional to ``weights`` (largest remainder method)."""
    exact = [total * w / sum(weights) for w in weights]
    shares = [math.floor(x) for x in exact]
    by_remainder = sorted(range(len(exact)), key=lambda i: (shares[i] - exact[i], i))
    for i in by_remainder[: total - sum(shares)]:
        shares[i] += 1
    return shares


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
