"""Tests for the invented league's data model: determinism, shape and internal consistency."""

from __future__ import annotations

import re
from collections import Counter, defaultdict

import pytest

from harvester.demo.league import (
    CONFERENCES,
    DEFAULT_SEED,
    POSITIONS,
    SEASONS,
    League,
    build_league,
)
from harvester.errors import HarvesterError


@pytest.fixture(scope="module")
def league() -> League:
    return build_league()


def test_same_seed_gives_an_equal_league() -> None:
    # Two separate builds, compared field by field (dataclass equality) and by their text form.
    first, second = build_league(DEFAULT_SEED), build_league(DEFAULT_SEED)
    assert first == second
    assert repr(first) == repr(second)


def test_different_seeds_give_different_leagues() -> None:
    assert build_league(1) != build_league(2)


def test_seasons_run_from_2012_to_2026(league: League) -> None:
    assert [season.year for season in league.seasons] == list(range(2012, 2027))
    assert list(range(2012, 2027)) == list(SEASONS)


def test_ten_clubs_five_per_conference_with_unique_codes(league: League) -> None:
    assert len(league.clubs) == 10
    assert Counter(club.conference for club in league.clubs) == {
        "North Conference": 5,
        "South Conference": 5,
    }
    codes = [club.code for club in league.clubs]
    assert len(set(codes)) == 10
    assert all(re.fullmatch(r"[A-Z]{3}", code) for code in codes)
    assert set(CONFERENCES) == {"North Conference", "South Conference"}


def test_player_ids_and_names_are_unique_and_well_formed(league: League) -> None:
    ids = [player.player_id for player in league.players]
    assert len(set(ids)) == len(ids)
    assert all(re.fullmatch(r"p\d{4}", pid) for pid in ids)
    names = [player.name for player in league.players]
    assert len(set(names)) == len(names)
    assert all(re.fullmatch(r"[A-Z][a-z]+ [A-Z][a-z]+( Jr\.)?", name) for name in names)
    positions = {"GK", "LW", "RW", "LB", "CB", "RB", "PV"}
    assert {player.position for player in league.players} == positions


def test_a_few_players_are_named_after_the_one_before_with_jr(league: League) -> None:
    by_name = {player.name: player for player in league.players}
    juniors = [player for player in league.players if player.suffix]
    assert juniors and all(player.suffix == "Jr." for player in juniors)
    for junior in juniors:
        senior = by_name[f"{junior.first} {junior.last}"]  # "John Smith" beside "John Smith Jr."
        assert int(senior.player_id[1:]) == int(junior.player_id[1:]) - 1
    current = {row.player_id for row in league.seasons[-1].players}
    both = [
        j
        for j in juniors
        if j.player_id in current and by_name[f"{j.first} {j.last}"].player_id in current
    ]
    assert len(both) >= 2  # the current season's pages show both of a pair


def test_each_club_has_fourteen_players_two_per_position(league: League) -> None:
    positions = {player.player_id: player.position for player in league.players}
    for season in league.seasons:
        ids = [row.player_id for row in season.players]
        assert len(set(ids)) == len(ids) == 140, season.year
        by_club: dict[str, Counter[str]] = defaultdict(Counter)
        for row in season.players:
            by_club[row.club][positions[row.player_id]] += 1
        assert set(by_club) == {club.code for club in league.clubs}
        for counts in by_club.values():
            assert counts == dict.fromkeys(POSITIONS, 2)


def test_some_players_change_clubs_between_seasons(league: League) -> None:
    clubs_of: dict[str, set[str]] = defaultdict(set)
    for season in league.seasons:
        for row in season.players:
            clubs_of[row.player_id].add(row.club)
    assert any(len(clubs) > 1 for clubs in clubs_of.values())


def test_players_are_of_playing_age(league: League) -> None:
    born = {player.player_id: player.born for player in league.players}
    for season in league.seasons:
        for row in season.players:
            assert 17 <= season.year - born[row.player_id].year <= 40


def test_standings_are_a_double_round_robin(league: League) -> None:
    for season in league.seasons:
        assert len(season.standings) == 10
        for row in season.standings:
            # Ten clubs meeting twice: 2 × (10 − 1) = 18 games each (worked out by hand).
            assert row.games == 18
            assert row.wins + row.draws + row.losses == row.games
            assert row.points == 2 * row.wins + row.draws
            assert row.goal_difference == row.goals_for - row.goals_against
        # Every match has one winner and one loser, or two drawers.
        assert sum(r.wins for r in season.standings) == sum(r.losses for r in season.standings)
        assert sum(r.draws for r in season.standings) % 2 == 0
        assert sum(r.goals_for for r in season.standings) == sum(
            r.goals_against for r in season.standings
        )


def test_club_goals_equal_the_sum_of_its_players_goals(league: League) -> None:
    for season in league.seasons:
        scored: Counter[str] = Counter()
        for row in season.players:
            scored[row.club] += row.goals
        assert scored == {row.club: row.goals_for for row in season.standings}


