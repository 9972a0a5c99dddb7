"""A private HTTP cache (RFC 9111) that keeps responses on disk with diskcache.

Entries live under ``"METHOD URI"`` (RFC 9111 §2); each holds the variants that Vary tells
apart, and a variant's identity is its Vary-selected request values (§4.1). This module is the
storage and the lookup; the rules it applies are in ``cache_freshness`` (storable, fresh, age),
``cache_vary`` (which variant a request may use) and ``cache_validation`` (validators, 304s),
with the stored record, ``StoredResponse``, in ``cache_entry``. The cache is disposable: a
damaged entry is a miss (one warning), a damaged database is moved aside (``disk_store``).
"""

from __future__ import annotations

import logging
import pickle
import sqlite3
from collections.abc import Mapping
from dataclasses import astuple, dataclass
from datetime import datetime
from pathlib import Path
from typing import Any, Literal

from harvester.errors import FetchError
from harvester.fetch.cache_entry import StoredResponse, has_directive, header_pairs, recency
from harvester.fetch.cache_freshness import (
    HEURISTICALLY_CACHEABLE,
    current_age,
    forbids_stale,
    freshness_lifetime,
    is_storable,
)
from harvester.fetch.cache_validation import apply_304, conditional_headers, select_for_304
from harvester.fetch.cache_vary import variant_identity, vary_matches
from harvester.fetch.capture import Capture
from harvester.fetch.disk_store import open_store
from harvester.fetch.transfer import Answer

_log = logging.getLogger("harvester.fetch")

__all__ = [
    "HEURISTICALLY_CACHEABLE",
    "CacheLookup",
    "HttpCache",
    "StoredResponse",
    "cached_capture",
    "conditional_headers",
    "current_age",
    "forbids_stale",
    "freshness_lifetime",
    "is_storable",
    "stored_answer",
]


@dataclass(frozen=True)
class CacheLookup:
    """The answer to a lookup: fresh (reuse), stale (validate first) or miss (fetch)."""

    state: Literal["fresh", "stale", "miss"]
    response: StoredResponse | None
    conditional_headers: dict[str, str]
    age: float | None


