"""`harvester backfill`: every planned partition the archive lacks, resumable after SIGKILL.

Against the loopback demo site (2024-2026 live; 404 for 2021-2023, 410 before) and its web
archive (captures of 2012-2023). What was fetched is judged by each server's own request log,
never by harvester's account of itself. Parameter ranges are inclusive (issue 11's `A..B`).
"""

from __future__ import annotations

import dataclasses
import os
import re
import signal
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

from typer.testing import CliRunner

from harvester.cli import app
from harvester.demo.server import DemoServer
from harvester.demo.tour import DEMO_ARCHIVE
from harvester.demo.web_archive import DemoWebArchive
from harvester.recipe import load_recipe
from harvester.run.harvest import harvest_all

RECIPES = Path(__file__).resolve().parents[2] / "recipes"
RUNNER = CliRunner()
LINE = re.compile(r"^(new|unchanged|skipped|failed|refused)\t([^\t]+)\tseason=(\d{4})\t")


def fast_recipe(tmp_path: Path, name: str, web: DemoWebArchive) -> Path:
    """The bundled recipe, at the demo hosts' own pace, reading this test's web archive."""
    text = (RECIPES / f"{name}.toml").read_text(encoding="utf-8")
    text = text.replace("delay = 0.5", "delay = 0.05").replace(DEMO_ARCHIVE, web.base_url)
    path = tmp_path / "recipes" / f"{name}.toml"
    path.parent.mkdir(exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def lines(stdout: str) -> list[tuple[str, str, int]]:
    found = [LINE.match(line) for line in stdout.splitlines()]
    return [(m[1], m[2], int(m[3])) for m in found if m]


def season_requests(site: DemoServer, kind: str) -> list[int]:
    paths = [record.path for record in site.log]
    return [int(m[1]) for p in paths if (m := re.fullmatch(rf"/seasons/(\d{{4}})/{kind}", p))]


def memento_seasons(web: DemoWebArchive, kind: str) -> list[int]:
    pattern = re.compile(rf"/web/\d{{14}}(?:raw)?/.*/seasons/(\d{{4}})/{kind}")
    return [int(m[1]) for record in web.log if (m := pattern.fullmatch(record.path))]


def test_backfill_plans_the_range_and_skips_what_is_stored(
    tmp_path: Path, demo_site: DemoServer, demo_archive: DemoWebArchive
) -> None:
    recipe = fast_recipe(tmp_path, "league-standings", demo_archive)
    archive = str(tmp_path / "archive")
    args = ["backfill", str(recipe), "--archive", archive, "--param", f"site={demo_site.base_url}"]
    first = RUNNER.invoke(app, [*args, "--param", "season=2021..2025"])
    assert first.exit_code == 0, first.stdout + first.stderr
    # 2021..2025 inclusive; 2021-2023 from captures (the live site answers 404 for them).
    assert sorted(lines(first.stdout)) == [
        ("new", "league-standings/standings", season) for season in range(2021, 2026)
    ]
    assert sorted(season_requests(demo_site, "standings.html")) == list(range(2021, 2026))
    assert sorted(set(memento_seasons(demo_archive, "standings.html"))) == [2021, 2022, 2023]
    demo_site.clear_log()
    demo_archive.clear_log()
    again = RUNNER.invoke(app, [*args, "--param", "season=2020,2022,2024"])
    assert again.exit_code == 0, again.stdout + again.stderr
    assert sorted(lines(again.stdout)) == [
        ("new", "league-standings/standings", 2020),
        ("skipped", "league-standings/standings", 2022),
        ("skipped", "league-standings/standings", 2024),
    ]
    assert season_requests(demo_site, "standings.html") == [2020]  # nothing asked for the rest
    assert set(memento_seasons(demo_archive, "standings.html")) == {2020}
    forced = RUNNER.invoke(app, [*args, "--param", "season=2024..2026", "--force"])
    assert forced.exit_code == 0
    # --force plans stored partitions too: they are read again (here from the HTTP cache).
    assert sorted(lines(forced.stdout), key=lambda line: line[2]) == [
        ("unchanged", "league-standings/standings", 2024),
        ("unchanged", "league-standings/standings", 2025),
        ("new", "league-standings/standings", 2026),
    ]
    assert demo_site.violations() == [] and demo_archive.violations() == []


def test_several_recipes_or_a_folder_run_one_after_another(
    tmp_path: Path, demo_site: DemoServer, demo_archive: DemoWebArchive
) -> None:
    for name in ("league-standings", "league-contracts"):
        fast_recipe(tmp_path, name, demo_archive)
    folder = tmp_path / "recipes"
    archive = str(tmp_path / "archive")
    site = f"site={demo_site.base_url}"
    done = RUNNER.invoke(
        app, ["backfill", str(folder), "--archive", archive, "--param", site,
              "--param", "season=2025..2026"],
    )  # fmt: skip
    assert done.exit_code == 0, done.stdout + done.stderr
    # Folder order is file-name order (contracts, then standings); they run side by side, so
    # their lines interleave as pages finish.
    assert sorted((table, season) for _, table, season in lines(done.stdout)) == [
        ("league-contracts/contracts", 2025),
        ("league-contracts/contracts", 2026),
        ("league-standings/standings", 2025),
        ("league-standings/standings", 2026),
    ]
    unknown = RUNNER.invoke(
        app, ["harvest", str(folder), "--archive", archive, "--param", "club=OSK"]
    )
    assert unknown.exit_code == 2
    assert "none of the recipes has a parameter by that name" in unknown.stderr


def test_quiet_prints_failures_only(
    tmp_path: Path, demo_site: DemoServer, demo_archive: DemoWebArchive
) -> None:
    recipe = fast_recipe(tmp_path, "league-standings", demo_archive)
    archive = str(tmp_path / "archive")
    site = f"site={demo_site.base_url}"
    ok = RUNNER.invoke(app, ["harvest", str(recipe), "--archive", archive, "--param", site, "-q"])
    assert ok.exit_code == 0 and ok.stdout == ""
    bad = tmp_path / "bad.toml"
    bad.write_text(
        recipe.read_text(encoding="utf-8").replace('"table#standings"', '"table#nothing"'),
        encoding="utf-8",
    )
    failed = RUNNER.invoke(
        app, ["harvest", str(bad), "--archive", archive, "--param", site, "--quiet"]
    )
    assert failed.exit_code == 1
    assert [status for status, _, _ in lines(failed.stdout)] == ["failed"]
    assert "run " not in failed.stdout  # no summary line either


def test_a_backfill_killed_with_sigkill_fetches_nothing_again_when_resumed(
    tmp_path: Path, demo_site: DemoServer, demo_archive: DemoWebArchive
) -> None:
    recipe = fast_recipe(tmp_path, "league-standings", demo_archive)
    archive = str(tmp_path / "archive")
    command = [
        sys.executable, "-m", "harvester.cli", "backfill", str(recipe), "--archive", archive,
        "--param", f"site={demo_site.base_url}", "--param", "season=2016..2026",
    ]  # fmt: skip
    env = {**os.environ, "HARVESTER_STATE_DIR": str(tmp_path / "state-1")}
    stored: list[int] = []
    with subprocess.Popen(command, stdout=subprocess.PIPE, text=True, env=env) as child:
        assert child.stdout is not None
        while len(stored) < 4:
            found = LINE.match(child.stdout.readline())
            if found and found[1] == "new":
                stored.append(int(found[3]))
        child.send_signal(signal.SIGKILL)  # no handler can catch it: no clean-up at all
        child.communicate(timeout=30)
    assert child.returncode == -signal.SIGKILL
    demo_site.clear_log()
    demo_archive.clear_log()
    env["HARVESTER_STATE_DIR"] = str(tmp_path / "state-2")  # a killed request's turn is stale
    done = subprocess.run(command, capture_output=True, text=True, env=env, timeout=120)
    assert done.returncode == 0, done.stderr
    resumed = {season: status for status, _, season in lines(done.stdout)}
    assert sorted(resumed) == list(range(2016, 2027))
    for season in stored:
        assert resumed[season] == "skipped"
        assert season not in season_requests(demo_site, "standings.html")
        assert season not in memento_seasons(demo_archive, "standings.html")
    versions = sorted((tmp_path / "archive" / "tables").glob("*/*/season=*/version=*"))
    assert [path.name for path in versions] == ["version=1"] * 11  # each season stored once


def test_recipes_on_different_sites_proceed_side_by_side(
    tmp_path: Path, demo_site_factory: Callable[..., DemoServer]
) -> None:
    first, second = demo_site_factory(), demo_site_factory()  # two hosts (RFC 9309 §2.3: ports)
    recipes = []
    for name, site in (("north-standings", first), ("south-standings", second)):
        loaded = load_recipe(
            RECIPES / "league-standings.toml", {"site": site.base_url, "season": "2024..2026"}
        )
        fetch = dataclasses.replace(loaded.fetch, delay=0.2)
        recipes.append(dataclasses.replace(loaded, name=name, fetch=fetch))
    reports = harvest_all(recipes, archive=str(tmp_path / "archive"))
    assert [[o.status for o in report.outcomes] for report in reports] == [["new"] * 3] * 2
    # Judged by the servers' own clocks: each site's requests began before the other's ended.
    spans = [
        (min(r.wall for r in site.log), max(r.wall for r in site.log)) for site in (first, second)
    ]
    assert spans[0][0] < spans[1][1] and spans[1][0] < spans[0][1]
    assert first.violations() == [] and second.violations() == []
    # One archive, one lock: both recipes' reports are kept.
    assert len(list((tmp_path / "archive" / "runs").glob("*.jsonl"))) == 2