def test_player_statistics_are_consistent(league: League) -> None:
    for season in league.seasons:
        court: Counter[str] = Counter()
        for row in season.players:
            assert 1 <= row.games <= 18
            # A game lasts 2 × 30 minutes (IHF Rules of the Game, rule 2:1; from memory).
            assert 0 < row.seconds <= row.games * 60 * 60
            assert 0 <= row.goals <= row.shots
            assert 0 <= row.seven_goals <= row.seven_shots <= row.shots
            assert row.seven_goals <= row.goals
            assert row.seven_shots - row.seven_goals <= row.shots - row.goals
            assert row.assists >= 0
            court[row.club] += row.seconds
        # Seven players on court per side (IHF rule 4:1; from memory), 18 games of 60 minutes.
        assert all(seconds <= 18 * 7 * 3600 for seconds in court.values())


def test_some_players_never_shoot(league: League) -> None:
    assert any(row.shots == 0 for row in league.season(2026).players)


def test_one_captain_per_club_per_season(league: League) -> None:
    for season in league.seasons:
        captains = Counter(row.club for row in season.players if row.captain)
        assert captains == dict.fromkeys((club.code for club in league.clubs), 1)


def test_contracts_cover_every_player_and_end_on_june_30(league: League) -> None:
    unknown = total = 0
    for season in league.seasons:
        clubs = {row.player_id: row.club for row in season.players}
        assert {c.player_id: c.club for c in season.contracts} == clubs
        for contract in season.contracts:
            assert 1 <= contract.years <= 5
            assert (contract.expires.month, contract.expires.day) == (6, 30)
            # Listed while running: it ends this season at the earliest, and lasts `years`.
            assert season.year <= contract.expires.year <= season.year + contract.years - 1
            assert contract.salary is None or contract.salary > 0
            unknown += contract.salary is None
            total += 1
    # "About one in ten" undisclosed: accept 5 % to 15 %.
    assert 0.05 * total <= unknown <= 0.15 * total


def test_revision_zero_is_the_base_data(league: League) -> None:
    assert league.season(2026, 0) is league.seasons[-1]


def test_revision_changes_only_the_latest_season(league: League) -> None:
    for year in (2012, 2019, 2025):
        assert league.season(year, 3) == league.season(year)
    assert league.season(2026, 1) != league.season(2026)


def test_revision_one_moves_goals_and_changes_one_salary(league: League) -> None:
    base, revised = league.season(2026), league.season(2026, 1)
    changed = [(a, b) for a, b in zip(base.players, revised.players, strict=True) if a != b]
    # Three moves of goals between two teammates: 2 to 6 rows change.
    assert 2 <= len(changed) <= 6
    assert sum(b.goals - a.goals for a, b in changed) == 0
    for a, b in changed:
        assert (a.player_id, a.club, a.seconds, a.assists) == (
            b.player_id,
            b.club,
            b.seconds,
            b.assists,
        )
    salaries = [
        (a.salary, b.salary)
        for a, b in zip(base.contracts, revised.contracts, strict=True)
        if a != b
    ]
    assert len(salaries) == 1
    assert salaries[0][0] is not None and salaries[0][1] is not None
    assert salaries[0][0] != salaries[0][1]


@pytest.mark.parametrize("revision", [1, 2, 5])
def test_revised_seasons_stay_consistent(league: League, revision: int) -> None:
    season = league.season(2026, revision)
    scored: Counter[str] = Counter()
    for row in season.players:
        scored[row.club] += row.goals
        assert 0 <= row.seven_goals <= row.goals <= row.shots
    assert scored == {row.club: row.goals_for for row in season.standings}


def test_revisions_are_deterministic_and_cumulative() -> None:
    one, other = build_league(), build_league()
    assert one.season(2026, 2) == other.season(2026, 2)
    assert one.season(2026, 2) != one.season(2026, 1)


def test_negative_revision_is_refused(league: League) -> None:
    with pytest.raises(HarvesterError, match="revision -1"):
        league.season(2026, -1)


def test_unknown_season_is_refused_with_a_hint(league: League) -> None:
    with pytest.raises(HarvesterError, match="no season 2011") as info:
        league.season(2011)
    assert "2012" in info.value.hint and "2026" in info.value.hint


def test_ranking_orders_by_points_then_goal_difference(league: League) -> None:
    for season in league.seasons:
        for conference in CONFERENCES:
            codes = [club.code for club in league.clubs if club.conference == conference]
            ranked = season.ranked(codes)
            assert sorted(row.club for row in ranked) == sorted(codes)
            keys = [(row.points, row.goal_difference, row.goals_for) for row in ranked]
            assert keys == sorted(keys, reverse=True)


def test_lookups(league: League) -> None:
    first = league.players[0]
    assert league.player(first.player_id) is first
    assert league.player("p9999") is None
    assert league.club(league.clubs[3].code) is league.clubs[3]
    assert league.club("ZZZ") is None
