"""Which stored variants a request may reuse: Vary matching in the HTTP cache (RFC 9111 §4.1).

A stored response lists in Vary the request fields that chose it; a later request may reuse it
only when those fields match the original request's, after normalising whitespace (and case,
where the field is case-insensitive). A Vary of ``*`` never matches.
"""

from __future__ import annotations

from harvester.fetch.cache_entry import Headers, StoredResponse, field_value, field_values

__all__ = ["variant_identity", "vary_matches", "vary_names"]

# Fields whose values are case-insensitive (media types, charsets, codings, language tags).
_CASELESS_FIELDS = frozenset({"accept", "accept-charset", "accept-encoding", "accept-language"})


def vary_names(response: StoredResponse) -> tuple[str, ...]:
    """Return the lower-cased field names listed in the response's Vary ("*" kept)."""
    listed = (
        name.strip().lower() for name in (field_value(response.headers, "vary") or "").split(",")
    )
    return tuple(name for name in listed if name)


def _normalised(name: str, headers: Headers) -> str | None:
    """Return a request field's value normalised for Vary matching (§4.1), None when absent."""
    values = field_values(headers, name)
    if not values:
        return None
    # Merge repeated lines, trim each list member and squeeze runs of whitespace.
    members = (" ".join(member.split()) for member in ",".join(values).split(","))
    text = ",".join(member for member in members if member)
    return text.lower() if name in _CASELESS_FIELDS else text


def _vary_key(response: StoredResponse, request: Headers) -> tuple[str | None, ...]:
    """Return the values of ``request`` that the response's Vary selects."""
    return tuple(_normalised(name, request) for name in vary_names(response))


def vary_matches(response: StoredResponse, request: Headers) -> bool:
    """Say whether ``request`` may reuse ``response`` under its Vary (RFC 9111 §4.1)."""
    if "*" in vary_names(response):
        return False  # §4.1: "*" always fails to match
    return _vary_key(response, request) == _vary_key(response, response.request_headers)


def variant_identity(response: StoredResponse) -> tuple[tuple[str, ...], tuple[str | None, ...]]:
    """Return what tells one stored variant from another: Vary names and selected values."""
    return vary_names(response), _vary_key(response, response.request_headers)
