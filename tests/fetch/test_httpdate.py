"""Tests for HTTP-date parsing and formatting and for Retry-After delays.

Sources: RFC 9110 §5.6.7 (HTTP-date), §10.2.3 (Retry-After), RFC 9111 §4.2 (dates in caches),
RFC 5322 §4.3 (obsolete zone names) and Python's ``email.utils`` as a reference library.
Every expected value below is worked out by hand from the input.
"""

from __future__ import annotations

import email.utils
import logging
from datetime import UTC, datetime, timedelta, timezone

import pytest

from harvester.fetch.httpdate import format_http_date, parse_http_date, parse_retry_after

# RFC 9110 §5.6.7 gives this instant in all three forms.
EXAMPLE = datetime(1994, 11, 6, 8, 49, 37, tzinfo=UTC)
NOW = datetime(2026, 3, 1, 12, 0, 0, tzinfo=UTC)


# -- parsing the three forms ------------------------------------------------------------------


@pytest.mark.parametrize(
    "text",
    [
        "Sun, 06 Nov 1994 08:49:37 GMT",  # RFC 9110 §5.6.7 IMF-fixdate
        "Sunday, 06-Nov-94 08:49:37 GMT",  # RFC 9110 §5.6.7 obsolete RFC 850 format
        "Sun Nov  6 08:49:37 1994",  # RFC 9110 §5.6.7 ANSI C asctime() format
    ],
)
def test_all_three_forms_give_the_same_aware_utc_instant(text: str) -> None:
    parsed = parse_http_date(text, now=NOW)
    assert parsed == EXAMPLE  # RFC 9110 §5.6.7: recipients MUST accept all three
    assert parsed is not None and parsed.utcoffset() == timedelta(0)  # all three mean UTC


def test_imf_fixdate_agrees_with_the_standard_library() -> None:
    text = "Tue, 15 Nov 1994 08:12:31 GMT"
    reference = email.utils.parsedate_to_datetime(text)  # email.utils as reference library
    assert parse_http_date(text) == reference == datetime(1994, 11, 15, 8, 12, 31, tzinfo=UTC)


def test_asctime_with_a_two_digit_day() -> None:
    # RFC 9110 §5.6.7: date3 = month SP ( 2DIGIT / ( SP DIGIT ) )
    assert parse_http_date("Wed Nov 16 08:49:37 1994") == datetime(
        1994, 11, 16, 8, 49, 37, tzinfo=UTC
    )


def test_matching_is_case_insensitive_for_caches() -> None:
    # RFC 9111 §4.2: a cache recipient SHOULD match HTTP-date case-insensitively.
    assert parse_http_date("sun, 06 NOV 1994 08:49:37 gmt") == EXAMPLE


def test_surrounding_whitespace_is_ignored() -> None:
    # RFC 9110 §5.5: optional whitespace around a field value is not part of it.
    assert parse_http_date("  Sun, 06 Nov 1994 08:49:37 GMT \t") == EXAMPLE


def test_leap_second_is_accepted() -> None:
    # RFC 9110 §5.6.7: time-of-day allows second 60; it lands on the next minute's :00.
    parsed = parse_http_date("Wed, 31 Dec 2036 23:59:60 GMT")
    assert parsed == datetime(2037, 1, 1, 0, 0, 0, tzinfo=UTC)


@pytest.mark.parametrize(
    "text",
    [
        "",
        "garbage",
        "0",  # RFC 9111 §5.3 names "0" as an invalid date
        "Sun, 31 Feb 1994 08:49:37 GMT",  # there is no 31 February
        "Sun, 06 Nov 1994 24:00:00 GMT",  # hour 24 is outside time-of-day
        "Sun, 06 Nov 1994 08:61:37 GMT",  # minute 61
        "Sun, 06 Foo 1994 08:49:37 GMT",  # not a month name
        "Sun, 06 Nov 94 08:49:37 GMT",  # IMF-fixdate needs a four-digit year
        "1994-11-06T08:49:37Z",  # RFC 3339 is not an HTTP-date
    ],
)
def test_invalid_dates_give_none(text: str) -> None:
    assert parse_http_date(text, now=NOW) is None  # RFC 9110 §5.6.7 grammar


# -- zones ------------------------------------------------------------------------------------


def test_other_zones_are_rejected_by_default() -> None:
    # RFC 9111 §4.2: a zone other than GMT SHOULD be invalid for expiration.
    assert parse_http_date("Sun, 06 Nov 1994 03:49:37 EST") is None
    assert parse_http_date("Sun, 06 Nov 1994 09:49:37 +0100") is None


