"""Tests for ranking Mementos against a target datetime and for time windows.

Sources: RFC 7089 §3.1 (selection is left to the chooser) and §4.5.3 (before the first → first,
after the last → last); REFERENCES §4.5 (the project's selection rule and its worked example) and
§4.6 (selection test cases). The rules themselves are a project choice, not a standard's: tests
say so. Every expected order is worked out by hand.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest
from hypothesis import given
from hypothesis import strategies as st

from harvester.fetch.capture_choice import (
    CHOICE_RULES,
    ChoiceRule,
    describe_window,
    parse_window,
    rank_mementos,
)
from harvester.fetch.timemap import Memento, read_timemap


def utc(
    year: int, month: int, day: int, hour: int = 0, minute: int = 0, second: int = 0
) -> datetime:
    return datetime(year, month, day, hour, minute, second, tzinfo=UTC)


# REFERENCES §4.4's TimeMap, as Mementos (made-up hosts).
FIRST = Memento("https://archive.example.net/m/20220103091500/p", utc(2022, 1, 3, 9, 15, 0), 0)
MIDDLE = Memento("https://archive.example.net/m/20230520121005/p", utc(2023, 5, 20, 12, 10, 5), 1)
LAST = Memento("https://archive.example.net/m/20240614174012/p", utc(2024, 6, 14, 17, 40, 12), 2)
EXAMPLE = (FIRST, MIDDLE, LAST)


def uris(mementos: list[Memento]) -> list[str]:
    return [memento.uri for memento in mementos]


# -- REFERENCES §4.5 worked example ----------------------------------------------------------------


def test_worked_example_target_2023() -> None:
    # REFERENCES §4.5: distances 362 d 14:45:00 (first), 139 d 12:10:05 (middle) and
    # 530 d 17:40:12 (last), so the middle one comes first, then the first, then the last.
    assert rank_mementos(EXAMPLE, utc(2023, 1, 1)) == [MIDDLE, FIRST, LAST]


def test_worked_example_target_before_the_first() -> None:
    # RFC 7089 §4.5.3 mirrored: a target before the first Memento gets the first.
    assert rank_mementos(EXAMPLE, utc(2021, 6, 1)) == [FIRST, MIDDLE, LAST]


def test_worked_example_target_after_the_last() -> None:
    # RFC 7089 §4.5.3 mirrored: a target after the last Memento gets the last.
    assert rank_mementos(EXAMPLE, utc(2026, 1, 1)) == [LAST, MIDDLE, FIRST]


def test_document_order_does_not_matter_to_closest() -> None:
    # REFERENCES §8.3: Memento datetimes sort as instants, not by where they are listed.
    shuffled = (LAST, FIRST, MIDDLE)
    assert rank_mementos(shuffled, utc(2023, 1, 1)) == [MIDDLE, FIRST, LAST]


# -- REFERENCES §4.6 selection cases ---------------------------------------------------------------


def test_exact_hit_comes_first() -> None:
    assert rank_mementos(EXAMPLE, MIDDLE.datetime)[0] == MIDDLE  # REFERENCES §4.6 exact hit


def test_exact_tie_takes_the_earlier() -> None:
    # REFERENCES §4.6: 10:00:00 and 10:00:10 with target 10:00:05 gives 10:00:00 (project rule),
    # also when the later one is listed first.
    early = Memento("http://arch.test/early", utc(2024, 3, 1, 10, 0, 0), 1)
    late = Memento("http://arch.test/late", utc(2024, 3, 1, 10, 0, 10), 0)
    assert rank_mementos([late, early], utc(2024, 3, 1, 10, 0, 5)) == [early, late]


def test_same_datetime_goes_by_document_order() -> None:
    # REFERENCES §4.5 step 4: several URI-Ms with one datetime, first in document order first.
    moment = utc(2024, 3, 1, 10, 0, 0)
    second = Memento("http://arch.test/second", moment, 1)
    first = Memento("http://arch.test/first", moment, 0)
    assert rank_mementos([second, first], utc(2024, 3, 2)) == [first, second]
    assert rank_mementos([second, first], utc(2024, 3, 2), rule="before") == [first, second]


def test_equal_positions_keep_the_callers_order() -> None:
    moment = utc(2024, 3, 1)
    one, two = Memento("http://arch.test/1", moment, 0), Memento("http://arch.test/2", moment, 0)
    assert rank_mementos([two, one], moment) == [two, one]


def test_unparsable_datetime_is_never_ranked() -> None:
    # REFERENCES §4.5 step 1: log and skip a Memento whose datetime fails to parse.
    timemap = read_timemap(
        '<a>; rel=memento; datetime="not a date",\n'
        '<b>; rel=memento; datetime="Fri, 01 Mar 2024 10:00:00 GMT"',
        base="http://arch.test/",
    )
    assert uris(rank_mementos(timemap.mementos, utc(2024, 3, 1))) == ["http://arch.test/b"]


# -- the before rule -------------------------------------------------------------------------------


def test_before_takes_the_latest_at_or_before_the_target() -> None:
    # REFERENCES §4.5 step 3, "not_after" mode (project rule).
    assert rank_mementos(EXAMPLE, utc(2026, 1, 1), rule="before") == [LAST, MIDDLE, FIRST]
    assert rank_mementos(EXAMPLE, utc(2023, 1, 1), rule="before") == [FIRST]
    assert rank_mementos(EXAMPLE, MIDDLE.datetime, rule="before") == [MIDDLE, FIRST]  # <=


def test_before_with_nothing_before_is_empty() -> None:
    # Unlike RFC 7089 §4.5.3's TimeGate, the before rule never falls forward (project rule).
    assert rank_mementos(EXAMPLE, utc(2021, 6, 1), rule="before") == []


def test_nothing_to_rank() -> None:
    assert rank_mementos([], utc(2024, 1, 1)) == []


# -- windows ---------------------------------------------------------------------------------------


def test_within_drops_mementos_farther_than_the_window() -> None:
    # Project rule: within bounds |datetime - target|. From 2023-01-01 the middle Memento is
    # 139 d 12:10:05 away and the first 362 d 14:45:00.
    target = utc(2023, 1, 1)
    assert rank_mementos(EXAMPLE, target, within=timedelta(days=140)) == [MIDDLE]
    assert rank_mementos(EXAMPLE, target, within=timedelta(days=139)) == []
    assert rank_mementos(EXAMPLE, target, within=timedelta(days=363)) == [MIDDLE, FIRST]


def test_within_bound_is_inclusive() -> None:
    exact = timedelta(days=139, hours=12, minutes=10, seconds=5)
    assert rank_mementos(EXAMPLE, utc(2023, 1, 1), within=exact) == [MIDDLE]
    just_short = exact - timedelta(microseconds=1)
    assert rank_mementos(EXAMPLE, utc(2023, 1, 1), within=just_short) == []


def test_within_applies_to_before_too() -> None:
    target = utc(2023, 6, 1)
    assert rank_mementos(EXAMPLE, target, rule="before", within=timedelta(days=30)) == [MIDDLE]
    assert rank_mementos(EXAMPLE, target, rule="before", within=timedelta(days=5)) == []


def test_zero_window_keeps_exact_hits_only() -> None:
    assert rank_mementos(EXAMPLE, LAST.datetime, within=timedelta(0)) == [LAST]


def test_bad_arguments_are_refused() -> None:
    with pytest.raises(ValueError, match="no time zone"):
        rank_mementos(EXAMPLE, datetime(2023, 1, 1))
    with pytest.raises(ValueError, match="negative"):
        rank_mementos(EXAMPLE, utc(2023, 1, 1), within=timedelta(days=-1))
    with pytest.raises(ValueError, match="closest, before"):
        rank_mementos(EXAMPLE, utc(2023, 1, 1), rule="nearest")  # type: ignore[arg-type]


def test_choice_rules_lists_both() -> None:
    assert CHOICE_RULES == ("closest", "before")


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("120d", timedelta(days=120)),
        ("36h", timedelta(hours=36)),
        ("2w", timedelta(days=14)),
        (" 2W ", timedelta(days=14)),  # leniency: case and surrounding space
        ("1h", timedelta(hours=1)),
    ],
)
def test_parse_window(text: str, expected: timedelta) -> None:
    assert parse_window(text) == expected


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("90m", "minutes or months"),
        ("0d", "zero"),
        ("-5d", "negative"),
        ("", "whole number followed by w, d or h"),
        ("d", "whole number followed by w, d or h"),
        ("5", "whole number followed by w, d or h"),
        ("1.5d", "whole number followed by w, d or h"),
        ("5 d", "whole number followed by w, d or h"),
        ("\uff15d", "whole number followed by w, d or h"),  # a full-width digit five
        ("5y", "unknown unit 'y'"),
        ("5days", "unknown unit 'days'"),
        ("99999999999999w", "too long"),
    ],
)
def test_parse_window_refuses(text: str, message: str) -> None:
    with pytest.raises(ValueError, match=message):
        parse_window(text)


@pytest.mark.parametrize(
    ("window", "text"),
    [
        (timedelta(days=120), "120d"),
        (timedelta(hours=36), "36h"),
        (timedelta(days=14), "2w"),
        (timedelta(hours=48), "2d"),
        (timedelta(hours=1), "1h"),
    ],
)
def test_describe_window(window: timedelta, text: str) -> None:
    assert describe_window(window) == text


@pytest.mark.parametrize(
    "window", [timedelta(minutes=90), timedelta(0), timedelta(days=-1), timedelta(seconds=1)]
)
def test_describe_window_refuses_what_has_no_short_form(window: timedelta) -> None:
    with pytest.raises(ValueError, match="not"):
        describe_window(window)


@given(st.integers(min_value=1, max_value=10**6), st.sampled_from("wdh"))
def test_described_window_reads_back_the_same(count: int, unit: str) -> None:
    window = parse_window(f"{count}{unit}")
    assert parse_window(describe_window(window)) == window


# -- properties ------------------------------------------------------------------------------------

_MOMENTS = st.datetimes(
    min_value=datetime(1990, 1, 1), max_value=datetime(2030, 1, 1), timezones=st.just(UTC)
)
_MEMENTO_LISTS = st.lists(_MOMENTS, max_size=12).map(
    lambda moments: [
        Memento(f"http://arch.test/{i}", moment, i) for i, moment in enumerate(moments)
    ]
)
_WINDOWS = st.none() | st.timedeltas(min_value=timedelta(0), max_value=timedelta(days=3000))


@given(_MEMENTO_LISTS, _MOMENTS, st.sampled_from(CHOICE_RULES), _WINDOWS)
def test_ranking_is_a_permutation_of_the_eligible_subset(
    mementos: list[Memento], target: datetime, rule: ChoiceRule, within: timedelta | None
) -> None:
    ranked = rank_mementos(mementos, target, rule=rule, within=within)
    # Eligible, straight from the rule's statement: within the window, and at or before the
    # target for "before".
    eligible = [
        m
        for m in mementos
        if (within is None or abs(m.datetime - target) <= within)
        and (rule == "closest" or m.datetime <= target)
    ]
    assert sorted(uris(ranked)) == sorted(uris(eligible))
    assert len(ranked) == len(eligible)


@given(_MEMENTO_LISTS, _MOMENTS, _WINDOWS)
def test_closest_first_is_never_farther_than_any_other(
    mementos: list[Memento], target: datetime, within: timedelta | None
) -> None:
    ranked = rank_mementos(mementos, target, within=within)
    for other in ranked:
        assert abs(ranked[0].datetime - target) <= abs(other.datetime - target)
    # And every step down the list is no closer than the one before it.
    distances = [abs(m.datetime - target) for m in ranked]
    assert distances == sorted(distances)


@given(_MEMENTO_LISTS, _MOMENTS)
def test_before_is_latest_first_and_never_after_the_target(
    mementos: list[Memento], target: datetime
) -> None:
    ranked = rank_mementos(mementos, target, rule="before")
    assert all(m.datetime <= target for m in ranked)
    moments = [m.datetime for m in ranked]
    assert moments == sorted(moments, reverse=True)
