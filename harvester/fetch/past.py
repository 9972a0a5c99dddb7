"""Where a planned page comes from: the live site, the web archive, or the first then the second.

``PastSource`` reads each request's ``past``: "live" asks the live source, "capture" the
web-archive one, and "live-then-capture" the live one first and the archive when the live page
is gone (HTTP 404 or 410) — the run itself asks again with ``past = "capture"`` when a live page
lacks a table. Any other failure of the live page stays a failure: a 500 or a robots.txt refusal
says nothing about whether the page still exists.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Protocol, runtime_checkable

from harvester.errors import HttpStatusError
from harvester.fetch.capture import Capture
from harvester.fetch.capture_source import ArchiveClient, CaptureSource
from harvester.fetch.source import PageRequest, PageSource
from harvester.fetch.web_archive import WebArchive

__all__ = ["GONE", "PastSource", "past_source"]

GONE = frozenset({404, 410})  # RFC 9110 §15.5.5 Not Found, §15.5.11 Gone


class PastSource:
    """A ``PageSource`` choosing, per request, between ``live`` and ``captures``."""

    def __init__(self, live: PageSource, captures: PageSource) -> None:
        self.live = live
        self.captures = captures

    async def capture(self, request: PageRequest) -> Capture:
        """The page from where ``request.past`` says."""
        if request.past == "capture":
            return await self.captures.capture(request)
        if request.past == "live":
            return await self.live.capture(request)
        try:
            return await self.live.capture(request)
        except HttpStatusError as error:
            if error.status not in GONE:
                raise
            capture = await self.captures.capture(request)
            said = f"the live page answers HTTP {error.status}"
            return replace(capture, notes=(said, *capture.notes))


def past_source(source: PageSource, archive: WebArchive | None) -> PageSource:
    """``source`` alone, or with captures from ``archive`` when ``source`` can talk to an
    archive (the live fetcher; a cassette or the snapshot archive replaying one)."""
    if archive is None or not isinstance(source, _CanAskArchives):
        return source
    return PastSource(source, CaptureSource(source, archive))


@runtime_checkable
class _CanAskArchives(ArchiveClient, PageSource, Protocol):
    """A page source that is an archive client as well."""