def test_lenient_mode_converts_other_zones_to_utc() -> None:
    # RFC 5322 §4.3: EST is -0500, so 03:49:37 EST is 08:49:37 UTC.
    assert parse_http_date("Sun, 06 Nov 1994 03:49:37 EST", gmt_only=False) == EXAMPLE
    # +0100 is one hour ahead of UTC: 09:49:37 +0100 is 08:49:37 UTC.
    assert parse_http_date("Sun, 06 Nov 1994 09:49:37 +0100", gmt_only=False) == EXAMPLE


def test_lenient_mode_coerces_a_naive_result_to_utc() -> None:
    # email.utils returns a naive datetime for "-0000" (REFERENCES §8.2); RFC 9110 §5.6.7 says
    # HTTP dates are UTC, so the result must be aware UTC, not local time.
    naive = email.utils.parsedate_to_datetime("Sun, 06 Nov 1994 08:49:37 -0000")
    assert naive.tzinfo is None  # the premise, checked against the reference library
    parsed = parse_http_date("Sun, 06 Nov 1994 08:49:37 -0000", gmt_only=False)
    assert parsed == EXAMPLE
    assert parsed is not None and parsed.tzinfo is not None


def test_lenient_mode_survives_absurd_years() -> None:
    # REFERENCES §8.2: email.utils raises ValueError (or OverflowError on old releases) here.
    assert parse_http_date("Sun, 06 Nov 99999999999 08:49:37 +0000", gmt_only=False) is None


# -- two-digit years --------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "now", "year"),
    [
        # RFC 9110 §5.6.7: a date that appears more than 50 years ahead is the most recent past
        # year with the same last two digits. As of 2026, 69 is 43 years ahead: 2069.
        ("Tuesday, 01-Jan-69 00:00:00 GMT", NOW, 2069),
        # 2099 would be 73 years ahead, so it is 1999.
        ("Friday, 01-Jan-99 00:00:00 GMT", NOW, 1999),
        # Exactly 50 years ahead is not "more than 50": it stays in 2076.
        ("Monday, 01-Jun-76 00:00:00 GMT", datetime(2026, 6, 1, tzinfo=UTC), 2076),
        # One day past 50 years: back to 1976.
        ("Tuesday, 02-Jun-76 00:00:00 GMT", datetime(2026, 6, 1, tzinfo=UTC), 1976),
        # In 2090, "10" read as 2010 would be 80 years back; 2110 is only 20 ahead, so 2110.
        ("Wednesday, 01-Jan-10 00:00:00 GMT", datetime(2090, 1, 1, tzinfo=UTC), 2110),
    ],
)
def test_two_digit_years_follow_the_fifty_year_rule(text: str, now: datetime, year: int) -> None:
    parsed = parse_http_date(text, now=now)
    assert parsed is not None and parsed.year == year


def test_python_maps_69_differently() -> None:
    # REFERENCES §8.2: email.utils reads 69 as 1969, which the RFC rule says is wrong in 2026.
    assert email.utils.parsedate_to_datetime("Tuesday, 01-Jan-69 00:00:00 GMT").year == 1969
    parsed = parse_http_date("Tuesday, 01-Jan-69 00:00:00 GMT", now=NOW)
    assert parsed == datetime(2069, 1, 1, tzinfo=UTC)


# -- weekday check ----------------------------------------------------------------------------


def test_wrong_weekday_is_logged_but_the_date_is_used(caplog: pytest.LogCaptureFixture) -> None:
    # Common practice, no published source (REFERENCES §8.3): warn on a weekday mismatch.
    # 6 Nov 1994 was a Sunday, not a Monday.
    with caplog.at_level(logging.WARNING, logger="harvester.fetch.httpdate"):
        parsed = parse_http_date("Mon, 06 Nov 1994 08:49:37 GMT")
    assert parsed == EXAMPLE
    assert "wrong weekday" in caplog.text


def test_right_weekday_logs_nothing(caplog: pytest.LogCaptureFixture) -> None:
    with caplog.at_level(logging.WARNING, logger="harvester.fetch.httpdate"):
        parse_http_date("Sun, 06 Nov 1994 08:49:37 GMT")
    assert caplog.text == ""


# -- formatting -------------------------------------------------------------------------------


def test_format_gives_imf_fixdate() -> None:
    # RFC 9110 §5.6.7: senders MUST generate IMF-fixdate; this is the RFC's own example.
    assert format_http_date(EXAMPLE) == "Sun, 06 Nov 1994 08:49:37 GMT"


