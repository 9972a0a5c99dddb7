"""RFC 3339 time as harvester writes and reads it (REFERENCES §8.1)."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta, timezone

import pytest

from harvester.timestamps import parse_rfc3339, rfc3339


def test_any_offset_is_written_in_utc_with_z_and_microseconds() -> None:
    # RFC 3339 §5.6 date-time; project rule: UTC, uppercase "Z", six fraction digits.
    moment = datetime(2026, 3, 1, 19, 30, 5, 42, tzinfo=timezone(timedelta(hours=1, minutes=30)))
    assert rfc3339(moment) == "2026-03-01T18:00:05.000042Z"


def test_a_naive_time_is_refused() -> None:
    with pytest.raises(ValueError, match="no time zone"):
        rfc3339(datetime(2026, 3, 1, 12, 0))


@pytest.mark.parametrize(
    "text",
    [
        "2026-03-01T18:00:05.000042Z",
        "2026-03-01T19:30:05.000042+01:30",
        "2026-03-01t18:00:05.000042z",
    ],
)
def test_reading_gives_the_same_instant_in_utc(text: str) -> None:
    # RFC 3339 §5.6 notes: "t" and "z" may be lowercase.
    expected = datetime(2026, 3, 1, 18, 0, 5, 42, tzinfo=UTC)
    assert parse_rfc3339(text) == expected
    assert parse_rfc3339(text).utcoffset() == timedelta(0)


def test_reading_a_time_without_offset_is_an_error() -> None:
    with pytest.raises(ValueError, match="no UTC offset"):
        parse_rfc3339("2026-03-01T18:00:05")