class HttpCache:
    """A private RFC 9111 cache stored in a diskcache directory."""

    def __init__(
        self,
        directory: str | Path,
        *,
        heuristic_fraction: float = 0.1,
        heuristic_cap: float = 86400.0,
    ) -> None:
        self.directory = Path(directory)
        self._fraction = heuristic_fraction
        self._cap = heuristic_cap
        try:
            self._disk: Any = open_store(self.directory, "HTTP cache")
        except (OSError, sqlite3.Error) as exc:
            raise FetchError(
                f"cannot open the HTTP cache at {self.directory}: {exc}",
                hint="make the directory writable, or delete it to start an empty cache",
            ) from exc

    @staticmethod
    def _key(method: str, url: str) -> str:
        return f"{method.upper()} {url}"

    def _variants(self, key: str) -> list[StoredResponse]:
        try:
            stored = self._disk.get(key, default=None) or []
        except (pickle.UnpicklingError, EOFError, ValueError, AttributeError, ImportError) as exc:
            # A truncated or garbled value file: drop the entry and fetch the page afresh.
            _log.warning("damaged HTTP cache entry for %s (%s); fetching it afresh", key, exc)
            self._disk.delete(key)
            return []
        try:  # entries are field tuples; one written by an older layout counts as a miss
            return [StoredResponse(*fields) for fields in stored]
        except TypeError:
            return []

    def _write(self, key: str, variants: list[StoredResponse]) -> None:
        if variants:
            self._disk.set(key, [astuple(response) for response in variants])
        else:
            self._disk.delete(key)

    def _matches(
        self, method: str, url: str, request_headers: Mapping[str, str]
    ) -> list[StoredResponse]:
        """Return the stored variants this request may use, most recent first (§4.1)."""
        request = header_pairs(request_headers)
        found = [r for r in self._variants(self._key(method, url)) if vary_matches(r, request)]
        return sorted(found, key=recency, reverse=True)

    def lookup(
        self, method: str, url: str, request_headers: Mapping[str, str], now: datetime
    ) -> CacheLookup:
        """Find a reusable response: fresh, stale (with validators to send) or a miss.

        A request ``no-cache`` forces validation even of an immutable entry, because the caller
        asked for it; a response ``no-cache`` forces it unless the caller marked it immutable.
        """
        found = self._matches(method, url, request_headers)
        if not found:
            return CacheLookup("miss", None, {}, None)
        chosen = found[0]
        age = current_age(chosen, now)
        validate = has_directive(header_pairs(request_headers), "no-cache") or (
            not chosen.immutable and has_directive(chosen.headers, "no-cache")
        )
        lifetime = freshness_lifetime(
            chosen, heuristic_fraction=self._fraction, heuristic_cap=self._cap
        )
        if not validate and lifetime > age:
            return CacheLookup("fresh", chosen, {}, age)
        return CacheLookup("stale", chosen, conditional_headers(chosen), age)

    def lookup_any(
        self, method: str, url: str, request_headers: Mapping[str, str]
    ) -> StoredResponse | None:
        """Return the most recent matching response whatever its freshness (offline mode)."""
        found = self._matches(method, url, request_headers)
        return found[0] if found else None

    def store(self, method: str, response: StoredResponse) -> bool:
        """Store a response, replacing the variants it supersedes; False when not storable."""
        if not is_storable(method, response.status, response.headers):
            return False
        if has_directive(response.request_headers, "no-store"):
            return False  # RFC 9111 §5.2.1.5
        key = self._key(method, response.url)
        mine = variant_identity(response)
        with self._disk.transact():
            kept = [
                old
                for old in self._variants(key)
                if variant_identity(old) != mine and not vary_matches(old, response.request_headers)
            ]
            self._write(key, [*kept, response])
        return True

    def freshen(
        self,
        method: str,
        url: str,
        request_headers: Mapping[str, str],
        not_modified: StoredResponse,
    ) -> StoredResponse | None:
        """Apply a 304 to the stored responses it validates; return the one to use, or None."""
        key = self._key(method, url)
        request = header_pairs(request_headers)
        with self._disk.transact():
            variants = self._variants(key)
            initial = [r for r in variants if vary_matches(r, request)]
            chosen = {id(r) for r in select_for_304(initial, not_modified.headers)}
            if not chosen:
                return None
            updated = [apply_304(r, not_modified) if id(r) in chosen else r for r in variants]
            self._write(key, updated)
        fresh = [r for r, old in zip(updated, variants, strict=True) if id(old) in chosen]
        return max(fresh, key=recency)

    def close(self) -> None:
        """Close the underlying diskcache files."""
        self._disk.close()


def cached_capture(
    url: str, stored: StoredResponse, *, revalidated: bool = False, hops: tuple[str, ...] = ()
) -> Capture:
    """A stored response served as a capture of ``url`` (origin "cache")."""
    return Capture(
        url=url,
        final_url=stored.final_url or stored.url,
        status=stored.status,
        headers=stored.headers,
        body=stored.body,
        fetched_at=stored.request_time,
        origin="cache",
        redirects=hops,
        revalidated=revalidated,
    )


def stored_answer(
    answer: Answer,
    request_headers: Mapping[str, str],
    immutable: bool,
    key: str | None = None,
) -> StoredResponse:
    """An answer as the cache keeps it, under ``key`` (the URL asked for) or its own URL."""
    return StoredResponse(
        url=key or answer.url,
        status=answer.status,
        headers=answer.headers,
        body=answer.body,
        request_headers=tuple(request_headers.items()),
        request_time=answer.request_time,
        response_time=answer.response_time,
        immutable=immutable,
        final_url=answer.url,
    )
