"""Tests for reading a cached response's fields: by name, Cache-Control directives, Date.

Sources: RFC 9110 §5.3 (repeated field lines), §5.6.4 (quoted strings), §6.6.1 (Date);
RFC 9111 §1.2.2 (delta-seconds), §5.2 (Cache-Control). Expected values worked out by hand.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta, timezone

import pytest

from harvester.fetch.cache_entry import (
    StoredResponse,
    as_utc,
    cache_directives,
    date_value,
    delta_seconds,
    field_value,
    has_directive,
    header_pairs,
    recency,
)

T = datetime(2026, 3, 1, 12, 0, 0, tzinfo=UTC)


def stored(*headers: tuple[str, str], received: float = 0.0) -> StoredResponse:
    """A 200 received at T+``received`` with ``headers``."""
    moment = T + timedelta(seconds=received)
    return StoredResponse("https://handball.example.org/", 200, headers, b"", (), moment, moment)


def test_repeated_lines_merge_in_order_whatever_the_case_of_the_name() -> None:
    headers = [("Vary", " Accept "), ("x-other", "1"), ("VARY", "Accept-Language")]
    assert field_value(headers, "vary") == "Accept, Accept-Language"
    assert field_value(headers, "etag") is None
    assert header_pairs({"ETag": '"a"'}) == [("ETag", '"a"')]


def test_directives_split_on_commas_outside_quoted_strings() -> None:
    headers = [
        ("Cache-Control", 'No-Cache="Set-Cookie, X-Token", MAX-AGE=60'),
        ("cache-control", r' , private, ext="a \"quoted\" word"'),
    ]
    # Names are lower-cased, arguments kept as sent; empty members are skipped (RFC 9110 §5.6.1).
    assert cache_directives(headers) == [
        ("no-cache", "Set-Cookie, X-Token"),
        ("max-age", "60"),
        ("private", None),
        ("ext", 'a "quoted" word'),  # backslash escapes removed (RFC 9110 §5.6.4)
    ]
    assert has_directive(headers, "private")
    assert not has_directive(headers, "no-store")


@pytest.mark.parametrize(
    ("text", "seconds"),
    [
        ("60", 60),
        (" 0 ", 0),
        ("2147483648", 2147483648),
        ("99999999999999999999", 2147483648),  # clamped (RFC 9111 §1.2.2)
        ("-1", None),
        ("1.5", None),
        ("", None),
        ("٣", None),  # ARABIC-INDIC DIGIT THREE: a digit to Python, not to RFC 5234 DIGIT
        (None, None),
    ],
)
def test_delta_seconds(text: str | None, seconds: int | None) -> None:
    assert delta_seconds(text) == seconds


def test_date_value_falls_back_to_the_receive_time() -> None:
    assert date_value(stored(("Date", "Sun, 01 Mar 2026 11:59:00 GMT"))) == T - timedelta(
        seconds=60
    )
    assert date_value(stored(("Date", "not a date"), received=5)) == T + timedelta(seconds=5)
    assert date_value(stored(received=7)) == T + timedelta(seconds=7)


def test_recency_orders_by_date_then_receive_time() -> None:
    older = stored(("Date", "Sun, 01 Mar 2026 11:00:00 GMT"), received=30)
    newer = stored(("Date", "Sun, 01 Mar 2026 11:30:00 GMT"), received=10)
    later_copy = stored(("Date", "Sun, 01 Mar 2026 11:30:00 GMT"), received=20)
    assert sorted([later_copy, older, newer], key=recency) == [older, newer, later_copy]


def test_naive_times_are_read_as_utc() -> None:
    assert as_utc(datetime(2026, 3, 1, 12, 0)) == T
    plus_two = timezone(timedelta(hours=2))
    assert as_utc(datetime(2026, 3, 1, 14, 0, tzinfo=plus_two)) == T
