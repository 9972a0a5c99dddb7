"""A test client that keeps a loopback host's Crawl-delay, by the host's own log.

Shared by the loopback plumbing tests and the league site tests.
"""

from __future__ import annotations

import time
from typing import Any

import httpx

from harvester.demo.loopback import LoopbackServer

__all__ = ["Polite", "new_client"]


def new_client(host: LoopbackServer[Any], **options: Any) -> httpx.Client:
    """An httpx client for ``host``; trust_env=False, so no proxy may route loopback elsewhere."""
    return httpx.Client(base_url=host.base_url, trust_env=False, **options)


class Polite:
    """An httpx client that starts each request the crawl delay plus a margin after the last.

    "The last" is the latest start in the server's own log (same process, same monotonic
    clock), so a slow connection set-up or a pause of the client cannot shrink the gap.
    """

    def __init__(self, host: LoopbackServer[Any], margin: float = 0.01) -> None:
        self.host = host
        self.client = new_client(host)
        self.gap = host.crawl_delay + margin

    def request(self, method: str, path: str, **options: Any) -> httpx.Response:
        """Send one request once the host's log says the crawl delay has passed."""
        # Responses are logged before their last write, so a finished request is in the log.
        if records := self.host.log:
            wait = records[-1].started + self.gap - time.monotonic()
            if wait > 0:
                time.sleep(wait)
        return self.client.request(method, path, **options)

    def get(self, path: str, **options: Any) -> httpx.Response:
        """A polite GET."""
        return self.request("GET", path, **options)
