"""Loopback hosts that misbehave on purpose: scripted replies, for the fetcher's hardening tests.

``ScriptedSite`` is ``harvester.demo.loopback.LoopbackServer`` (the real threaded HTTP server on
127.0.0.1, with its request log and pacing count) serving ``ScriptedRoutes``: each path answers
with the replies listed for it, in order, the last one repeated; ``/robots.txt`` defaults to a
file naming the site's Crawl-delay. ``LoopbackOnly`` is a real transport that refuses to open a
connection anywhere but 127.0.0.1, so a test of a refused redirect cannot reach another address
even when the code under test is wrong.
"""

from __future__ import annotations

import threading
from collections.abc import Mapping, Sequence

import httpx

from harvester.demo.loopback import LOOPBACK, LoopbackServer, Request
from harvester.demo.replies import HTML, Reply, error_reply, page

__all__ = ["LoopbackOnly", "ScriptedRoutes", "ScriptedSite", "html", "redirect"]


def html(body: str = "<p>ok</p>", **headers: str) -> Reply:
    """A 200 HTML page with extra ``headers`` (``Cache_Control`` is sent as Cache-Control)."""
    fields = {"Content-Type": HTML} | {k.replace("_", "-"): v for k, v in headers.items()}
    return Reply(200, fields, page("Scripted", body))


def redirect(location: str) -> Reply:
    """A 302 to ``location``, written exactly as given."""
    return Reply(302, {"Location": location, "Content-Type": HTML}, page("Found", ""))


class ScriptedRoutes:
    """Each path answers its scripted replies in order, repeating the last; others get 404."""

    def __init__(self, script: Mapping[str, Sequence[Reply]], robots_txt: str) -> None:
        self._script = {path: list(replies) for path, replies in script.items()}
        self._robots_txt = robots_txt
        self._lock = threading.Lock()

    def reply(self, request: Request) -> Reply:
        """The next scripted reply for the request's path."""
        if request.path == "/robots.txt" and "/robots.txt" not in self._script:
            return Reply(200, {"Content-Type": "text/plain"}, self._robots_txt.encode())
        with self._lock:
            replies = self._script.get(request.path)
            if not replies:
                return error_reply(404)
            return replies.pop(0) if len(replies) > 1 else replies[0]


class ScriptedSite(LoopbackServer[ScriptedRoutes]):
    """A loopback host answering a script; pacing is counted, never enforced with 429s."""

    def __init__(
        self,
        script: Mapping[str, Sequence[Reply]],
        *,
        crawl_delay: float = 0.05,
        robots_txt: str | None = None,
    ) -> None:
        robots = (
            robots_txt if robots_txt is not None else f"User-agent: *\nCrawl-delay: {crawl_delay}\n"
        )
        super().__init__(ScriptedRoutes(script, robots), crawl_delay=crawl_delay, enforce=False)


class LoopbackOnly(httpx.AsyncHTTPTransport):
    """The real HTTP transport, refusing any host but 127.0.0.1 before connecting."""

    def __init__(self) -> None:
        super().__init__()
        self.refused: list[str] = []

    async def handle_async_request(self, request: httpx.Request) -> httpx.Response:
        """Send ``request`` if it is for the loopback address; otherwise record and refuse it."""
        if request.url.host != LOOPBACK:
            self.refused.append(str(request.url))
            raise httpx.ConnectError(f"test guard: {request.url.host} is not {LOOPBACK}")
        return await super().handle_async_request(request)
