"""Tests for revalidation: validators to send (RFC 9111 §4.3.1) and what a 304 updates (§4.3.4).

The rules are called directly on stored responses built by hand; the HttpCache-level view is in
test_cache.py. Expected selections and merged fields are worked out by hand from §4.3.4 and §3.2.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

from harvester.fetch.cache_entry import StoredResponse
from harvester.fetch.cache_validation import apply_304, conditional_headers, select_for_304

T = datetime(2026, 3, 1, 12, 0, 0, tzinfo=UTC)
LAST_MODIFIED = "Thu, 19 Feb 2026 12:00:00 GMT"


def stored(*headers: tuple[str, str], body: bytes = b"", received: float = 0.0) -> StoredResponse:
    """A response with ``headers`` received at T+``received``."""
    moment = T + timedelta(seconds=received)
    return StoredResponse("https://handball.example.org/", 200, headers, body, (), moment, moment)


def test_validators_to_send_are_the_stored_ones_as_they_are() -> None:
    response = stored(("etag", 'W/"v1"'), ("Last-Modified", LAST_MODIFIED))
    assert conditional_headers(response) == {
        "If-None-Match": 'W/"v1"',
        "If-Modified-Since": LAST_MODIFIED,
    }
    assert conditional_headers(stored(("Content-Type", "text/html"))) == {}


def test_a_strong_tag_selects_every_response_with_it() -> None:
    one, two, other = stored(("ETag", '"v1"')), stored(("ETag", '"v1"')), stored(("ETag", '"v2"'))
    assert select_for_304([one, other, two], [("ETag", '"v1"')]) == [one, two]
    assert select_for_304([one, two], [("ETag", '"v3"')]) == []


def test_a_weak_validator_selects_the_most_recent_match_only() -> None:
    early = stored(("Date", "Sun, 01 Mar 2026 11:00:00 GMT"), ("ETag", '"v1"'))
    late = stored(("Date", "Sun, 01 Mar 2026 11:30:00 GMT"), ("ETag", 'W/"v1"'))
    assert select_for_304([late, early], [("ETag", 'W/"v1"')]) == [late]


def test_last_modified_matches_as_a_moment_not_as_text() -> None:
    # The same moment in the RFC 850 form (RFC 9110 §5.6.7); 19 February 2026 was a Thursday.
    response = stored(("Last-Modified", LAST_MODIFIED))
    rfc850 = [("Last-Modified", "Thursday, 19-Feb-26 12:00:00 GMT")]
    assert select_for_304([response], rfc850) == [response]
    assert select_for_304([response], [("Last-Modified", "Fri, 20 Feb 2026 12:00:00 GMT")]) == []


def test_without_validators_only_a_lone_unvalidated_response_is_selected() -> None:
    bare, tagged = stored(), stored(("ETag", '"v1"'))
    assert select_for_304([bare], []) == [bare]
    assert select_for_304([tagged], []) == []
    assert select_for_304([bare, stored()], []) == []


def test_a_304_replaces_fields_but_not_the_body_length_or_connection_fields() -> None:
    old = stored(
        ("Content-Type", "text/html"),
        ("Content-Length", "17"),
        ("cache-control", "max-age=60"),
        body=b"<table>v1</table>",
    )
    not_modified = stored(
        ("Cache-Control", "max-age=300"),
        ("Content-Length", "0"),
        ("Connection", "X-Trace"),
        ("X-Trace", "abc"),
        ("Transfer-Encoding", "chunked"),
        ("X-Checked", "yes"),
        received=120,
    )
    updated = apply_304(old, not_modified)
    # Stored fields the 304 does not replace come first, in order, then the 304's own.
    assert updated.headers == (
        ("Content-Type", "text/html"),
        ("Content-Length", "17"),
        ("Cache-Control", "max-age=300"),
        ("X-Checked", "yes"),
    )
    assert updated.body == b"<table>v1</table>"
    assert updated.response_time == T + timedelta(seconds=120)  # ages from the validation
