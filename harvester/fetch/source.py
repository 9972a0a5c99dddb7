"""The source seam: where the run gets a page from, whatever kind of place that is.

A ``PageSource`` turns a ``PageRequest`` (one planned page) into a ``Capture`` (its bytes and
everything known of how they were obtained), or raises a ``FetchError``. The polite live
fetcher (``harvester.fetch.client.Fetcher``) is the first source; web-archive captures, cassette
replay, the snapshot archive and live-then-capture are further ones, and a recorder can wrap any
of them. The run never asks where a page came from: the capture's ``origin`` says it.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import datetime
from types import MappingProxyType
from typing import Literal, Protocol, runtime_checkable

from harvester.fetch.capture import Capture

__all__ = ["PageRequest", "PageSource", "PastMode"]

PastMode = Literal["live", "capture", "live-then-capture"]
"""Where a page comes from: the live site, a web-archive capture, or the first then the second."""


@dataclass(frozen=True)
class PageRequest:
    """One planned page: its URL, the parameter values behind it, and what the plan knows.

    ``immutable`` marks a page the recipe says never changes (a past season); ``past`` says
    where to take it from; ``capture_near`` is the date a web-archive capture of it should be
    near, when the recipe names one (else the latest capture).
    """

    url: str
    parameters: Mapping[str, int | str] = field(default_factory=lambda: MappingProxyType({}))
    immutable: bool = False
    capture_near: datetime | None = None  # aware, UTC
    past: PastMode = "live"


@runtime_checkable
class PageSource(Protocol):
    """Anything that can capture a planned page."""

    async def capture(self, request: PageRequest) -> Capture:
        """The capture of ``request``'s page; raises a FetchError when there is none to be had."""
        ...
