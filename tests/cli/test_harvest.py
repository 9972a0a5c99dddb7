"""``harvester harvest``: one line per table, exit status 1 on a failure, the cache modes.

Against the real demo server on 127.0.0.1; where the subject is what the command prints or
writes, not how it fetches, the run replays a committed cassette (``--replay``,
tests/data/cassettes/) instead.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import pytest
from typer.testing import CliRunner

from harvester.cli import app
from harvester.demo.league import build_league
from harvester.demo.server import DemoServer

RECIPES = Path(__file__).resolve().parents[2] / "recipes"
Factory = Callable[..., DemoServer]


def test_harvest_command_prints_one_line_per_table(
    cassette: Callable[[str], Path], cassette_site: str, tmp_path: Path
) -> None:
    result = CliRunner().invoke(
        app,
        [
            "harvest",
            str(RECIPES / "league-standings.toml"),
            "--archive",
            str(tmp_path),
            "--param",
            f"site={cassette_site}",
            "--replay",
            str(cassette("league-standings-2026")),
        ],
    )
    assert result.exit_code == 0, result.stderr
    first = result.stdout.splitlines()[0].split("\t")
    assert first[:3] == ["new", "league-standings/standings", "season=2026"]
    clubs = len(build_league().season(2026).standings)
    assert first[3] == f"{clubs} rows, version 1"


def test_harvest_command_exits_non_zero_when_a_table_fails(
    demo_site: DemoServer, tmp_path: Path
) -> None:
    result = CliRunner().invoke(
        app,
        [
            "harvest",
            str(RECIPES / "league-players.toml"),
            "--archive",
            str(tmp_path),
            "--param",
            f"site={demo_site.base_url}",
            "--param",
            "season=2013",
        ],
    )
    assert result.exit_code == 1
    assert result.stdout.startswith("failed\tleague-players/players")


@pytest.mark.parametrize("flag", ["--offline", "--refresh"])
def test_cache_modes_reach_the_fetcher(demo_site: DemoServer, tmp_path: Path, flag: str) -> None:
    args = ["harvest", str(RECIPES / "league-contracts.toml"), "--archive", str(tmp_path)]
    args += ["--param", f"site={demo_site.base_url}"]
    assert CliRunner().invoke(app, args).exit_code == 0
    demo_site.clear_log()
    # No pause: the second run knows from the archive's cache when the first one last asked.
    result = CliRunner().invoke(app, [*args, flag])
    assert result.exit_code == 0, result.stderr
    requests = demo_site.requests_for("/seasons/2026/contracts.html")
    if flag == "--offline":
        assert requests == []
    else:
        assert [record.status for record in requests] == [304]


@pytest.mark.parametrize(("sent", "status"), [(signal.SIGTERM, 143), (signal.SIGINT, 130)])
def test_a_signal_stops_the_run_at_a_safe_point_and_keeps_the_report(
    demo_site_factory: Factory, tmp_path: Path, sent: signal.Signals, status: int
) -> None:
    # A real process, stopped by a real signal once its first table is reported; the site's
    # Crawl-delay of 0.5 s keeps 14 more pages to go.
    site = demo_site_factory(crawl_delay=0.5)
    archive = tmp_path / "archive"
    script = Path(sys.executable).with_name("harvester")
    args = [str(script), "harvest", str(RECIPES / "league-standings.toml"), "--all"]
    args += ["--param", f"site={site.base_url}", "--archive", str(archive)]
    env = {**os.environ, "HARVESTER_CONFIG": str(tmp_path / "none.toml")}
    with subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                          env=env) as process:  # fmt: skip
        assert process.stdout is not None and process.stderr is not None
        first = process.stdout.readline()
        process.send_signal(sent)
        # Read on through the same buffered reader: readline() may already hold the next
        # lines, which communicate() would skip (it reads the pipes' descriptors directly).
        rest, err = process.stdout.read(), process.stderr.read()
        process.wait(timeout=60)
    assert first.startswith(("new\t", "failed\t")), first + err
    assert process.returncode == status, err  # the shell's 128 + signal number
    assert err.count("\n") == 1 and "interrupted after " in err
    done = int(err.split("interrupted after ", 1)[1].split(" ", 1)[0])
    assert f"of 15 pages ({sent.name})" in err and 1 <= done < 15
    # Every page counted as done has its line; the report says the same, and the lock is gone.
    assert len([first, *rest.splitlines()]) == done
    (report,) = (archive / "runs").glob("*.jsonl")
    header = json.loads(report.read_text().splitlines()[0])
    assert header["interrupted_by"] == sent.name and header["pages_done"] == done
    assert not (archive / ".lock").exists()


def test_versions_json_writes_partition_values_as_the_run_report_does(
    cassette: Callable[[str], Path], cassette_site: str, tmp_path: Path
) -> None:
    args = ["harvest", str(RECIPES / "league-standings.toml"), "--archive", str(tmp_path)]
    args += ["--param", f"site={cassette_site}"]
    replayed = CliRunner().invoke(app, [*args, "--replay", str(cassette("league-standings-2026"))])
    assert replayed.exit_code == 0, replayed.stderr
    (report,) = (tmp_path / "runs").glob("*.jsonl")
    outcome = json.loads(report.read_text().splitlines()[1])
    listed = CliRunner().invoke(
        app, ["versions", "league-standings", "--archive", str(tmp_path), "--format", "json"]
    )
    (version,) = json.loads(listed.stdout)
    assert outcome["partition"] == {"season": 2026}  # a JSON number in the run report …
    assert version["partition"] == {"season": 2026}  # … and in the version listing alike


def test_a_crawl_delay_over_max_wait_skips_the_site_and_says_how_to_accept_it(
    demo_site_factory: Factory, tmp_path: Path
) -> None:
    site = demo_site_factory(crawl_delay=2.0)
    args = ["harvest", str(RECIPES / "league-standings.toml"), "--archive", str(tmp_path)]
    args += ["--param", f"site={site.base_url}", "--max-wait", "1"]
    result = CliRunner().invoke(app, args)
    assert result.exit_code == 1
    line = result.stdout.splitlines()[0]
    assert line.startswith("failed\tleague-standings/standings")
    assert "asks for 2 s between requests" in line and "raise the wait cap (max_wait)" in line
    assert [record.path for record in site.log] == ["/robots.txt"]  # the page was never asked


def test_a_long_wait_is_announced_on_stderr(demo_site_factory: Factory, tmp_path: Path) -> None:
    # More than five seconds between robots.txt and the page: one line on stderr says so.
    site = demo_site_factory(crawl_delay=5.2)
    args = ["harvest", str(RECIPES / "league-standings.toml"), "--archive", str(tmp_path)]
    result = CliRunner().invoke(app, [*args, "--param", f"site={site.base_url}"])
    assert result.exit_code == 0, result.stderr
    notices = [line for line in result.stderr.splitlines() if line.startswith("waiting ")]
    assert len(notices) == 1 and site.base_url in notices[0]


def test_a_dead_site_says_so_rather_than_blaming_the_recipe(tmp_path: Path) -> None:
    # Port 9 on loopback: nothing listens. RFC 9309 §2.3.1.4: unreachable robots.txt → disallow.
    args = ["harvest", str(RECIPES / "league-standings.toml"), "--archive", str(tmp_path)]
    result = CliRunner().invoke(app, [*args, "--param", "site=http://127.0.0.1:9"])
    assert result.exit_code == 1
    line = result.stdout.splitlines()[0]
    assert "robots.txt unreachable" in line
    assert "did not answer for its robots.txt; check the address or try later" in line
    assert "leave this page out of the recipe" not in line
