"""The invented league's demo site as a real HTTP server on 127.0.0.1, for fetcher tests.

``DemoServer`` is ``loopback.LoopbackServer`` serving ``routes.LeagueRoutes``: the first owns
the HTTP side (binding, threads, pacing with 429s, ``slow`` delays, 304s, the request log,
start and stop), the second what the site answers (pages, retention, robots.txt, the sitemap,
CSV, forced statuses, revisions). Their docstrings hold the contract; this class takes both
sets of options in one constructor and keeps the site's clock and forced statuses at hand.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from datetime import datetime

from harvester.demo.league import League
from harvester.demo.loopback import LOOPBACK, LoopbackServer
from harvester.demo.routes import LeagueRoutes

__all__ = ["LOOPBACK", "DemoServer"]


class DemoServer(LoopbackServer[LeagueRoutes]):
    """The demo site on a loopback port; use ``with DemoServer() as site:`` or start/stop."""

    def __init__(
        self,
        *,
        port: int = 0,
        league: League | None = None,
        revision: int = 0,
        crawl_delay: float = 0.2,
        tolerance: float = 0.0,
        enforce: bool = True,
        retry_after: int = 1,
        keep_seasons: int | None = 3,
        gone_after: int = 5,
        max_age: int | None = 60,
        robots_txt: str | None = None,
        robots_status: int | None = None,
        robots_redirects: int = 0,
        forced: Mapping[str, Sequence[int]] | None = None,
        forced_retry_after: int | str | datetime | None = None,
        slow: Mapping[str, float] | None = None,
        huge_bytes: int = 8 << 20,
        bomb_bytes: int = 64 << 20,
    ) -> None:
        routes = LeagueRoutes(
            league=league,
            revision=revision,
            crawl_delay=crawl_delay,
            keep_seasons=keep_seasons,
            gone_after=gone_after,
            max_age=max_age,
            robots_txt=robots_txt,
            robots_status=robots_status,
            robots_redirects=robots_redirects,
            forced=forced,
            forced_retry_after=forced_retry_after,
            huge_bytes=huge_bytes,
            bomb_bytes=bomb_bytes,
        )
        super().__init__(
            routes,
            port=port,
            crawl_delay=crawl_delay,
            tolerance=tolerance,
            enforce=enforce,
            retry_after=retry_after,
            slow=slow,
        )
        self.league = routes.league

    @property
    def revision(self) -> int:
        """How many times the clock has advanced; pages render at this revision."""
        return self.routes.revision

    @revision.setter
    def revision(self, revision: int) -> None:
        self.routes.revision = revision

    def advance(self, revision: int | None = None) -> int:
        """Advance the clock by one revision, or to ``revision``; return the new revision."""
        return self.routes.advance(revision)

    def force(self, path: str, statuses: Sequence[int]) -> None:
        """Answer the next requests for ``path`` with ``statuses`` (4xx/5xx), in order."""
        self.routes.force(path, statuses)
