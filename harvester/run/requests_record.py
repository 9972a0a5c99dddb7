"""Every request an archive's runs sent, per host, oldest first: the record a site operator reads.

Two places hold it. A run report (``ARCHIVE/runs/*.jsonl``) has one ``"kind": "request"`` line
per request sent, with the gap since the previous request to the host *ended*, and the interval
the pacer kept for each host (``harvester.fetch.host_stats``). The snapshot index
(``ARCHIVE/snapshots``) has one entry per answer kept, with the time its request was sent, and
covers runs whose report has no request lines (written before reports had them, or lost to a
crash); its gaps can only be derived from one start to the next, so they are longer than the
pause between two requests by the earlier one's duration. A request both places hold (the same
URL sent at the same microsecond: the report's time is the answer's request time, which is the
WARC-Date too) is taken from the run report, once.
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Iterable
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from typing import Any, Literal
from urllib.parse import urlsplit

from pyarrow import fs as pafs

from harvester.errors import StoreError
from harvester.fetch.pacing import describe, host_key
from harvester.formats import tsv_field
from harvester.run.report import REQUEST_KIND, RUNS_DIR, read_reports
from harvester.snapshots.entry import SNAPSHOTS_DIR
from harvester.snapshots.index import SnapshotIndex
from harvester.store.layout import join, open_root
from harvester.timestamps import parse_rfc3339, rfc3339

__all__ = ["HostRequests", "LoggedRequest", "RequestHistory", "host_matches", "request_history"]

Source = Literal["run-report", "snapshot-index"]


@dataclass(frozen=True)
class LoggedRequest:
    """One request sent: when, to which host and URL, its status, and its gap before it.

    ``gap_seconds`` is from the previous request's end (a run report) or start (the snapshot
    index) to this one's start, None when not known; ``interval_seconds`` the interval the run
    kept for the host (the Crawl-delay or the recipe's delay), None when its report does not say.
    """

    started_at: datetime
    host: str
    url: str
    status: int | None
    gap_seconds: float | None
    interval_seconds: float | None
    source: Source
    run_id: str | None

    def line(self) -> str:
        """``TIME<TAB>STATUS<TAB>GAP<TAB>URL``; ``-`` for an unknown status or gap."""
        status = "-" if self.status is None else str(self.status)
        gap = "-" if self.gap_seconds is None else f"{self.gap_seconds:.3f}"
        return "\t".join((rfc3339(self.started_at), status, gap, tsv_field(self.url)))

    def to_dict(self) -> dict[str, object]:
        """JSON-ready values, the time in RFC 3339 UTC."""
        return {
            "started_at": rfc3339(self.started_at),
            "host": self.host,
            "url": self.url,
            "status": self.status,
            "gap_seconds": self.gap_seconds,
            "interval_seconds": self.interval_seconds,
            "source": self.source,
            "run_id": self.run_id,
        }


@dataclass(frozen=True)
class HostRequests:
    """One host's requests in a listing: how many, the smallest gap, and the pace in force.

    ``interval_seconds`` is the interval in force at the smallest gap (else the last one a run
    report names); ``below`` counts the requests whose gap was shorter than their run's.
    """

    host: str
    requests: int
    smallest_gap: float | None
    interval_seconds: float | None
    below: int

    def line(self) -> str:
        """``ORIGIN: 14 requests, smallest gap 0.206 s, Crawl-delay in force 0.2 s``."""
        count = f"{self.requests} request{'' if self.requests == 1 else 's'}"
        gap = "-" if self.smallest_gap is None else f"{self.smallest_gap:.3f} s"
        pace = "unknown" if self.interval_seconds is None else f"{self.interval_seconds:g} s"
        text = f"{self.host}: {count}, smallest gap {gap}, Crawl-delay in force {pace}"
        if self.below:
            text += f": below the Crawl-delay ({self.below} of them)"
        return text

    def to_dict(self) -> dict[str, object]:
        """JSON-ready values."""
        return {
            "requests": self.requests,
            "smallest_gap": self.smallest_gap,
            "interval_seconds": self.interval_seconds,
            "below": self.below,
        }


@dataclass(frozen=True)
class RequestHistory:
    """The requests of a listing, oldest first, a summary per host, and how many runs were read."""

    requests: tuple[LoggedRequest, ...]
    hosts: dict[str, HostRequests]
    runs: int  # run reports read

    def text_lines(self) -> list[str]:
        """Per host (in order of first request): its requests' lines, then its summary line."""
        lines: list[str] = []
        for host, summary in self.hosts.items():
            lines += [request.line() for request in self.requests if request.host == host]
            lines.append(summary.line())
        return lines

    def to_dict(self) -> dict[str, object]:
        """``{"requests": [...], "hosts": {...}}``."""
        return {
            "requests": [request.to_dict() for request in self.requests],
            "hosts": {host: summary.to_dict() for host, summary in self.hosts.items()},
        }


def host_matches(origin: str, wanted: str) -> bool:
    """Whether ``wanted`` names the host ``origin``: the origin itself, ``name:port`` or name."""
    wanted = wanted.strip().rstrip("/").lower()
    parts = urlsplit(origin)
    return wanted in (origin.lower(), parts.netloc.lower(), (parts.hostname or "").lower())


def request_history(
    archive: str, *, host: str | None = None, since: datetime | None = None
) -> RequestHistory:
    """The requests ``archive``'s runs sent (to ``host``, at or after ``since``), oldest first.

    Gaps are measured over all of a host's requests before the selection, so the first request
    listed after ``since`` keeps its gap. A damaged run report is a StoreError naming its line.
    """
    reported, runs = _reported(archive)
    known = {(request.url, request.started_at) for request in reported}
    kept = [
        request for request in _indexed(archive) if (request.url, request.started_at) not in known
    ]
    every = _joined(sorted([*reported, *kept], key=lambda r: (r.started_at, r.url)))
    chosen = tuple(
        request
        for request in every
        if (host is None or host_matches(request.host, host))
        and (since is None or request.started_at >= since)
    )
    return RequestHistory(chosen, _summaries(chosen), runs)


def _joined(requests: list[LoggedRequest]) -> list[LoggedRequest]:
    """Each run's first request to a host, given the gap from the previous run's last request
    there (from one start to the next, as for the snapshot index: an upper bound)."""
    last: dict[str, datetime] = {}
    joined = []
    for request in requests:
        before = last.get(request.host)
        if request.gap_seconds is None and before is not None:
            gap = round((request.started_at - before).total_seconds(), 6)
            request = dataclasses.replace(request, gap_seconds=gap)
        last[request.host] = request.started_at
        joined.append(request)
    return joined


def _reported(archive: str) -> tuple[list[LoggedRequest], int]:
    """The request lines of every run report, and the number of reports."""
    reports = read_reports(archive)
    requests: list[LoggedRequest] = []
    for path, lines in reports:
        requests += _report_requests(path, lines)
    return requests, len(reports)


def _report_requests(path: str, lines: list[str]) -> list[LoggedRequest]:
    found: list[LoggedRequest] = []
    header: dict[str, Any] = {}
    for number, line in enumerate(lines, start=1):
        if not line.strip():
            continue
        try:
            item = json.loads(line)
            if number == 1:
                header = item
            elif item.get("kind") == REQUEST_KIND:
                found.append(_report_request(item, header))
        except (ValueError, TypeError, KeyError, AttributeError) as exc:
            raise StoreError(
                f"{path}, line {number}: not a run report line ({type(exc).__name__}: {exc})",
                hint=f"the report is damaged; move it out of {RUNS_DIR}/ to list the others",
            ) from None
    return found


def _report_request(item: dict[str, Any], header: dict[str, Any]) -> LoggedRequest:
    url = str(item["url"])
    origin = describe(host_key(url))
    interval = (header.get("hosts") or {}).get(origin, {}).get("interval_seconds")
    gap, status = item.get("gap_seconds"), item.get("status")
    return LoggedRequest(
        started_at=parse_rfc3339(str(item["started_at"])),
        host=origin,
        url=url,
        status=None if status is None else int(status),
        gap_seconds=None if gap is None else float(gap),
        interval_seconds=None if interval is None else float(interval),
        source="run-report",
        run_id=header.get("run_id"),
    )


def _indexed(archive: str) -> list[LoggedRequest]:
    """The snapshot index's entries as requests, gaps from one start to the next per host."""
    filesystem, root = open_root(archive)
    if not isinstance(filesystem, pafs.LocalFileSystem):
        return []  # an object-store archive keeps no snapshot archive
    entries = SnapshotIndex.load(Path(join(root, SNAPSHOTS_DIR))).entries()
    previous: dict[str, datetime] = {}
    found: list[LoggedRequest] = []
    seen: set[tuple[str, datetime]] = set()
    for entry in entries:
        if (entry.url, entry.date) in seen:
            continue  # one exchange kept twice (a cached copy rewritten) is one request
        seen.add((entry.url, entry.date))
        origin = describe(host_key(entry.url))
        before = previous.get(origin)
        previous[origin] = entry.date
        gap = None if before is None else round((entry.date - before).total_seconds(), 6)
        request = LoggedRequest(
            entry.date, origin, entry.url, entry.status, gap, None, "snapshot-index", None
        )
        found.append(request)
    return found


def _summaries(requests: Iterable[LoggedRequest]) -> dict[str, HostRequests]:
    grouped: dict[str, list[LoggedRequest]] = {}
    for request in requests:
        grouped.setdefault(request.host, []).append(request)
    return {host: _summary(host, listed) for host, listed in grouped.items()}


def _summary(host: str, requests: list[LoggedRequest]) -> HostRequests:
    gapped = [request for request in requests if request.gap_seconds is not None]
    smallest = min(gapped, key=lambda request: request.gap_seconds or 0.0, default=None)
    interval = smallest.interval_seconds if smallest is not None else None
    if interval is None:
        named = [r.interval_seconds for r in requests if r.interval_seconds is not None]
        interval = named[-1] if named else None
    below = sum(
        1
        for request in gapped
        if request.interval_seconds is not None
        and (request.gap_seconds or 0.0) < request.interval_seconds
    )
    return HostRequests(
        host,
        len(requests),
        smallest.gap_seconds if smallest is not None else None,
        interval,
        below,
    )
