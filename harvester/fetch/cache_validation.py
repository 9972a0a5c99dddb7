"""Revalidating cached responses: the validators to send (RFC 9111 §4.3.1), and what a 304 updates.

A stale response is validated with its stored ETag and Last-Modified. A 304 answer selects the
stored responses it validates by the first rule of §4.3.4 that applies (strong ETag, then weak
validators, then the lone candidate without any), and its fields then replace theirs (§3.2),
except connection-specific fields and Content-Length; the stored body is kept.
"""

from __future__ import annotations

from dataclasses import replace

from harvester.fetch.cache_entry import Headers, StoredResponse, field_value, recency
from harvester.fetch.httpdate import parse_http_date

__all__ = ["apply_304", "conditional_headers", "select_for_304"]

# RFC 9111 §3.1 connection-specific fields; §3.2 never copies them (nor Content-Length) from a 304.
_HOP_FIELDS = frozenset(
    {"connection", "keep-alive", "proxy-connection", "te", "transfer-encoding", "upgrade"}
)


def conditional_headers(response: StoredResponse) -> dict[str, str]:
    """Return the validators to send when revalidating ``response`` (RFC 9111 §4.3.1)."""
    conditions: dict[str, str] = {}
    etag = field_value(response.headers, "etag")
    if etag:
        conditions["If-None-Match"] = etag  # MUST send stored entity-tags, weak ones unchanged
    last_modified = field_value(response.headers, "last-modified")
    if last_modified:
        conditions["If-Modified-Since"] = last_modified  # SHOULD, for one stored response
    return conditions


def _entity_tag(headers: Headers) -> tuple[bool, str] | None:
    """Split the ETag into (is_weak, opaque-tag), or None when absent."""
    text = (field_value(headers, "etag") or "").strip()
    if not text:
        return None
    return (True, text[2:]) if text.startswith("W/") else (False, text)


def _weakly_matches(
    stored: StoredResponse, tag: tuple[bool, str] | None, modified: str | None
) -> bool:
    """Say whether a stored response has the 304's weak validator (RFC 9110 §8.8.3.2)."""
    mine = _entity_tag(stored.headers)
    if tag is not None and mine is not None and mine[1] == tag[1]:
        return True
    stored_modified = field_value(stored.headers, "last-modified")
    if modified is None or stored_modified is None:
        return False
    left, right = parse_http_date(stored_modified), parse_http_date(modified)
    return left == right if left and right else stored_modified == modified


def select_for_304(initial: list[StoredResponse], headers: Headers) -> list[StoredResponse]:
    """Pick the stored responses a 304 updates: the first rule of RFC 9111 §4.3.4 that applies."""
    tag = _entity_tag(headers)
    modified = field_value(headers, "last-modified")
    if tag is not None and not tag[0]:
        # A strong validator selects every stored response with that strong tag, or none.
        return [r for r in initial if _entity_tag(r.headers) == tag]
    if tag is not None or modified is not None:
        # Weak validators (W/ tags, and Last-Modified, weak unless proven strong) pick one.
        return sorted((r for r in initial if _weakly_matches(r, tag, modified)), key=recency)[-1:]
    if len(initial) == 1 and not conditional_headers(initial[0]):
        return initial  # no validator on either side, and only one candidate
    return []


def apply_304(stored: StoredResponse, not_modified: StoredResponse) -> StoredResponse:
    """Update a stored response with a 304's fields (RFC 9111 §3.2), keeping its body."""
    listed = {
        n.strip().lower()
        for n in (field_value(not_modified.headers, "connection") or "").split(",")
    }
    skip = _HOP_FIELDS | listed | {"content-length"}
    incoming = [(name, value) for name, value in not_modified.headers if name.lower() not in skip]
    replaced = {name.lower() for name, _ in incoming}
    kept = [(name, value) for name, value in stored.headers if name.lower() not in replaced]
    # The 304's timing becomes the entry's, so §4.2.3 ages it from this validation.
    return replace(
        stored,
        headers=tuple(kept + incoming),
        request_time=not_modified.request_time,
        response_time=not_modified.response_time,
    )
