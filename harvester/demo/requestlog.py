"""What the demo server saw: one record per request, and the pacing check on request starts.

The pacing check is the server's side of politeness: a request that starts sooner than
``min_interval - tolerance`` seconds after the previous request's start (whatever that request's
outcome) is a violation. Times come from ``time.monotonic()``, taken under a lock so concurrent
requests are ordered the same way for the check and for the log.
"""

from __future__ import annotations

import math
import threading
import time
from dataclasses import dataclass

__all__ = ["RequestLog", "RequestRecord"]


@dataclass(frozen=True)
class RequestRecord:
    """One request as the demo server saw it, logged just before its response's last write."""

    started: float  # time.monotonic() when the server began handling the request
    wall: float  # time.time() at the same moment
    method: str
    path: str  # the request target as sent: path with query
    status: int
    headers: dict[str, str]  # every request header, names lower-cased, repeats joined by ", "
    sent_bytes: int  # body bytes written (0 for HEAD and 304; fewer if the client hung up)
    violation: bool  # started too soon after the previous request's start

    @property
    def bare_path(self) -> str:
        """The path without its query."""
        return self.path.partition("?")[0]


class RequestLog:
    """A thread-safe list of ``RequestRecord`` plus the start-to-start pacing check."""

    def __init__(self, min_interval: float, tolerance: float = 0.0) -> None:
        self.min_interval = min_interval
        self.tolerance = tolerance
        self._lock = threading.Lock()
        self._records: list[RequestRecord] = []
        self._last_start = -math.inf

    def begin(self) -> tuple[float, float, bool]:
        """Mark a request's start: (monotonic start, wall time, whether it came too soon)."""
        with self._lock:
            started, wall = time.monotonic(), time.time()
            too_soon = started - self._last_start < self.min_interval - self.tolerance
            self._last_start = started
        return started, wall, too_soon

    def add(self, record: RequestRecord) -> None:
        """Log a finished request."""
        with self._lock:
            self._records.append(record)

    def records(self) -> list[RequestRecord]:
        """A copy of the log, in order of request start."""
        with self._lock:
            # Responses finish out of order (slow paths), so sort by start, not by logging time.
            return sorted(self._records, key=lambda record: record.started)

    def requests_for(self, path: str) -> list[RequestRecord]:
        """Records for ``path``: matched with its query if ``path`` has one, else without."""
        if "?" in path:
            return [record for record in self.records() if record.path == path]
        return [record for record in self.records() if record.bare_path == path]

    def violations(self) -> list[RequestRecord]:
        """Records of requests that started too soon."""
        return [record for record in self.records() if record.violation]

    def clear(self) -> None:
        """Forget the records; the pacing check still remembers the last start."""
        with self._lock:
            self._records.clear()
