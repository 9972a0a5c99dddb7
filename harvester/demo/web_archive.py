"""The demo's web archive as a real HTTP server on 127.0.0.1: captures of the league's old seasons.

``DemoWebArchive`` is ``loopback.LoopbackServer`` serving ``archive_routes.ArchiveRoutes``: the
first owns the HTTP side (binding, threads, pacing with 429s, 304s, the request log, start and
stop), the second what the archive answers (TimeMaps, the TimeGate, mementos with and without
the banner). The routes' docstring holds the contract, ``archive_captures`` the holdings; this
class takes the options of both and names the archive's captures for tests and docs.
"""

from __future__ import annotations

from datetime import datetime
from typing import NamedTuple

from harvester.demo.archive_captures import (
    CP1252_LAST_SEASON,
    ERROR_SEASONS,
    REDIRECT_SEASONS,
    CaptureKind,
)
from harvester.demo.archive_routes import ArchiveRoutes
from harvester.demo.league import League
from harvester.demo.loopback import LOOPBACK, LoopbackServer

__all__ = ["LOOPBACK", "ArchivedCapture", "DemoWebArchive"]


class ArchivedCapture(NamedTuple):
    """One capture as a TimeMap lists it: its datetime, its URI-M and what it recorded."""

    datetime: datetime  # aware, UTC
    uri_m: str  # the banner variant; ``/web/{timestamp}raw/…`` is the unmodified one
    kind: CaptureKind  # "page", "error" (an archived 4xx/5xx) or "redirect" (an archived 302)


class DemoWebArchive(LoopbackServer[ArchiveRoutes]):
    """The demo web archive on a loopback port; use ``with DemoWebArchive(site=…) as archive:``."""

    def __init__(
        self,
        *,
        site: str,
        port: int = 0,
        league: League | None = None,
        crawl_delay: float = 0.2,
        tolerance: float = 0.0,
        enforce: bool = True,
        retry_after: int = 1,
        timemap_page_size: int | None = None,
    ) -> None:
        routes = ArchiveRoutes(
            site=site, league=league, crawl_delay=crawl_delay, timemap_page_size=timemap_page_size
        )
        super().__init__(
            routes,
            port=port,
            crawl_delay=crawl_delay,
            tolerance=tolerance,
            enforce=enforce,
            retry_after=retry_after,
        )
        self.league = routes.league

    @property
    def site(self) -> str:
        """The live site's base URL, as the archived URI-Rs name it (no trailing slash)."""
        return self.routes.site

    @property
    def held_seasons(self) -> tuple[int, ...]:
        """The seasons whose pages the archive holds: those the live site no longer serves."""
        return self.routes.holdings.seasons

    @property
    def uris(self) -> tuple[str, ...]:
        """Every archived URI-R, by season then page (players, contracts, standings)."""
        return self.routes.holdings.uris

    @property
    def error_seasons(self) -> dict[int, int]:
        """Held seasons whose June 28 captures recorded an error page, with its status."""
        return {year: status for year, status in ERROR_SEASONS.items() if year in self.held_seasons}

    @property
    def redirect_seasons(self) -> tuple[int, ...]:
        """Held seasons whose June 28 captures recorded a 302 to the live site's front page."""
        return tuple(year for year in self.held_seasons if year in REDIRECT_SEASONS)

    @property
    def cp1252_seasons(self) -> tuple[int, ...]:
        """Held seasons whose captures are stored as ``text/html; charset=windows-1252``."""
        return tuple(year for year in self.held_seasons if year <= CP1252_LAST_SEASON)

    def uri_r(self, season: int, page: str) -> str:
        """The URI-R of one season page (``page``: players, contracts or standings)."""
        return f"{self.site}/seasons/{season}/{page}.html"

    def captures(self, uri_r: str) -> list[ArchivedCapture]:
        """The captures of ``uri_r`` in time order, with absolute URI-Ms; empty if none."""
        return [
            ArchivedCapture(c.datetime, self.url(c.path()), c.kind)
            for c in self.routes.holdings.captures(uri_r)
        ]

    def timemap_url(self, uri_r: str) -> str:
        """The URI-T of ``uri_r``: ``{base_url}/timemap/{URI-R}``."""
        return self.url(f"/timemap/{uri_r}")

    def timegate_url(self, uri_r: str) -> str:
        """The URI-G of ``uri_r``: ``{base_url}/timegate/{URI-R}``."""
        return self.url(f"/timegate/{uri_r}")
