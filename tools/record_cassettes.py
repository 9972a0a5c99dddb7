"""Re-record the test cassettes in tests/data/cassettes/ from the embedded demo site.

Run ``python tools/record_cassettes.py`` (a repository tool, not package: it writes into the
repository). It starts the demo site (``harvester.demo.server.DemoServer``) on 127.0.0.1, port
8650 by default — the port the bundled recipes name in their ``site``, so the recorded URLs are
the recipes' own — and records one small harvest of a bundled recipe per cassette (see
``CASSETTES``) with ``harvest(..., record=...)``. ``--port N`` records on another port when 8650
is taken (``--port 0``: any free one); the site the cassettes were recorded from is written to
``cassettes.json`` beside them, and the tests load the recipes with that site, because replay
finds pages by URL. While recording, the shared host pace lives in a temporary
``HARVESTER_STATE_DIR`` and the archive is a temporary folder; the contact is
``mailto:analyst@example.org``.

The demo league is deterministic: a re-record gives the same page bodies (only WARC record
ids and dates change). tests/run/test_cassettes.py re-records into a temporary folder and fails
when a committed cassette's pages differ from what the site serves now.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from harvester.demo.server import DemoServer
from harvester.demo.tour import DEMO_PORT
from harvester.fetch.shared_pace import STATE_DIR_VARIABLE
from harvester.recipe import load_recipe
from harvester.run import harvest

__all__ = [
    "CASSETTES",
    "CONTACT",
    "CRAWL_DELAY",
    "MANIFEST",
    "Cassette",
    "main",
    "record_cassettes",
]

ROOT = Path(__file__).resolve().parent.parent
RECIPES = ROOT / "recipes"
TARGET = ROOT / "tests" / "data" / "cassettes"
MANIFEST = "cassettes.json"
CONTACT = "mailto:analyst@example.org"
CRAWL_DELAY = 0.2  # the demo site's default; robots.txt (kept in every cassette) names it


@dataclass(frozen=True)
class Cassette:
    """One cassette: a run of the bundled recipe ``recipe`` for one ``season``."""

    recipe: str
    season: int

    @property
    def file_name(self) -> str:
        """``<recipe>-<season>.warc.gz``."""
        return f"{self.recipe}-{self.season}.warc.gz"


# The current season of every bundled recipe, and one past (final, immutable) season of the
# players: one page each, plus robots.txt, so every cassette stays a few kilobytes.
CASSETTES = (
    Cassette("league-players", 2026),
    Cassette("league-players", 2024),
    Cassette("league-contracts", 2026),
    Cassette("league-standings", 2026),
)


@contextmanager
def _private_state() -> Iterator[None]:
    """A temporary shared-pace folder, so recording never touches the user's host pace."""
    before = os.environ.get(STATE_DIR_VARIABLE)
    with tempfile.TemporaryDirectory(prefix="harvester-state-") as folder:
        os.environ[STATE_DIR_VARIABLE] = folder
        try:
            yield
        finally:
            if before is None:
                os.environ.pop(STATE_DIR_VARIABLE, None)
            else:
                os.environ[STATE_DIR_VARIABLE] = before


def record_cassettes(
    folder: Path, *, port: int = DEMO_PORT, delay: float | None = None
) -> dict[str, Any]:
    """Record every cassette of ``CASSETTES`` into ``folder``, and the manifest beside them.

    ``delay`` replaces the recipes' own seconds between requests (the site's Crawl-delay still
    governs when longer); it changes when pages are asked for, never what is recorded.

    Returns the manifest written to ``folder / MANIFEST``: the site recorded from and, for each
    cassette file, its recipe, season and tables. RuntimeError when a table is not harvested.
    """
    folder.mkdir(parents=True, exist_ok=True)
    with (
        _private_state(),
        tempfile.TemporaryDirectory(prefix="harvester-record-") as scratch,
        DemoServer(port=port, crawl_delay=CRAWL_DELAY) as site,
    ):
        entries: dict[str, dict[str, Any]] = {}
        for cassette in CASSETTES:
            recipe = load_recipe(
                RECIPES / f"{cassette.recipe}.toml",
                {"site": site.base_url, "season": str(cassette.season)},
            )
            if delay is not None:
                recipe = replace(recipe, fetch=replace(recipe.fetch, delay=delay))
            path = folder / cassette.file_name
            path.unlink(missing_ok=True)  # a recording appends to nothing old
            archive = str(Path(scratch) / cassette.file_name.removesuffix(".warc.gz"))
            report = harvest(recipe, archive=archive, contact=CONTACT, record=path)
            if report.failed or any(o.status != "new" for o in report.outcomes):
                lines = "\n".join(o.line() for o in report.outcomes)
                raise RuntimeError(f"recording {cassette.file_name} failed:\n{lines}")
            entries[cassette.file_name] = {
                "recipe": cassette.recipe,
                "season": cassette.season,
                "tables": [o.table for o in report.outcomes],
            }
        manifest: dict[str, Any] = {"site": site.base_url, "cassettes": entries}
    text = json.dumps(manifest, indent=2) + "\n"
    (folder / MANIFEST).write_text(text, encoding="utf-8")
    return manifest


def main(argv: list[str] | None = None) -> None:
    """Record the cassettes into tests/data/cassettes/ (or ``--into FOLDER``)."""
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0] if __doc__ else None)
    parser.add_argument(
        "--port", type=int, default=DEMO_PORT, help=f"demo site port (default {DEMO_PORT})"
    )
    parser.add_argument("--into", type=Path, default=TARGET, help="folder for the cassettes")
    options = parser.parse_args(argv)
    try:
        manifest = record_cassettes(options.into, port=options.port)
    except OSError as exc:
        sys.exit(f"cannot record: {exc} (port {options.port} taken? try --port 0)")
    for name in manifest["cassettes"]:
        size = (options.into / name).stat().st_size
        print(f"wrote {options.into / name} ({size} bytes)")
    print(f"recorded from {manifest['site']}; manifest {options.into / MANIFEST}")


if __name__ == "__main__":
    main()
