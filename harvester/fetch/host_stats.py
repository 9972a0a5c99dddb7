"""Per-host counts of one fetcher's requests, and a record of every request it sent.

A site operator asks two things of a harvest: how hard did it hit my host, and did it keep my
Crawl-delay. ``HostStats`` answers both. Per host (an origin such as ``http://127.0.0.1:8650``)
it counts the requests sent (robots.txt included), the 304s, the pages served from the HTTP
cache without asking, the retries, the seconds spent waiting for the host's turn, and each HTTP
status; it keeps the interval the pacer was set to (the Crawl-delay or the recipe's delay, the
larger). Each request is kept as a ``RequestRecord``: when it started, its URL, its status, and
its gap — the seconds from the end of the previous request to the same host to its start, the
measure the pacer spaces requests by (``pacing``). ``to_report`` turns it all into the run
report's JSON values.

``PacedSender`` (exchange.py) fills in requests, waits and retries; ``Fetcher`` (client.py)
cache hits and intervals. Times for gaps come from a monotonic clock, so a clock adjustment
during a run cannot make a gap look shorter than it was.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import datetime

from harvester.fetch.pacing import describe, host_key
from harvester.timestamps import rfc3339

__all__ = ["HostCounts", "HostStats", "RequestRecord"]

_DIGITS = 6  # gaps and waits kept to the microsecond: finer is clock noise


@dataclass(frozen=True, slots=True)
class RequestRecord:
    """One request sent: when it started (UTC), its URL, status and gap before it.

    ``status`` is None when no answer came (a timeout, a dropped connection, an answer refused
    before its status was kept); ``gap_seconds`` is None for the first request to its host.
    """

    started_at: datetime
    url: str
    status: int | None
    gap_seconds: float | None

    @property
    def host(self) -> str:
        """The origin the request went to, e.g. ``http://127.0.0.1:8650``."""
        return describe(host_key(self.url))

    def to_dict(self) -> dict[str, object]:
        """The record as JSON-ready values (the run report's request line, without its kind)."""
        return {
            "started_at": rfc3339(self.started_at),
            "host": self.host,
            "url": self.url,
            "status": self.status,
            "gap_seconds": self.gap_seconds,
        }


@dataclass
class HostCounts:
    """What one host saw of the fetcher: requests, 304s, cache hits, retries, waits, statuses."""

    requests: int = 0  # every request sent, robots.txt and retries included
    not_modified: int = 0  # 304 answers (RFC 9110 §15.4.5)
    cache_hits: int = 0  # pages served from the HTTP cache without a request
    retries: int = 0  # attempts after the first, for 429, 503, 5xx and network errors
    waited_seconds: float = 0.0  # time spent waiting for the host's turn before requests
    statuses: dict[int, int] = field(default_factory=dict)  # answers per HTTP status
    interval_seconds: float | None = None  # the pacer's interval for the host, once set

    def to_dict(self) -> dict[str, object]:
        """JSON-ready values; status codes become text keys, as JSON objects require."""
        return {
            "requests": self.requests,
            "not_modified": self.not_modified,
            "cache_hits": self.cache_hits,
            "retries": self.retries,
            "waited_seconds": round(self.waited_seconds, _DIGITS),
            "statuses": {str(status): self.statuses[status] for status in sorted(self.statuses)},
            "interval_seconds": self.interval_seconds,
        }


class HostStats:
    """Counts and request records per host, for one fetcher's lifetime (one run)."""

    def __init__(self, clock: Callable[[], float] = time.monotonic) -> None:
        self._clock = clock
        self._hosts: dict[str, HostCounts] = {}
        self._records: list[RequestRecord] = []
        self._last_end: dict[str, float] = {}  # per host: the clock when its last request ended

    def clock(self) -> float:
        """The clock gaps and waits are measured by (monotonic, in seconds)."""
        return self._clock()

    def _counts(self, url: str) -> tuple[str, HostCounts]:
        host = describe(host_key(url))
        counts = self._hosts.get(host)
        if counts is None:
            counts = self._hosts[host] = HostCounts()
        return host, counts

    def request(
        self, url: str, started_at: datetime, started: float, ended: float, status: int | None
    ) -> RequestRecord:
        """Count one request sent at ``started_at`` (clock readings ``started`` to ``ended``)."""
        host, counts = self._counts(url)
        counts.requests += 1
        if status is not None:
            counts.statuses[status] = counts.statuses.get(status, 0) + 1
            if status == 304:
                counts.not_modified += 1
        previous = self._last_end.get(host)
        gap = None if previous is None else round(started - previous, _DIGITS)
        self._last_end[host] = ended
        record = RequestRecord(started_at, url, status, gap)
        self._records.append(record)
        return record

    def waited(self, url: str, seconds: float) -> None:
        """Add the time one request waited for its host's turn."""
        self._counts(url)[1].waited_seconds += max(0.0, seconds)

    def retried(self, url: str) -> None:
        """Count one attempt after the first for a request to ``url``'s host."""
        self._counts(url)[1].retries += 1

    def cache_hit(self, url: str) -> None:
        """Count one page served from the HTTP cache without a request."""
        self._counts(url)[1].cache_hits += 1

    def set_interval(self, url: str, seconds: float) -> None:
        """Keep the interval the pacer was set to for ``url``'s host."""
        self._counts(url)[1].interval_seconds = seconds

    def hosts(self) -> dict[str, HostCounts]:
        """The counts per host origin, in order of first contact."""
        return dict(self._hosts)

    def records(self) -> list[RequestRecord]:
        """Every request sent, in the order they ended."""
        return list(self._records)

    def to_report(self) -> tuple[dict[str, dict[str, object]], list[dict[str, object]]]:
        """The run report's ``hosts`` and ``requests`` values, requests oldest first."""
        hosts = {host: counts.to_dict() for host, counts in self._hosts.items()}
        records = sorted(self._records, key=lambda record: record.started_at)
        return hosts, [record.to_dict() for record in records]
