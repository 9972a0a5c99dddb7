"""Listing a page's web-archive captures, and which one a recipe's rule would take.

``find_captures`` asks the archive (its TimeMap, else its TimeGate) politely — robots.txt,
pace, retries, limits — and ranks what it lists; nothing but the list is fetched.
"""

from __future__ import annotations

import asyncio
from datetime import UTC, datetime

import httpx

from harvester.config import configured_contact
from harvester.fetch.capture_source import CaptureChoice, CaptureSource
from harvester.fetch.client import Fetcher
from harvester.fetch.identity import Identity
from harvester.fetch.web_archive import WebArchive
from harvester.timestamps import rfc3339

__all__ = ["capture_rows", "find_captures"]


def find_captures(
    url: str,
    archive: WebArchive,
    near: datetime | None = None,
    *,
    contact: str | None = None,
    transport: httpx.AsyncBaseTransport | None = None,
) -> CaptureChoice:
    """The captures of ``url`` in ``archive`` and their order under its rule, for ``near``
    (aware; default now). The contact is ``contact``, else the configured one, else none: a
    list of captures is a look-up in the archive's index, no page of the site is fetched."""
    given = contact or configured_contact()
    identity = Identity.from_contact(given, where="--contact") if given else None
    target = near or datetime.now(UTC)

    async def look_up() -> CaptureChoice:
        async with Fetcher(identity or Identity.without_contact(), transport=transport) as fetcher:
            return await CaptureSource(fetcher, archive).choose(url, target)

    return asyncio.run(look_up())


def capture_rows(choice: CaptureChoice) -> list[dict[str, object]]:
    """The captures in the archive's order: ``datetime`` (RFC 3339, UTC), ``uri``, ``chosen``."""
    chosen = choice.chosen
    return [
        {
            "datetime": rfc3339(memento.datetime, timespec="seconds"),
            "uri": memento.uri,
            "chosen": memento == chosen,
        }
        for memento in choice.timemap.mementos
    ]
