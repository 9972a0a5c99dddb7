"""A blocking facade over the async fetcher, for scripts and the CLI."""

from __future__ import annotations

import asyncio
from typing import Any

from harvester.fetch.capture import Capture
from harvester.fetch.client import Fetcher
from harvester.fetch.robots import RobotsTxt

__all__ = ["SyncFetcher"]


class SyncFetcher:
    """``Fetcher`` with plain method calls; use ``with SyncFetcher(identity) as fetcher``.

    Arguments are those of :class:`~harvester.fetch.client.Fetcher`. One event loop lives as
    long as the facade, so pacing and cached robots.txt carry from one call to the next.
    """

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        self._runner = asyncio.Runner()
        self.fetcher: Fetcher = self._runner.run(self._make(*args, **kwargs))

    @staticmethod
    async def _make(*args: Any, **kwargs: Any) -> Fetcher:
        return Fetcher(*args, **kwargs)

    def fetch(self, url: str, *, immutable: bool = False) -> Capture:
        """Fetch one page (see :meth:`Fetcher.fetch`)."""
        return self._runner.run(self.fetcher.fetch(url, immutable=immutable))

    def check_robots(self, url: str) -> RobotsTxt:
        """The robots.txt rules for ``url``'s host."""
        return self._runner.run(self.fetcher.check_robots(url))

    def close(self) -> None:
        """Close the fetcher and its event loop."""
        self._runner.run(self.fetcher.aclose())
        self._runner.close()

    def __enter__(self) -> SyncFetcher:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()
