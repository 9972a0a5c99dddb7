"""The demo tour: read the invented league's current-season tables with the demo recipes.

No network yet: pages are rendered in memory by the generator and passed to the extractor, so
the tour shows what a recipe's table rules make of each page. (The loopback demo server and real
fetching arrive with the fetcher.)
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from urllib.parse import urlsplit

from harvester.demo.league import build_league
from harvester.demo.pages import render_page, write_site
from harvester.errors import HarvesterError
from harvester.extract.table import ExtractedTable, extract_table
from harvester.recipe import load_recipe

__all__ = ["DEMO_RECIPES", "TourStop", "demo_recipe_dir", "run_tour", "write_demo_site"]

DEMO_RECIPES = ("league-players.toml", "league-contracts.toml", "league-standings.toml")


@dataclass(frozen=True)
class TourStop:
    """One table of the tour: which recipe and page it came from, and what was read."""

    recipe: str
    path: str
    result: ExtractedTable


def demo_recipe_dir() -> Path:
    """The folder holding the demo recipes (``recipes/`` at the top of the source tree)."""
    folder = Path(__file__).resolve().parents[2] / "recipes"
    if not (folder / DEMO_RECIPES[0]).is_file():
        raise HarvesterError(
            f"demo recipes not found in {folder}",
            hint="run harvester from a source checkout installed with pip install -e .",
        )
    return folder


def run_tour(season: int | None = None, recipe_dir: Path | None = None) -> list[TourStop]:
    """Extract every table of the demo recipes from the generated pages of one season."""
    league = build_league()
    folder = recipe_dir or demo_recipe_dir()
    stops: list[TourStop] = []
    for file_name in DEMO_RECIPES:
        overrides = {"season": str(season)} if season is not None else None
        recipe = load_recipe(folder / file_name, overrides)
        for page in recipe.plan():
            path = urlsplit(page.url).path
            html = render_page(league, path)
            if html is None:
                raise HarvesterError(
                    f"demo site has no page {path}",
                    hint=f"pick a season from {league.seasons[0].year} to {league.latest}",
                )
            for name in page.tables:
                result = extract_table(html, recipe.table(name), base_url=page.url, source=path)
                stops.append(TourStop(recipe.name, path, result))
    return stops


def write_demo_site(directory: Path) -> list[Path]:
    """Write every page of the demo site under ``directory`` (to try ``harvester extract`` on)."""
    return write_site(build_league(), directory)
