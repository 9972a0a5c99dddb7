"""What the demo web archive holds: the captures of each archived page and their original bytes.

The archive never asks the live site for anything: each capture is rendered here, with
``pages.render_page``, at the revision its date calls for. ``archive_routes`` documents the
schedule (its module docstring is the contract) and serves these captures over HTTP; this module
only decides which captures exist and what each one recorded (status, headers, bytes).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from datetime import UTC, datetime
from functools import cached_property
from typing import Literal

from harvester.demo.league import League
from harvester.demo.pages import SEASON_PAGES, render_page
from harvester.demo.replies import HTML, error_reply, redirect_reply

__all__ = [
    "CAPTURE_TIMES",
    "CP1252_HTML",
    "CP1252_LAST_SEASON",
    "ERROR_SEASONS",
    "LIVE_SEASONS_KEPT",
    "REDIRECT_PATH",
    "REDIRECT_SEASONS",
    "SPECIAL_CAPTURE",
    "Capture",
    "CaptureKind",
    "Holdings",
    "Original",
]

# The live site's retention (routes.LeagueRoutes, keep_seasons=3): older seasons are archived.
LIVE_SEASONS_KEPT = 3
# (month, day, hour, minute, second, revision) of each season's captures, in time order; the
# revision is the one the season's pages showed then (0 = the season's final numbers).
CAPTURE_TIMES: tuple[tuple[int, int, int, int, int, int], ...] = (
    (3, 15, 10, 20, 0, 2),
    (6, 28, 14, 5, 9, 0),
    (7, 3, 8, 30, 0, 0),
    (11, 20, 16, 45, 0, 0),
)
# The capture that a special case replaces: (month, day) of the one closest to {season}-06-30.
SPECIAL_CAPTURE = (6, 28)
ERROR_SEASONS: Mapping[int, int] = {2015: 503, 2019: 404}  # season -> archived status
REDIRECT_SEASONS: frozenset[int] = frozenset({2017})
REDIRECT_PATH = "/index.html"  # where the archived redirect sent visitors, on the live site
CP1252_LAST_SEASON = 2014  # captures of this season and older are stored as windows-1252

CaptureKind = Literal["page", "error", "redirect"]
_UTF8_META = '<meta charset="utf-8">'
_CP1252_META = '<meta charset="windows-1252">'
CP1252_HTML = "text/html; charset=windows-1252"


@dataclass(frozen=True)
class Capture:
    """One capture of one page (URI-R): when it was made and what kind of answer it recorded."""

    uri_r: str
    datetime: datetime  # aware, UTC, whole seconds
    kind: CaptureKind
    season: int
    revision: int  # of the league for that season's page; only "page" captures use it

    @property
    def timestamp(self) -> str:
        """The capture's 14-digit ``YYYYMMDDhhmmss`` form, as in its URI-M."""
        return self.datetime.strftime("%Y%m%d%H%M%S")

    def path(self, *, raw: bool = False) -> str:
        """The URI-M's path on the archive: ``/web/{timestamp}[raw]/{URI-R}``."""
        return f"/web/{self.timestamp}{'raw' if raw else ''}/{self.uri_r}"


@dataclass(frozen=True)
class Original:
    """What a capture recorded: the status, the headers that matter and the body, byte for byte."""

    status: int
    content_type: str
    charset: str  # the body's encoding, as its Content-Type declares it
    body: bytes
    location: str | None = None  # of an archived redirect, absolute on the live site


class Holdings:
    """The captures the archive holds of ``site``'s retired season pages, and their bytes."""

    def __init__(self, site: str, league: League) -> None:
        self.site, self.league = site, league
        self._originals: dict[tuple[str, str], Original] = {}

    @cached_property
    def seasons(self) -> tuple[int, ...]:
        """The seasons the live site no longer serves, oldest first: the archived ones."""
        latest = self.league.latest
        return tuple(s.year for s in self.league.seasons if latest - s.year >= LIVE_SEASONS_KEPT)

    @cached_property
    def uris(self) -> tuple[str, ...]:
        """Every archived URI-R: each held season's three pages, by season then page."""
        return tuple(
            f"{self.site}/seasons/{year}/{kind}.html"
            for year in self.seasons
            for kind in SEASON_PAGES
        )

    @cached_property
    def _by_uri(self) -> dict[str, tuple[Capture, ...]]:
        held: dict[str, tuple[Capture, ...]] = {}
        for year in self.seasons:
            for kind in SEASON_PAGES:
                uri_r = f"{self.site}/seasons/{year}/{kind}.html"
                held[uri_r] = tuple(_capture(uri_r, year, *when) for when in CAPTURE_TIMES)
        return held

    def captures(self, uri_r: str) -> tuple[Capture, ...]:
        """The captures of ``uri_r`` in time order; empty when the archive has none."""
        return self._by_uri.get(uri_r, ())

    def original(self, capture: Capture) -> Original:
        """What ``capture`` recorded (rendered once, then kept: captures never change)."""
        key = (capture.uri_r, capture.timestamp)
        if key not in self._originals:
            self._originals[key] = self._record(capture)  # deterministic, so races are harmless
        return self._originals[key]

    def _record(self, capture: Capture) -> Original:
        if capture.kind == "error":
            reply = error_reply(ERROR_SEASONS[capture.season])
            return Original(reply.status, HTML, "utf-8", reply.body)
        if capture.kind == "redirect":
            location = self.site + REDIRECT_PATH
            return Original(302, HTML, "utf-8", redirect_reply(location).body, location)
        path = capture.uri_r.removeprefix(self.site)
        html = render_page(
            self._league_of(capture.season, capture.revision), path, capture.revision
        )
        assert html is not None  # every held URI-R is a season page of the league
        if capture.season > CP1252_LAST_SEASON:
            return Original(200, HTML, "utf-8", html.encode("utf-8"))
        # windows-1252 has no U+2212 MINUS SIGN; a site in that encoding writes it as a numeric
        # character reference, which an HTML parser reads as the same character.
        html = html.replace(_UTF8_META, _CP1252_META, 1)
        return Original(
            200, CP1252_HTML, "windows-1252", html.encode("cp1252", "xmlcharrefreplace")
        )

    def _league_of(self, year: int, revision: int) -> League:
        """The league as it stood when ``year`` was its latest season, the one revisions change."""
        if revision == 0:
            return self.league
        earlier = tuple(s for s in self.league.seasons if s.year <= year)
        return League(self.league.seed, self.league.clubs, self.league.players, earlier)


def _capture(
    uri_r: str, year: int, month: int, day: int, hour: int, minute: int, second: int, revision: int
) -> Capture:
    kind: CaptureKind = "page"
    if (month, day) == SPECIAL_CAPTURE and year in ERROR_SEASONS:
        kind = "error"
    elif (month, day) == SPECIAL_CAPTURE and year in REDIRECT_SEASONS:
        kind = "redirect"
    moment = datetime(year, month, day, hour, minute, second, tzinfo=UTC)
    return Capture(uri_r, moment, kind, year, revision)
