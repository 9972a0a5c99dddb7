"""Tests for the private RFC 9111 cache on disk: store, lookup and freshen, rules applied.

The rules alone, called directly, are tested in test_cache_freshness.py, test_cache_vary.py,
test_cache_validation.py and test_cache_entry.py; here they are seen through ``HttpCache``.

Sources: RFC 9111 (HTTP Caching), RFC 9110 (HTTP Semantics), RFC 6585 §4 (429). Each check names
its section; expected numbers are worked out by hand in the comments. Time is injected, never slept.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import replace
from datetime import UTC, datetime, timedelta
from pathlib import Path

import diskcache
import pytest

from harvester.errors import FetchError
from harvester.fetch.cache import (
    HttpCache,
    StoredResponse,
    current_age,
    forbids_stale,
    freshness_lifetime,
    is_storable,
)

URL = "https://handball.example.org/league/2025/table"
T = datetime(2026, 3, 1, 12, 0, 0, tzinfo=UTC)
T_HTTP = "Sun, 01 Mar 2026 12:00:00 GMT"  # T as an IMF-fixdate (1 March 2026 was a Sunday)


def at(seconds: float) -> datetime:
    """T plus some seconds."""
    return T + timedelta(seconds=seconds)


def response(
    *headers: tuple[str, str],
    status: int = 200,
    body: bytes = b"<table>v1</table>",
    request: tuple[tuple[str, str], ...] = (),
    sent: float = 0.0,
    received: float = 0.0,
    immutable: bool = False,
    url: str = URL,
) -> StoredResponse:
    """Build a stored response received at T+``received`` for a request sent at T+``sent``."""
    return StoredResponse(
        url=url,
        status=status,
        headers=headers,
        body=body,
        request_headers=request,
        request_time=at(sent),
        response_time=at(received),
        immutable=immutable,
    )


@pytest.fixture
def cache(tmp_path: Path) -> Iterator[HttpCache]:
    opened = HttpCache(tmp_path / "http")
    yield opened
    opened.close()


# -- storing (RFC 9111 §3) --------------------------------------------------------------------


def test_429_is_never_stored(cache: HttpCache) -> None:
    # RFC 6585 §4: responses with 429 MUST NOT be stored by a cache, even with max-age=600.
    assert not is_storable("GET", 429, {"Cache-Control": "max-age=600"})
    assert not cache.store("GET", response(("Cache-Control", "max-age=600"), status=429))
    assert cache.lookup("GET", URL, {}, at(1)).state == "miss"


def test_no_store_is_never_written(cache: HttpCache) -> None:
    # RFC 9111 §5.2.2.5: store nothing; header names and directives are case-insensitive (§5.2).
    stored = response(("CACHE-CONTROL", "max-age=600, No-Store"))
    assert not cache.store("GET", stored)
    assert cache.lookup_any("GET", URL, {}) is None


def test_request_no_store_is_never_written(cache: HttpCache) -> None:
    # RFC 9111 §5.2.1.5: a request no-store forbids storing the response to it.
    stored = response(("Cache-Control", "max-age=600"), request=(("Cache-Control", "no-store"),))
    assert not cache.store("GET", stored)
    assert cache.lookup_any("GET", URL, {"Cache-Control": "no-store"}) is None


# -- freshness lifetime (RFC 9111 §4.2.1, §4.2.2, §5.3) ---------------------------------------


def test_max_age_beats_a_past_expires(cache: HttpCache) -> None:
    # RFC 9111 §5.3: with max-age present, Expires MUST be ignored. Lifetime 60 s.
    stored = response(
        ("Date", T_HTTP),
        ("Cache-Control", "max-age=60"),
        ("Expires", "Sat, 01 Mar 2025 12:00:00 GMT"),
    )
    assert freshness_lifetime(stored) == 60.0
    assert cache.store("GET", stored)
    # Date = request = response = T, so current_age = now - T (§4.2.3); fresh while 60 > age (§4.2).
    assert cache.lookup("GET", URL, {}, at(59)).state == "fresh"
    assert cache.lookup("GET", URL, {}, at(60)).state == "stale"


def test_expires_zero_is_stale(cache: HttpCache) -> None:
    # RFC 9111 §5.3: an invalid Expires, including "0", means already expired.
    stored = response(("Date", T_HTTP), ("Expires", "0"))
    assert freshness_lifetime(stored) == 0.0
    assert cache.store("GET", stored)
    assert cache.lookup("GET", URL, {}, T).state == "stale"


def test_past_expires_is_stale(cache: HttpCache) -> None:
    # RFC 9111 §4.2: expired a day before Date, so never fresh.
    stored = response(("Date", T_HTTP), ("Expires", "Sat, 28 Feb 2026 12:00:00 GMT"))
    assert freshness_lifetime(stored) == 0.0
    cache.store("GET", stored)
    assert cache.lookup("GET", URL, {}, T).state == "stale"


def test_heuristic_fraction_and_cap_are_settings(tmp_path: Path) -> None:
    # 10 days = 864000 s; 20% = 172800 s, under a 3-day cap; the 1-day default cap is replaced.
    stored = response(("Date", T_HTTP), ("Last-Modified", "Thu, 19 Feb 2026 12:00:00 GMT"))
    assert freshness_lifetime(stored, heuristic_fraction=0.2, heuristic_cap=259200.0) == 172800.0
    roomy = HttpCache(tmp_path / "roomy", heuristic_fraction=0.2, heuristic_cap=259200.0)
    try:
        roomy.store("GET", stored)
        assert roomy.lookup("GET", URL, {}, at(172799)).state == "fresh"
        assert roomy.lookup("GET", URL, {}, at(172800)).state == "stale"
    finally:
        roomy.close()


def test_immutable_entries_are_always_fresh(cache: HttpCache) -> None:
    # Harvester rule (a recipe marks past seasons as never changing), not an RFC rule.
    stored = response(("Date", T_HTTP), ("Cache-Control", "max-age=0, no-cache"), immutable=True)
    assert freshness_lifetime(stored) == math.inf
    assert not forbids_stale(stored)
    assert cache.store("GET", stored)
    found = cache.lookup("GET", URL, {}, at(10 * 365 * 86400))
    assert found.state == "fresh"
    assert found.response is not None and found.response.immutable


# -- age (RFC 9111 §4.2.3, §5.1) --------------------------------------------------------------


def test_age_calculation_worked_example(cache: HttpCache) -> None:
    # Date = T, request at T+1, response at T+3, Age: 10, now = T+13 (REFERENCES §3.8):
    # apparent_age = max(0, 3 - 0) = 3; response_delay = 3 - 1 = 2; corrected_age_value = 12;
    # corrected_initial_age = max(3, 12) = 12; resident_time = 13 - 3 = 10; current_age = 22.
    stored = response(
        ("Date", T_HTTP), ("Age", "10"), ("Cache-Control", "max-age=30"), sent=1, received=3
    )
    assert current_age(stored, at(13)) == 22.0
    cache.store("GET", stored)
    found = cache.lookup("GET", URL, {}, at(13))
    assert found.age == 22.0
    assert found.state == "fresh"  # 30 > 22
    assert cache.lookup("GET", URL, {}, at(21)).state == "stale"  # age 12 + 18 = 30, not < 30


# -- Vary (RFC 9111 §4.1, RFC 9110 §12.5.5) ---------------------------------------------------


def _varied(language: str | None, body: bytes, *, date: str = T_HTTP) -> StoredResponse:
    request = (("Accept-Language", language),) if language is not None else ()
    return response(
        ("Date", date),
        ("Cache-Control", "max-age=600"),
        ("Vary", "Accept-Language"),
        body=body,
        request=request,
    )


def test_changed_accept_language_misses(cache: HttpCache) -> None:
    # RFC 9111 §4.1: every field named in Vary must match the original request.
    cache.store("GET", _varied("en", b"english"))
    assert cache.lookup("GET", URL, {"Accept-Language": "de"}, at(1)).state == "miss"
    found = cache.lookup("GET", URL, {"Accept-Language": "en"}, at(1))
    assert found.state == "fresh" and found.response is not None
    assert found.response.body == b"english"


def test_variants_live_side_by_side(cache: HttpCache) -> None:
    # RFC 9111 §4.1: the Vary-selected request values tell the stored variants apart.
    cache.store("GET", _varied("en", b"english"))
    cache.store("GET", _varied("de", b"deutsch"))
    for language, body in (("en", b"english"), ("de", b"deutsch")):
        found = cache.lookup_any("GET", URL, {"accept-language": language})
        assert found is not None and found.body == body


def test_vary_matching_normalises_whitespace_and_case(cache: HttpCache) -> None:
    # RFC 9111 §4.1: normalise whitespace and case where the field is case-insensitive;
    # language tags are case-insensitive (RFC 5646 §2.1.1).
    cache.store("GET", _varied("en-GB,  de;q=0.5", b"english"))
    assert cache.lookup("GET", URL, {"Accept-Language": "EN-gb , de;q=0.5"}, at(1)).state == "fresh"


def test_vary_field_absent_from_both_requests_matches(cache: HttpCache) -> None:
    # RFC 9111 §4.1: a field absent from both requests matches; absent from one does not.
    cache.store("GET", _varied(None, b"plain"))
    assert cache.lookup("GET", URL, {}, at(1)).state == "fresh"
    assert cache.lookup("GET", URL, {"Accept-Language": "en"}, at(1)).state == "miss"


def test_vary_star_always_misses(cache: HttpCache) -> None:
    # RFC 9111 §4.1: a Vary containing "*" always fails to match. It is still storable (§3).
    stored = response(("Cache-Control", "max-age=600"), ("Vary", "Accept-Language, *"))
    assert cache.store("GET", stored)
    assert cache.lookup("GET", URL, {}, at(1)).state == "miss"
    assert cache.lookup_any("GET", URL, {}) is None


def _two_matching_variants(cache: HttpCache) -> None:
    """Store A (Vary: Accept-Language, Date T) then B (Vary: Accept-Encoding, Date T-100).

    A request with Accept-Language: en and Accept-Encoding: gzip matches both; B is stored last
    but carries the older Date.
    """
    a = response(
        ("Date", T_HTTP),
        ("Cache-Control", "max-age=600"),
        ("Vary", "Accept-Language"),
        ("ETag", 'W/"same"'),
        body=b"A",
        request=(("Accept-Language", "en"),),
    )
    b = response(
        ("Date", "Sun, 01 Mar 2026 11:58:20 GMT"),
        ("Cache-Control", "max-age=600"),
        ("Vary", "Accept-Encoding"),
        ("ETag", 'W/"same"'),
        body=b"B",
        request=(("Accept-Language", "de"), ("Accept-Encoding", "gzip")),
        received=5,
    )
    assert cache.store("GET", a) and cache.store("GET", b)


BOTH = {"Accept-Language": "en", "Accept-Encoding": "gzip"}
ONLY_A = {"Accept-Language": "en", "Accept-Encoding": "br"}
ONLY_B = {"Accept-Language": "fr", "Accept-Encoding": "gzip"}


def test_several_matches_pick_the_most_recent_date(cache: HttpCache) -> None:
    # RFC 9111 §4.1: with several matches, use the most recent by Date, not by storage order.
    _two_matching_variants(cache)
    found = cache.lookup("GET", URL, BOTH, at(10))
    assert found.response is not None and found.response.body == b"A"
    assert (cache.lookup_any("GET", URL, ONLY_B) or response()).body == b"B"


# -- request and response directives (RFC 9111 §5.2) ------------------------------------------


@pytest.mark.parametrize("directive", ["no-cache", 'no-cache="Set-Cookie"', "NO-CACHE"])
def test_response_no_cache_is_always_revalidated(cache: HttpCache, directive: str) -> None:
    # RFC 9111 §5.2.2.4: stored, but never reused without validation; the field-name form is
    # treated as the plain form (allowed by §5.2.2.4).
    stored = response(("Cache-Control", f"max-age=600, {directive}"), ("ETag", '"v1"'))
    assert cache.store("GET", stored)
    found = cache.lookup("GET", URL, {}, T)
    assert found.state == "stale"
    assert found.conditional_headers == {"If-None-Match": '"v1"'}
    assert forbids_stale(stored)


def test_request_no_cache_forces_validation(cache: HttpCache) -> None:
    # RFC 9111 §5.2.1.4; the harvester also applies it to immutable entries (caller's choice).
    cache.store("GET", response(("Cache-Control", "max-age=600")))
    assert cache.lookup("GET", URL, {"Cache-Control": "no-cache"}, T).state == "stale"
    cache.store("GET", response(("Cache-Control", "max-age=600"), immutable=True, url=URL + "?x"))
    assert cache.lookup("GET", URL + "?x", {"Cache-Control": "no-cache"}, T).state == "stale"


def test_must_revalidate_once_stale(cache: HttpCache) -> None:
    # RFC 9111 §5.2.2.2: fresh use is fine; once stale it must be validated, even offline.
    stored = response(("Date", T_HTTP), ("Cache-Control", "max-age=60, must-revalidate"))
    cache.store("GET", stored)
    assert cache.lookup("GET", URL, {}, at(30)).state == "fresh"
    assert cache.lookup("GET", URL, {}, at(61)).state == "stale"
    assert forbids_stale(stored)
    assert not forbids_stale(response(("Cache-Control", "max-age=60")))


# -- conditional requests (RFC 9111 §4.3.1) ---------------------------------------------------

LAST_MODIFIED = "Thu, 19 Feb 2026 12:00:00 GMT"


def test_revalidation_sends_both_validators(cache: HttpCache) -> None:
    # RFC 9111 §4.3.1: MUST send the stored entity-tag in If-None-Match; SHOULD send the stored
    # Last-Modified in If-Modified-Since when validating one stored response.
    cache.store(
        "GET",
        response(
            ("Date", T_HTTP),
            ("Cache-Control", "max-age=60"),
            ("ETag", '"v1"'),
            ("Last-Modified", LAST_MODIFIED),
        ),
    )
    found = cache.lookup("GET", URL, {}, at(61))
    assert found.state == "stale"
    assert found.conditional_headers == {
        "If-None-Match": '"v1"',
        "If-Modified-Since": LAST_MODIFIED,
    }


def test_weak_etag_is_echoed_unchanged(cache: HttpCache) -> None:
    # RFC 9110 §13.1.2: If-None-Match uses weak comparison, so the W/ tag is sent as stored.
    cache.store("GET", response(("Cache-Control", "max-age=0"), ("etag", 'W/"v1"')))
    assert cache.lookup("GET", URL, {}, T).conditional_headers == {"If-None-Match": 'W/"v1"'}


def test_no_validators_means_no_conditional_headers(cache: HttpCache) -> None:
    cache.store("GET", response(("Cache-Control", "max-age=0")))
    found = cache.lookup("GET", URL, {}, T)
    assert found.state == "stale" and found.conditional_headers == {}


def test_fresh_and_miss_carry_no_conditions(cache: HttpCache) -> None:
    miss = cache.lookup("GET", URL, {}, T)
    assert (miss.state, miss.response, miss.conditional_headers, miss.age) == (
        "miss",
        None,
        {},
        None,
    )
    cache.store("GET", response(("Cache-Control", "max-age=60"), ("ETag", '"v1"')))
    assert cache.lookup("GET", URL, {}, T).conditional_headers == {}


# -- 304 Not Modified (RFC 9111 §4.3.4, §3.2) -------------------------------------------------


def _original() -> StoredResponse:
    return response(
        ("Date", T_HTTP),
        ("Cache-Control", "max-age=60"),
        ("ETag", '"v1"'),
        ("Content-Length", "17"),
        ("Content-Type", "text/html"),
    )


def _not_modified(*headers: tuple[str, str]) -> StoredResponse:
    # The 304 arrives at T+120 for a request sent at T+119.
    return response(*headers, status=304, body=b"", sent=119, received=120)


def test_304_refreshes_headers_but_keeps_body_and_length(cache: HttpCache) -> None:
    cache.store("GET", _original())
    assert cache.lookup("GET", URL, {}, at(125)).state == "stale"  # age 125 > 60
    fresh_date = "Sun, 01 Mar 2026 12:02:00 GMT"  # T+120
    updated = cache.freshen(
        "GET",
        URL,
        {},
        _not_modified(
            ("Date", fresh_date),
            ("Cache-Control", "max-age=300"),
            ("ETag", '"v1"'),
            ("Content-Length", "0"),
        ),
    )
    assert updated is not None
    # RFC 9111 §3.2: the 304's fields replace the stored ones, except Content-Length; body kept.
    fields = {name.lower(): value for name, value in updated.headers}
    assert fields["cache-control"] == "max-age=300"
    assert fields["date"] == fresh_date
    assert fields["content-length"] == "17"
    assert fields["content-type"] == "text/html"
    assert updated.body == b"<table>v1</table>"
    # Age restarts from the 304: apparent 0, delay 1, resident 5, so 6 < 300 (§4.2.3).
    found = cache.lookup("GET", URL, {}, at(125))
    assert found.state == "fresh" and found.age == 6.0
    assert found.response is not None and found.response.body == b"<table>v1</table>"


def test_304_never_copies_connection_fields(cache: HttpCache) -> None:
    # RFC 9111 §3.1/§3.2: connection-specific fields are not stored from a 304.
    cache.store("GET", _original())
    updated = cache.freshen(
        "GET",
        URL,
        {},
        _not_modified(
            ("ETag", '"v1"'),
            ("Connection", "close, X-Hop"),
            ("X-Hop", "1"),
            ("Keep-Alive", "timeout=5"),
        ),
    )
    assert updated is not None
    names = {name.lower() for name, _ in updated.headers}
    assert names.isdisjoint({"connection", "x-hop", "keep-alive"})


def test_304_with_a_different_strong_etag_updates_nothing(cache: HttpCache) -> None:
    # RFC 9111 §4.3.4: no stored response has the strong validator "v2", so none is updated.
    cache.store("GET", _original())
    result = cache.freshen(
        "GET", URL, {}, _not_modified(("ETag", '"v2"'), ("Cache-Control", "max-age=300"))
    )
    assert result is None
    assert cache.lookup_any("GET", URL, {}) == _original()


def test_strong_304_with_two_candidates_updates_both(cache: HttpCache) -> None:
    # RFC 9111 §4.3.4 first rule with two stored responses that both carry "v1".
    _two_matching_variants(cache)
    for key in (ONLY_A, ONLY_B):  # make both tags strong "v1" by replacing each variant
        old = cache.lookup_any("GET", URL, key)
        assert old is not None
        strong = tuple((n, '"v1"') if n == "ETag" else (n, v) for n, v in old.headers)
        cache.store("GET", replace(old, headers=strong))
    cache.freshen("GET", URL, BOTH, _not_modified(("ETag", '"v1"'), ("X-Checked", "yes")))
    for key in (ONLY_A, ONLY_B):
        found = cache.lookup_any("GET", URL, key)
        assert found is not None and ("X-Checked", "yes") in found.headers


def test_weak_304_updates_only_the_most_recent_match(cache: HttpCache) -> None:
    # RFC 9111 §4.3.4 second rule: A (Date T) is more recent than B (Date T-100).
    _two_matching_variants(cache)
    updated = cache.freshen(
        "GET", URL, BOTH, _not_modified(("ETag", 'W/"same"'), ("X-Checked", "yes"))
    )
    assert updated is not None and updated.body == b"A"
    a, b = cache.lookup_any("GET", URL, ONLY_A), cache.lookup_any("GET", URL, ONLY_B)
    assert a is not None and ("X-Checked", "yes") in a.headers
    assert b is not None and all(name != "X-Checked" for name, _ in b.headers)


def test_weak_304_matches_a_strong_stored_tag(cache: HttpCache) -> None:
    # RFC 9110 §8.8.3.2: W/"v1" and "v1" match under weak comparison.
    cache.store("GET", _original())
    assert cache.freshen("GET", URL, {}, _not_modified(("ETag", 'W/"v1"'))) is not None


def test_304_with_last_modified_only(cache: HttpCache) -> None:
    # RFC 9111 §4.3.4 second rule: Last-Modified is a (weak) validator (RFC 9110 §8.8.2.2).
    cache.store("GET", response(("Cache-Control", "max-age=0"), ("Last-Modified", LAST_MODIFIED)))
    assert (
        cache.freshen(
            "GET", URL, {}, _not_modified(("Last-Modified", "Fri, 20 Feb 2026 12:00:00 GMT"))
        )
        is None
    )
    assert (
        cache.freshen("GET", URL, {}, _not_modified(("Last-Modified", LAST_MODIFIED))) is not None
    )


def test_304_without_validators(cache: HttpCache) -> None:
    # RFC 9111 §4.3.4 third rule: only a single stored response without a validator is updated.
    cache.store("GET", _original())  # has ETag "v1"
    assert cache.freshen("GET", URL, {}, _not_modified(("Cache-Control", "max-age=9"))) is None
    cache.store("GET", response(("Cache-Control", "max-age=0")))  # replaces it, no validator
    assert cache.freshen("GET", URL, {}, _not_modified(("Cache-Control", "max-age=9"))) is not None


def test_304_for_a_non_matching_variant_updates_nothing(cache: HttpCache) -> None:
    # RFC 9111 §4.3.4: the initial set is what could have been chosen for the request (§4).
    cache.store("GET", _varied("en", b"english"))
    assert cache.freshen("GET", URL, {"Accept-Language": "de"}, _not_modified()) is None


def test_full_200_during_validation_replaces_the_entry(cache: HttpCache) -> None:
    # RFC 9111 §4.3.3: a full response replaces the stored one.
    cache.store("GET", _original())
    assert cache.lookup("GET", URL, {}, at(125)).state == "stale"
    newer = response(
        ("Date", "Sun, 01 Mar 2026 12:02:00 GMT"),
        ("Cache-Control", "max-age=60"),
        ("ETag", '"v2"'),
        body=b"<table>v2</table>",
        sent=119,
        received=120,
    )
    assert cache.store("GET", newer)
    found = cache.lookup("GET", URL, {}, at(125))
    assert found.state == "fresh" and found.response == newer


# -- storage ----------------------------------------------------------------------------------


def test_lookup_any_ignores_freshness(cache: HttpCache) -> None:
    # Offline mode: a stale copy is returned; freshness does not matter here.
    stored = response(("Cache-Control", "max-age=0"), ("ETag", '"v1"'))
    cache.store("GET", stored)
    assert cache.lookup("GET", URL, {}, at(3600)).state == "stale"
    assert cache.lookup_any("GET", URL, {}) == stored
    assert cache.lookup_any("GET", URL + "/other", {}) is None


def test_entries_survive_reopening(tmp_path: Path) -> None:
    first = HttpCache(tmp_path / "http")
    stored = response(
        ("Cache-Control", "max-age=60"),
        ("ETag", '"v1"'),
        request=(("User-Agent", "HarvesterTest/0.1"),),
    )
    assert first.store("GET", stored)
    first.close()
    again = HttpCache(str(tmp_path / "http"))
    try:
        assert again.lookup_any("GET", URL, {}) == stored  # headers kept as received, names too
    finally:
        again.close()


def test_method_is_part_of_the_key(cache: HttpCache) -> None:
    # RFC 9111 §2: the cache key includes the request method.
    cache.store("GET", response(("Cache-Control", "max-age=60")))
    assert cache.lookup("HEAD", URL, {}, T).state == "miss"
    assert cache.lookup("get", URL, {}, T).state == "fresh"


def test_unusable_directory_is_a_fetch_error(tmp_path: Path) -> None:
    blocker = tmp_path / "a-file"
    blocker.write_text("not a directory")
    with pytest.raises(FetchError, match="a-file"):
        HttpCache(blocker)


def test_restoring_a_vary_star_response_does_not_pile_up(tmp_path: Path) -> None:
    # RFC 9111 §4.1: a "*" variant can never be selected, so storing it again must replace the
    # old copy rather than add one. Counted in the raw diskcache entry (storage detail).
    cache = HttpCache(tmp_path / "http")
    try:
        for _ in range(3):
            assert cache.store("GET", response(("Cache-Control", "max-age=60"), ("Vary", "*")))
    finally:
        cache.close()
    with diskcache.Cache(str(tmp_path / "http")) as raw:
        assert len(raw[f"GET {URL}"]) == 1
