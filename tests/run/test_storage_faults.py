"""Storage faults end a run with one line and lose nothing; the next run goes on cleanly.

A full disk is reproduced for real, not mocked: the harvest runs in a child process whose
RLIMIT_FSIZE (POSIX setrlimit) lets no file grow past 4 KiB, with SIGXFSZ ignored so that a write
past it fails with EFBIG — the same failing write() a full disk gives with ENOSPC.
"""

from __future__ import annotations

import json
import subprocess
import sys
import textwrap
from pathlib import Path

SCRIPT = textwrap.dedent(
    """
    import resource, signal, sys
    from datetime import UTC, datetime
    from pathlib import Path
    from urllib.parse import urlsplit

    from harvester import harvest, load_recipe
    from harvester.demo.tour import demo_recipe_dir
    from harvester.errors import HarvesterError
    from harvester.fetch.capture import Capture

    class FolderSource:
        def __init__(self, folder):
            self.folder = folder

        async def capture(self, request):
            body = (self.folder / urlsplit(request.url).path.lstrip("/")).read_bytes()
            headers = (("content-type", "text/html"),)
            return Capture(request.url, request.url, 200, headers, body, datetime.now(UTC), "file")

    site, archive, limit = Path(sys.argv[1]), sys.argv[2], int(sys.argv[3])
    recipe = load_recipe(demo_recipe_dir() / "league-players.toml", {"site": "http://127.0.0.1:9"})
    if limit:
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))
    try:
        report = harvest(recipe, archive=archive, source=FolderSource(site))
    except HarvesterError as error:
        print(f"error: {error}", file=sys.stderr)
        sys.exit(error.exit_code)
    print(" ".join(outcome.status for outcome in report.outcomes))
    """
)


def harvest_in_child(site: Path, archive: Path, limit: int) -> subprocess.CompletedProcess[str]:
    args = [sys.executable, "-c", SCRIPT, str(site), str(archive), str(limit)]
    return subprocess.run(args, capture_output=True, text=True, timeout=120, check=False)


def test_a_full_disk_stops_the_run_with_exit_5_and_the_next_run_recovers(tmp_path: Path) -> None:
    from harvester.demo.tour import write_demo_site

    site = tmp_path / "site"
    write_demo_site(site)
    archive = tmp_path / "archive"
    full = harvest_in_child(site, archive, 4096)
    assert full.returncode == 5, full.stderr
    assert full.stderr.count("\n") == 1 and "nothing was published" in full.stderr
    assert "Traceback" not in full.stderr
    assert list(archive.glob("tables/**/part-0.parquet")) == []  # no half version is visible
    # The report of the failed run is kept (it is small enough to fit under the limit).
    (report,) = (archive / "runs").glob("*.jsonl")
    assert json.loads(report.read_text().splitlines()[0])["recipe"] == "league-players"

    again = harvest_in_child(site, archive, 0)
    assert again.returncode == 0, again.stderr
    assert again.stdout.split() == ["new", "new"]
    assert len(list(archive.glob("tables/**/version=1/part-0.parquet"))) == 2
