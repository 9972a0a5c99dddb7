"""Shared fixtures: the demo site as a real HTTP server on 127.0.0.1, started per test.

``demo_site`` is a started ``DemoServer`` with the default options except a crawl delay of
``TEST_CRAWL_DELAY`` seconds, so tests stay quick. ``demo_site_factory(**options)`` starts servers
with any ``DemoServer`` options (the crawl delay again defaults to ``TEST_CRAWL_DELAY``). Every
server is stopped after the test, and a server-side exception fails the test at teardown.
``demo_archive`` is a started ``DemoWebArchive`` holding captures of ``demo_site``'s retired
seasons (same crawl delay). Every test also gets its own shared-pace state folder
(``private_state_dir``).

Tests whose subject is extraction, storage or provenance rather than fetching replay committed
cassettes instead (``tests/data/cassettes/``, re-recorded by ``python tools/record_cassettes.py``):
``cassette(name)`` is the path of ``<name>.warc.gz`` there, ``cassette_site`` the site they were
recorded from (load recipes with it: replay finds pages by URL), and ``no_network`` makes every
socket connection attempt fail and be noted, to show a replay asks nothing of any host.
"""

from __future__ import annotations

import json
import os
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest
from hypothesis import settings

from harvester.demo.server import DemoServer
from harvester.demo.web_archive import DemoWebArchive
from harvester.fetch.shared_pace import STATE_DIR_VARIABLE
from tests.cassettes import CASSETTE_DIR, NetworkGuard

__all__ = [
    "TEST_CRAWL_DELAY",
    "cassette",
    "cassette_site",
    "demo_archive",
    "demo_site",
    "demo_site_factory",
    "no_network",
]

TEST_CRAWL_DELAY = 0.05

# CI runs every property test on the same examples, so a landing never hangs on a new random
# draw; local runs keep exploring (and a failure found there is replayed from .hypothesis/).
settings.register_profile("ci", derandomize=True, database=None)
if os.environ.get("CI"):
    settings.load_profile("ci")


@pytest.fixture(scope="session", autouse=True)
def session_state_dir(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Path]:
    """The shared-pace folder for module- and session-scoped fixtures (they start first)."""
    folder = tmp_path_factory.mktemp("session-state")
    with pytest.MonkeyPatch.context() as patch:
        patch.setenv(STATE_DIR_VARIABLE, str(folder))
        yield folder


@pytest.fixture(autouse=True)
def private_state_dir(
    tmp_path_factory: pytest.TempPathFactory, monkeypatch: pytest.MonkeyPatch
) -> Path:
    """Every test keeps the shared host pace in a fresh folder of its own, never the user's.

    Set in the environment, so harvests the tests start in child processes use it too.
    """
    folder = tmp_path_factory.mktemp("state")
    monkeypatch.setenv(STATE_DIR_VARIABLE, str(folder))
    return folder


@pytest.fixture
def demo_archive(demo_site: DemoServer) -> Iterator[DemoWebArchive]:
    """A started demo web archive of ``demo_site``'s retired seasons, stopped after the test."""
    archive = DemoWebArchive(site=demo_site.base_url, crawl_delay=TEST_CRAWL_DELAY).start()
    try:
        yield archive
    finally:
        _stop(archive)


def _stop(*sites: DemoServer | DemoWebArchive) -> None:
    for site in sites:
        site.stop()
    for site in sites:
        errors = site.errors
        assert not errors, f"demo server raised {len(errors)} error(s); first:\n{errors[0]}"


@pytest.fixture
def demo_site() -> Iterator[DemoServer]:
    """A started demo server on a free loopback port, stopped after the test."""
    site = DemoServer(crawl_delay=TEST_CRAWL_DELAY).start()
    try:
        yield site
    finally:
        _stop(site)


@pytest.fixture
def demo_site_factory() -> Iterator[Callable[..., DemoServer]]:
    """Start demo servers with ``DemoServer`` options; all are stopped after the test."""
    started: list[DemoServer] = []

    def start(**options: Any) -> DemoServer:
        options.setdefault("crawl_delay", TEST_CRAWL_DELAY)
        site = DemoServer(**options).start()
        started.append(site)
        return site

    try:
        yield start
    finally:
        _stop(*started)


@pytest.fixture(scope="session")
def cassette() -> Callable[[str], Path]:
    """``cassette("league-players-2026")``: the committed cassette of that name."""

    def path(name: str) -> Path:
        file = CASSETTE_DIR / f"{name}.warc.gz"
        assert file.is_file(), f"no cassette {file}: run python tools/record_cassettes.py"
        return file

    return path


@pytest.fixture(scope="session")
def cassette_site() -> str:
    """The site the committed cassettes were recorded from (``cassettes.json``)."""
    manifest = json.loads((CASSETTE_DIR / "cassettes.json").read_text(encoding="utf-8"))
    site: str = manifest["site"]
    return site


@pytest.fixture
def no_network(monkeypatch: pytest.MonkeyPatch) -> NetworkGuard:
    """Every ``socket.connect``/``connect_ex`` in this process fails and is noted in
    ``attempts``: blocking and asyncio connections (httpx's too) all go through them."""
    guard = NetworkGuard()
    guard.install(monkeypatch)
    return guard
