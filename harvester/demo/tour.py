"""The demo: harvest the invented league from its loopback site into an archive, read it back.

``run_demo`` starts the demo site on 127.0.0.1 (port 8650, the demo recipes' own ``site``, when
it is free) and its web archive (port 8651, the recipes' ``[captures]``, when free), runs the
three demo recipes against them exactly as a user would run a recipe against a real site —
robots.txt, pacing, cache, captures of retired seasons, extraction, versioned Parquet — and
stops them. The current season comes from the live site; with ``seasons`` the earlier ones
the live site no longer serves come from captures in the web archive.
"""

from __future__ import annotations

import dataclasses
import socket
from dataclasses import dataclass
from pathlib import Path

from harvester.demo.league import build_league
from harvester.demo.pages import write_site
from harvester.demo.server import LOOPBACK, DemoServer
from harvester.demo.web_archive import DemoWebArchive
from harvester.errors import HarvesterError
from harvester.recipe import Recipe, load_recipe
from harvester.run import RunReport, harvest
from harvester.store.archive import Archive
from harvester.store.contract import data_columns

__all__ = [
    "DEMO_ARCHIVE",
    "DEMO_ARCHIVE_PORT",
    "DEMO_BACKFILL",
    "DEMO_CLOCK",
    "DEMO_PORT",
    "DEMO_RECIPES",
    "DemoRun",
    "TablePreview",
    "demo_recipe_dir",
    "preview_archive",
    "run_demo",
    "with_demo_archive",
    "write_demo_site",
]

DEMO_RECIPES = ("league-players.toml", "league-contracts.toml", "league-standings.toml")
DEMO_PORT = 8650  # the port the demo recipes name in their site
DEMO_ARCHIVE_PORT = 8651  # the port of the web archive their [captures] name
DEMO_ARCHIVE = f"http://{LOOPBACK}:{DEMO_ARCHIVE_PORT}"
DEMO_BACKFILL = "2019..2025"  # 2024-2025 live; 2021-2023 (404) and 2019-2020 (410) from captures


@dataclass(frozen=True)
class DemoRun:
    """What a demo run did: where the site was, and each recipe's run report."""

    site: str
    archive: str
    reports: tuple[RunReport, ...]
    web_archive: str = ""
    revision: int = 0  # the demo site's clock during the run


@dataclass(frozen=True)
class TablePreview:
    """The first rows of one archived table's latest versions, data columns only."""

    title: str
    columns: tuple[str, ...]
    rows: tuple[tuple[object, ...], ...]


def demo_recipe_dir() -> Path:
    """The folder holding the demo recipes: package data, shipped inside the wheel."""
    folder = Path(__file__).resolve().parent / "recipes"
    if not (folder / DEMO_RECIPES[0]).is_file():
        raise HarvesterError(
            f"demo recipes not found in {folder}",
            hint="reinstall harvester: its package data is incomplete",
        )
    return folder


def _free(port: int) -> bool:
    with socket.socket() as probe:
        try:
            probe.bind((LOOPBACK, port))
        except OSError:
            return False
    return True


def run_demo(
    archive: str = "archive",
    season: int | None = None,
    crawl_delay: float = 0.2,
    backfill: str | None = None,
    advance: bool = False,
) -> DemoRun:
    """Serve the demo site and its web archive, harvest every demo recipe into ``archive``,
    stop both.

    Each recipe is harvested for ``season`` (else the current one), then, with ``backfill``
    (a range such as ``DEMO_BACKFILL``), backfilled over those seasons: partitions already
    stored are skipped, retired seasons come from captures. The demo's clock is kept in the
    archive folder (``DEMO_CLOCK``); ``advance`` moves it on first, so the site's latest season
    shows new numbers (a new version, and its diff).
    """
    folder = demo_recipe_dir()
    port = DEMO_PORT if _free(DEMO_PORT) else 0
    archive_port = DEMO_ARCHIVE_PORT if _free(DEMO_ARCHIVE_PORT) else 0
    revision = _clock(archive, advance)
    with (
        DemoServer(port=port, crawl_delay=crawl_delay, revision=revision) as site,
        DemoWebArchive(site=site.base_url, port=archive_port, crawl_delay=crawl_delay) as web,
    ):
        reports = []
        for file_name in DEMO_RECIPES:
            overrides = {"site": site.base_url}
            if season is not None:
                overrides["season"] = str(season)
            recipe = with_demo_archive(load_recipe(folder / file_name, overrides), web.base_url)
            # After --advance the cached copies are still fresh: ask the site again.
            reports.append(
                harvest(recipe, archive=archive, mode="refresh" if advance else "normal")
            )
            if backfill is not None:
                past = load_recipe(folder / file_name, {"site": site.base_url, "season": backfill})
                past = with_demo_archive(past, web.base_url)
                reports.append(harvest(past, archive=archive, skip_stored=True))
        return DemoRun(site.base_url, archive, tuple(reports), web.base_url, revision)


DEMO_CLOCK = ".demo-clock"  # in the archive folder: the demo site's revision, one integer


def _clock(archive: str, advance: bool) -> int:
    """The demo site's revision kept in ``archive`` (0 at first), moved on by one to advance."""
    path = Path(archive) / DEMO_CLOCK
    try:
        revision = int(path.read_text(encoding="ascii").strip() or 0)
    except (OSError, ValueError):
        revision = 0
    if advance:
        revision += 1
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(f"{revision}\n", encoding="ascii")
    return revision


def with_demo_archive(recipe: Recipe, base_url: str) -> Recipe:
    """``recipe`` with its [captures] templates pointing at the demo web archive ``base_url``
    instead of the port the demo recipes name (the archive may have had to take another)."""
    captures = recipe.captures
    if captures is None:
        return recipe

    def moved(template: str | None) -> str | None:
        return template.replace(DEMO_ARCHIVE, base_url, 1) if template else template

    archive = dataclasses.replace(
        captures, timemap=moved(captures.timemap), timegate=moved(captures.timegate)
    )
    return dataclasses.replace(recipe, captures=archive)


def write_demo_site(directory: Path) -> list[Path]:
    """Write every page of the demo site under ``directory`` (to try ``harvester extract`` on)."""
    return write_site(build_league(), directory)


def preview_archive(archive: str, rows: int = 5, season: int | None = None) -> list[TablePreview]:
    """The first ``rows`` rows of every table's latest versions (of one season, if given)."""
    import pyarrow.compute as pc

    store = Archive(archive)
    previews = []
    for dataset in store.datasets():
        for name in store.tables(dataset):
            table = store.read(dataset, name)
            if season is not None and "season" in table.column_names:
                table = table.filter(pc.equal(table.column("season"), season))
            data = data_columns(table)
            shown = table.select(data).slice(0, rows).to_pylist()
            title = f"{dataset}/{name} — {table.num_rows} rows (latest versions), first {rows}"
            previews.append(
                TablePreview(title, tuple(data), tuple(tuple(row.values()) for row in shown))
            )
    return previews