def test_format_agrees_with_the_standard_library() -> None:
    moment = datetime(2024, 3, 1, 12, 0, 0, tzinfo=UTC)
    # email.utils.format_datetime as reference library (REFERENCES §8.2 quotes its output).
    assert format_http_date(moment) == email.utils.format_datetime(moment, usegmt=True)
    assert format_http_date(moment) == "Fri, 01 Mar 2024 12:00:00 GMT"


def test_format_converts_other_offsets_and_drops_fractions() -> None:
    # 09:49:37.9 at +01:00 is 08:49:37.9 UTC; IMF-fixdate has whole seconds only.
    moment = datetime(1994, 11, 6, 9, 49, 37, 900000, tzinfo=timezone(timedelta(hours=1)))
    assert format_http_date(moment) == "Sun, 06 Nov 1994 08:49:37 GMT"


def test_format_refuses_a_naive_datetime() -> None:
    # RFC 9111 §4.2: local time must never leak in, so a zone-less value is refused.
    with pytest.raises(ValueError, match="aware"):
        format_http_date(datetime(1994, 11, 6, 8, 49, 37))


# -- Retry-After ------------------------------------------------------------------------------

RESPONSE_DATE = datetime(2026, 3, 1, 12, 0, 0, tzinfo=UTC)  # "Sun, 01 Mar 2026 12:00:00 GMT"


def _retry(
    value: str, *, date: datetime | None = RESPONSE_DATE, cap: float = 3600.0
) -> float | None:
    # The local clock runs 1000 s ahead of the server's Date, to show it is not used when Date
    # is present (REFERENCES §2.2 [practice]: measure from Date to avoid clock skew).
    received = RESPONSE_DATE + timedelta(seconds=1000)
    return parse_retry_after(value, response_date=date, received_at=received, cap=cap)


def test_delay_seconds() -> None:
    assert _retry("120") == 120.0  # RFC 9110 §10.2.3: delay-seconds
    assert _retry("0") == 0.0
    assert _retry("007") == 7.0  # 1*DIGIT allows leading zeros
    assert _retry(" 120 ") == 120.0  # RFC 9110 §5.5: surrounding OWS is not part of the value


@pytest.mark.parametrize("value", ["abc", "-5", "-1", "1.5", "", " ", "+5", "1e3", "١٢٠", "12 0"])
def test_invalid_values_are_ignored(value: str) -> None:
    # RFC 9110 §10.2.3: delay-seconds = 1*DIGIT (ASCII digits, RFC 5234 B.1).
    assert _retry(value) is None


def test_date_form_is_measured_from_the_response_date() -> None:
    # 90 s after the Date (12:00:00) is 12:01:30; the receive time (T+1000) is ignored.
    assert _retry("Sun, 01 Mar 2026 12:01:30 GMT") == 90.0


def test_date_form_without_response_date_uses_the_receive_time() -> None:
    # Receive time is 12:16:40 (T+1000 s); 12:17:10 is 30 s later.
    assert _retry("Sun, 01 Mar 2026 12:17:10 GMT", date=None) == 30.0


def test_date_form_accepts_the_obsolete_forms() -> None:
    # RFC 9110 §5.6.7: Retry-After's HTTP-date may come in either obsolete form too.
    assert _retry("Sunday, 01-Mar-26 12:01:30 GMT") == 90.0
    assert _retry("Sun Mar  1 12:01:30 2026") == 90.0


def test_past_date_means_no_wait() -> None:
    # REFERENCES §2.2 [practice]: a date in the past means 0.
    assert _retry("Sun, 01 Mar 2026 11:59:00 GMT") == 0.0
    assert _retry("Sun, 06 Nov 1994 08:49:37 GMT") == 0.0


def test_invalid_date_is_ignored() -> None:
    assert _retry("Sun, 01 Mar 2026 12:01:30 EST") is None  # only GMT is an HTTP-date zone
    assert _retry("tomorrow") is None


def test_huge_values_are_capped() -> None:
    # REFERENCES §2.2 [practice]: cap the delay.
    assert _retry("99999999999999999999999999", cap=3600.0) == 3600.0
    assert _retry("3601", cap=3600.0) == 3600.0
    assert _retry("3599", cap=3600.0) == 3599.0
    assert _retry("Fri, 01 Mar 2030 12:00:00 GMT", cap=600.0) == 600.0


def test_huge_value_with_infinite_cap_does_not_crash() -> None:
    value = "9" * 400  # float() of this integer overflows
    assert _retry(value, cap=float("inf")) == float("inf")
