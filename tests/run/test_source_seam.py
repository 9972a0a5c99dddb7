"""The source seam: ``harvest`` takes any ``PageSource``, and the run never asks what it is.

The source here is the ten-line example of the contributor guide (DEVELOPERS.md), run as it is
written there: pages saved in a folder, no network and no contact needed.
"""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path
from urllib.parse import urlsplit

import pyarrow.parquet as pq
import pytest

from harvester import PageRequest, PageSource, harvest, load_recipe
from harvester.demo.tour import demo_recipe_dir, write_demo_site
from harvester.errors import ArchiveUnwritableError, FetchError
from harvester.fetch.capture import Capture
from harvester.fetch.client import Fetcher
from harvester.fetch.identity import Identity


class FolderSource:
    """Pages saved under a folder, one file per URL path (for a test or a demo)."""

    def __init__(self, folder: Path) -> None:
        self.folder = folder

    async def capture(self, request: PageRequest) -> Capture:
        file = self.folder / urlsplit(request.url).path.lstrip("/")
        if not file.is_file():
            raise FetchError(
                "not in the folder", url=request.url, hint=f"save it under {self.folder}"
            )
        return Capture(request.url, request.url, 200, (("content-type", "text/html"),),
                       file.read_bytes(), datetime.now(UTC), "file")  # fmt: skip


def test_both_the_example_and_the_live_fetcher_are_page_sources() -> None:
    assert isinstance(FolderSource(Path(".")), PageSource)
    assert isinstance(Fetcher(Identity.from_contact("analyst@example.org")), PageSource)


def test_harvest_reads_pages_from_any_source(tmp_path: Path) -> None:
    site = tmp_path / "site"
    write_demo_site(site)
    # A port nothing listens on: were the run to fetch live, every table would fail.
    recipe = load_recipe(
        demo_recipe_dir() / "league-standings.toml", {"site": "http://127.0.0.1:9"}
    )
    archive = tmp_path / "archive"
    report = harvest(recipe, archive=str(archive), source=FolderSource(site))
    assert [outcome.status for outcome in report.outcomes] == ["new"]
    written = archive / "tables/league-standings/standings/season=2026/version=1/part-0.parquet"
    origins = set(pq.read_table(written).column("_capture_origin").to_pylist())
    assert origins == {"file"}  # the source's own word for where the bytes came from
    assert not (archive / "cache").exists()  # no live fetcher was built


def test_a_page_the_source_lacks_fails_only_its_tables(tmp_path: Path) -> None:
    site = tmp_path / "site"
    write_demo_site(site)
    (site / "seasons/2025/standings.html").unlink()
    recipe = load_recipe(
        demo_recipe_dir() / "league-standings.toml", {"site": "http://127.0.0.1:9"}
    )
    report = harvest(
        recipe, archive=str(tmp_path / "a"), source=FolderSource(site), every_value=True
    )
    statuses = {outcome.partition["season"]: outcome.status for outcome in report.outcomes}
    # The live demo site keeps three seasons; the written site has the pages of every season.
    assert statuses[2025] == "failed" and statuses[2026] == "new" and statuses[2024] == "new"
    failed = next(outcome for outcome in report.outcomes if outcome.status == "failed")
    assert "not in the folder" in failed.message and "seasons/2025/standings.html" in failed.message


class BrokenSource(FolderSource):
    """Like FolderSource, but one page makes the source itself fail in a way nobody foresaw."""

    async def capture(self, request: PageRequest) -> Capture:
        if "/2025/" in request.url:
            raise RuntimeError("decoder state\nlost")
        return await super().capture(request)


def test_an_unforeseen_failure_is_one_pages_failed_line_and_the_run_goes_on(
    tmp_path: Path,
) -> None:
    site = tmp_path / "site"
    write_demo_site(site)
    recipe = load_recipe(
        demo_recipe_dir() / "league-standings.toml", {"site": "http://127.0.0.1:9"}
    )
    archive = tmp_path / "archive"
    report = harvest(recipe, archive=str(archive), source=BrokenSource(site), every_value=True)
    statuses = {outcome.partition["season"]: outcome.status for outcome in report.outcomes}
    assert statuses[2025] == "failed" and statuses[2024] == "new" and statuses[2026] == "new"
    failed = next(outcome for outcome in report.outcomes if outcome.status == "failed")
    assert failed.message.startswith("unexpected RuntimeError: decoder state lost")
    assert "\n" not in failed.message
    assert (archive / "runs" / f"{report.run_id}.jsonl").is_file()  # the report is kept
    assert report.pages_done == report.pages_planned == 15


def test_an_archive_that_cannot_be_written_stops_the_run_with_one_line(tmp_path: Path) -> None:
    site = tmp_path / "site"
    write_demo_site(site)
    in_the_way = tmp_path / "plain-file"
    in_the_way.write_text("not a folder")
    recipe = load_recipe(
        demo_recipe_dir() / "league-standings.toml", {"site": "http://127.0.0.1:9"}
    )
    with pytest.raises(ArchiveUnwritableError) as caught:
        harvest(recipe, archive=str(in_the_way / "archive"), source=FolderSource(site))
    assert "cannot take its lock" in str(caught.value) and "\n" not in str(caught.value)
    assert caught.value.exit_code == 5
    assert in_the_way.read_text() == "not a folder"  # nothing lost


def test_a_damaged_latest_version_fails_its_table_alone(tmp_path: Path) -> None:
    site = tmp_path / "site"
    write_demo_site(site)
    recipe = load_recipe(demo_recipe_dir() / "league-players.toml", {"site": "http://127.0.0.1:9"})
    archive = tmp_path / "archive"
    harvest(recipe, archive=str(archive), source=FolderSource(site))
    latest = archive / "tables/league-players/players/season=2026/version=1/part-0.parquet"
    latest.write_bytes(latest.read_bytes()[:100])  # cut short: no footer any more
    report = harvest(recipe, archive=str(archive), source=FolderSource(site))
    outcomes = {outcome.table: outcome for outcome in report.outcomes}
    assert outcomes["advanced"].status == "unchanged"  # the other table of the page goes on
    assert outcomes["players"].status == "failed"
    assert "cannot read the latest version" in outcomes["players"].message
    assert str(latest) in outcomes["players"].message
    assert "move its version folder out of the archive" in outcomes["players"].message
    assert len(latest.read_bytes()) == 100  # nothing was written over the damaged file
