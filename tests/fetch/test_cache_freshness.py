"""Tests for storability (RFC 9111 §3), freshness lifetime (§4.2.1-§4.2.2) and age (§4.2.3).

Sources: RFC 9111 (HTTP Caching), RFC 9110 (HTTP Semantics). Each check names its section;
expected numbers are worked out by hand in the comments. Time is injected, never slept.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from harvester.fetch.cache_entry import StoredResponse
from harvester.fetch.cache_freshness import current_age, freshness_lifetime, is_storable

URL = "https://handball.example.org/league/2025/table"
T = datetime(2026, 3, 1, 12, 0, 0, tzinfo=UTC)
T_HTTP = "Sun, 01 Mar 2026 12:00:00 GMT"  # T as an IMF-fixdate (1 March 2026 was a Sunday)


def at(seconds: float) -> datetime:
    """T plus some seconds."""
    return T + timedelta(seconds=seconds)


def response(
    *headers: tuple[str, str], status: int = 200, sent: float = 0.0, received: float = 0.0
) -> StoredResponse:
    """Build a stored response received at T+``received`` for a request sent at T+``sent``."""
    return StoredResponse(
        url=URL,
        status=status,
        headers=headers,
        body=b"<table>v1</table>",
        request_headers=(),
        request_time=at(sent),
        response_time=at(received),
    )


# -- storing (RFC 9111 §3) --------------------------------------------------------------------


@pytest.mark.parametrize(
    "status", [200, 203, 204, 300, 301, 308, 404, 405, 410, 414, 501]
)  # RFC 9110 §15.1 heuristically cacheable (206 aside, see below)
def test_heuristically_cacheable_statuses_are_storable_bare(status: int) -> None:
    assert is_storable("GET", status, {})  # RFC 9111 §3, last bullet


@pytest.mark.parametrize("status", [201, 302, 303, 307, 400, 403, 500, 503])
def test_other_statuses_need_explicit_freshness(status: int) -> None:
    assert not is_storable("GET", status, {})  # RFC 9111 §3: none of the listed conditions hold
    assert is_storable("GET", status, {"Cache-Control": "max-age=60"})  # §3 max-age
    assert is_storable("GET", status, {"Expires": T_HTTP})  # §3 Expires header field
    assert is_storable("GET", status, {"Cache-Control": "public"})  # §3 public


def test_private_is_storable_in_a_private_cache() -> None:
    # RFC 9111 §3 and §5.2.2.7: only shared caches MUST NOT store "private".
    assert is_storable("GET", 302, {"Cache-Control": "private"})


def test_even_an_invalid_expires_makes_a_response_storable() -> None:
    # RFC 9111 §3: "contains ... an Expires header field" (its value is judged later, §5.3).
    assert is_storable("GET", 302, {"Expires": "0"})


def test_must_understand_overrides_no_store_for_known_statuses() -> None:
    # RFC 9111 §5.2.2.3: a cache that implements the status SHOULD ignore no-store; one that
    # does not understand the status (299 has no defined caching rules) MUST NOT store.
    assert is_storable("GET", 200, {"Cache-Control": "no-store, must-understand"})
    assert not is_storable("GET", 299, {"Cache-Control": "no-store, must-understand, max-age=9"})


@pytest.mark.parametrize(
    ("method", "status"),
    [
        ("GET", 101),  # RFC 9111 §3: the status must be final
        ("GET", 206),  # RFC 9111 §3.3: no Range support here, so no partial content
        ("GET", 304),  # RFC 9111 §4.3.4: a 304 only updates stored responses
        ("POST", 200),  # RFC 9111 §3: the method must be understood (this cache: GET, HEAD)
    ],
)
def test_not_storable(method: str, status: int) -> None:
    assert not is_storable(method, status, {"Cache-Control": "max-age=60"})


def test_header_pairs_are_accepted_as_well_as_mappings() -> None:
    assert not is_storable("GET", 200, [("cache-control", "no-store")])
    assert is_storable("head", 200, [("Content-Type", "text/html")])


# -- freshness lifetime (RFC 9111 §4.2.1, §4.2.2, §5.3) ---------------------------------------


def test_private_cache_ignores_s_maxage() -> None:
    # RFC 9111 §4.2.1 / §5.2.2.10: s-maxage is for shared caches; max-age=600 applies.
    stored = response(("Date", T_HTTP), ("Cache-Control", "s-maxage=0, max-age=600"))
    assert freshness_lifetime(stored) == 600.0


def test_quoted_max_age_is_accepted() -> None:
    # RFC 9111 §5.2: recipients ought to accept the quoted-string form too.
    assert freshness_lifetime(response(("Cache-Control", 'max-age="60"'))) == 60.0


@pytest.mark.parametrize(
    "cache_control",
    [
        "max-age=60, max-age=120",  # RFC 9111 §4.2.1: a duplicate may be treated as stale
        "max-age=60.5",  # §4.2.1: invalid freshness information is treated as stale
        "max-age=-1",
        "max-age=",
        "max-age",
    ],
)
def test_duplicate_or_invalid_max_age_is_stale(cache_control: str) -> None:
    # An Expires an hour ahead must not rescue it: max-age being present hides Expires (§5.3).
    stored = response(
        ("Date", T_HTTP),
        ("Cache-Control", cache_control),
        ("Expires", "Sun, 01 Mar 2026 13:00:00 GMT"),
    )
    assert freshness_lifetime(stored) == 0.0


def test_max_age_on_two_field_lines_is_a_duplicate() -> None:
    # RFC 9110 §5.3: repeated field lines combine into one list, so this is a duplicate.
    stored = response(("Cache-Control", "max-age=60"), ("Cache-Control", "max-age=120"))
    assert freshness_lifetime(stored) == 0.0


def test_max_age_overflow_is_clamped() -> None:
    # RFC 9111 §1.2.2: a delta-seconds too large to hold is taken as 2147483648.
    stored = response(("Cache-Control", "max-age=99999999999999999999"))
    assert freshness_lifetime(stored) == 2147483648.0


def test_expires_minus_date() -> None:
    # RFC 9111 §4.2.1: 13:00:00 - 12:00:00 = 3600 s.
    stored = response(("Date", T_HTTP), ("Expires", "Sun, 01 Mar 2026 13:00:00 GMT"))
    assert freshness_lifetime(stored) == 3600.0


def test_expires_without_date_uses_the_receive_time() -> None:
    # RFC 9111 §4.2.1: received at T+10, expires at T+3600, so 3590 s.
    stored = response(("Expires", "Sun, 01 Mar 2026 13:00:00 GMT"), received=10)
    assert freshness_lifetime(stored) == 3590.0


def test_expires_in_another_zone_is_invalid() -> None:
    # RFC 9111 §4.2: a zone other than GMT is invalid for calculating expiration (even though
    # 13:00 EST would be 18:00 GMT, well after Date).
    stored = response(("Date", T_HTTP), ("Expires", "Sun, 01 Mar 2026 13:00:00 EST"))
    assert freshness_lifetime(stored) == 0.0


@pytest.mark.parametrize(
    ("last_modified", "expected"),
    [
        ("Thu, 19 Feb 2026 12:00:00 GMT", 86400.0),  # 10 days: 10% of 864000 s = 1 day
        ("Tue, 24 Feb 2026 12:00:00 GMT", 43200.0),  # 5 days: 10% of 432000 s = 12 h
        ("Fri, 30 Jan 2026 12:00:00 GMT", 86400.0),  # 30 days: 259200 s, capped at 24 h
        ("Sun, 01 Mar 2026 11:00:00 GMT", 360.0),  # 1 hour: 10% of 3600 s
        ("Mon, 02 Mar 2026 12:00:00 GMT", 0.0),  # after Date: no heuristic
        ("yesterday", 0.0),  # not a date
    ],
)
def test_heuristic_freshness(last_modified: str, expected: float) -> None:
    # RFC 9111 §4.2.2 "typical setting of this fraction might be 10%"; the 24 h cap is practice.
    stored = response(("Date", T_HTTP), ("Last-Modified", last_modified))
    assert freshness_lifetime(stored) == expected


def test_no_heuristic_without_last_modified() -> None:
    assert freshness_lifetime(response(("Date", T_HTTP))) == 0.0  # RFC 9111 §4.2.2


def test_302_is_never_heuristically_fresh() -> None:
    # RFC 9110 §15.4.3: 302 is not heuristically cacheable, so §4.2.2 does not apply.
    last = ("Last-Modified", "Thu, 19 Feb 2026 12:00:00 GMT")
    assert freshness_lifetime(response(("Date", T_HTTP), last, status=302)) == 0.0
    assert not is_storable("GET", 302, [("Date", T_HTTP), last])
    # RFC 9111 §4.2.2: a "public" response may be given heuristic freshness: 10% of 10 days.
    public = response(("Date", T_HTTP), last, ("Cache-Control", "public"), status=302)
    assert freshness_lifetime(public) == 86400.0


# -- age (RFC 9111 §4.2.3, §5.1) --------------------------------------------------------------


def test_age_without_age_header() -> None:
    # age_value = 0: corrected_age_value = 0 + 2 = 2; initial = max(3, 2) = 3; 3 + 10 = 13.
    stored = response(("Date", T_HTTP), sent=1, received=3)
    assert current_age(stored, at(13)) == 13.0


def test_age_uses_the_first_member_of_a_list() -> None:
    # RFC 9111 §5.1: use the first of "10, 50": same as the worked example, 22.
    stored = response(("Date", T_HTTP), ("Age", "10, 50"), sent=1, received=3)
    assert current_age(stored, at(13)) == 22.0


@pytest.mark.parametrize("age", ["-5", "abc", "1.5", ""])
def test_invalid_age_is_ignored(age: str) -> None:
    # RFC 9111 §5.1: not a non-negative integer, so age_value = 0 and the result is 13.
    stored = response(("Date", T_HTTP), ("Age", age), sent=1, received=3)
    assert current_age(stored, at(13)) == 13.0


def test_age_without_date_uses_the_receive_time() -> None:
    # RFC 9110 §6.6.1: date_value = response_time = T+3, apparent_age = 0;
    # corrected_age_value = 10 + 2 = 12; 12 + 10 = 22.
    stored = response(("Age", "10"), sent=1, received=3)
    assert current_age(stored, at(13)) == 22.0


def test_clock_skew_cannot_make_the_apparent_age_negative() -> None:
    # Date 60 s after the receive time: apparent_age = max(0, -60) = 0; delay 0; resident 5.
    stored = response(("Date", "Sun, 01 Mar 2026 12:01:00 GMT"))
    assert current_age(stored, at(5)) == 5.0
