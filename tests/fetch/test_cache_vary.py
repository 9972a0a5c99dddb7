"""Tests for Vary matching (RFC 9111 §4.1): which stored variant a request may reuse.

Expected results follow §4.1 by hand: the fields Vary names must match the original request's
after whitespace (and, for case-insensitive fields, case) is normalised; "*" never matches.
"""

from __future__ import annotations

from datetime import UTC, datetime

from harvester.fetch.cache_entry import StoredResponse
from harvester.fetch.cache_vary import variant_identity, vary_matches, vary_names

T = datetime(2026, 3, 1, 12, 0, 0, tzinfo=UTC)


def variant(vary: str, *request: tuple[str, str]) -> StoredResponse:
    """A stored 200 with ``Vary: {vary}``, chosen by a request with ``request`` fields."""
    return StoredResponse(
        "https://handball.example.org/", 200, (("Vary", vary),), b"", request, T, T
    )


def test_vary_names_are_lower_cased_and_trimmed() -> None:
    assert vary_names(variant(" Accept-Encoding ,, USER-Agent")) == (
        "accept-encoding",
        "user-agent",
    )


def test_repeated_request_lines_match_one_combined_line() -> None:
    # RFC 9110 §5.3: "gzip" and "br" on two lines are the list "gzip, br".
    stored = variant("Accept-Encoding", ("Accept-Encoding", "gzip"), ("Accept-Encoding", "br"))
    assert vary_matches(stored, [("accept-encoding", "GZIP,br")])  # codings ignore case
    assert not vary_matches(stored, [("Accept-Encoding", "br, gzip")])  # order is kept


def test_fields_outside_the_caseless_list_keep_their_case() -> None:
    stored = variant("X-Region", ("X-Region", "North"))
    assert vary_matches(stored, [("x-region", "  North ")])
    assert not vary_matches(stored, [("X-Region", "north")])


def test_fields_not_named_in_vary_do_not_matter() -> None:
    stored = variant("Accept-Language", ("Accept-Language", "en"), ("User-Agent", "one"))
    assert vary_matches(stored, [("Accept-Language", "en"), ("User-Agent", "another")])


def test_star_never_matches_even_the_same_request() -> None:
    stored = variant("*", ("Accept", "text/html"))
    assert not vary_matches(stored, [("Accept", "text/html")])


def test_identity_tells_variants_apart_by_names_and_selected_values() -> None:
    english = variant("Accept-Language", ("Accept-Language", "EN"))
    assert variant_identity(english) == (("accept-language",), ("en",))
    # Same names, same normalised value: the same variant, whatever else the request sent.
    again = variant("accept-language", ("Accept-Language", " en"), ("Accept", "*/*"))
    assert variant_identity(again) == variant_identity(english)
    assert variant_identity(variant("Accept")) == (("accept",), (None,))
