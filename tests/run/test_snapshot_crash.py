"""SIGKILL while the snapshot archive is being written: readable files, and a rebuild that agrees.

A real harvest runs in a child process against the loopback demo site and is killed with SIGKILL
(which no handler can catch) at a random moment, five times over one archive. The child writes
its WARC files slowly — 256 bytes at a time, each flushed — so kills often land inside records.
Each run salvages the ``.open`` file the kill before it left; afterwards every complete file
passes `warcio check`, `reindex` salvages the last kill's file, after which every file passes
too; every index entry leads to its
record, and every row of every committed version leads to a record whose payload hashes to the
row's ``_body_sha256`` (WARC 1.1 §5.9; the row contract in docs/archive.md).
"""

from __future__ import annotations

import hashlib
import os
import random
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path
from subprocess import PIPE

import pyarrow.dataset as ds

from harvester.demo.server import DemoServer
from harvester.snapshots.index import SnapshotIndex
from harvester.snapshots.reader import read_record
from harvester.snapshots.scan import reindex
from tests.warc_check import warcio_check as run_warcio_check

RECIPES = Path(__file__).resolve().parents[2] / "recipes"
KILLS = 5

CHILD = r"""
import sys, time
from pathlib import Path

from harvester.recipe import load_recipe
from harvester.run import harvest
from harvester.snapshots import warc


class Slow:
    '''The WARC file, written 256 bytes at a time: a kill lands inside a record.'''

    def __init__(self, raw):
        self.raw = raw

    def write(self, data):
        for start in range(0, len(data), 256):
            self.raw.write(data[start : start + 256])
            self.raw.flush()
            time.sleep(0.002)
        return len(data)

    def __getattr__(self, name):
        return getattr(self.raw, name)


start_file = warc.WarcSnapshotWriter._start_file


def slow_start(self):
    start_file(self)
    self._writer.out.out = Slow(self._out)  # under the gzip members, on the file itself


warc.WarcSnapshotWriter._start_file = slow_start
recipe_file, site, archive = sys.argv[1:4]
recipe = load_recipe(Path(recipe_file), {"site": site})
harvest(recipe, archive=archive, every_value=True,
        on_outcome=lambda outcome: print(outcome.line(), flush=True))
"""


def test_sigkill_while_writing_leaves_files_a_rebuild_makes_consistent(tmp_path: Path) -> None:
    fast = tmp_path / "league-players.toml"  # the bundled recipe at the site's own pace
    text = (RECIPES / "league-players.toml").read_text()
    text = text.replace("delay = 0.5", "delay = 0.01").replace("from = 2012", "from = 2024")
    fast.write_text(text)  # the seasons the live demo site still serves
    script = tmp_path / "child.py"
    script.write_text(CHILD)
    archive = tmp_path / "archive"
    rng = random.Random(1202)
    with DemoServer(crawl_delay=0.01) as site:
        for run in range(KILLS):
            # No cache: each run asks the site again and writes, rather than reading copies.
            shutil.rmtree(archive / "cache", ignore_errors=True)
            args = [sys.executable, str(script), str(fast), site.base_url, str(archive)]
            # A pace file of its own: a killed request's turn would hold the next run back.
            env = {**os.environ, "HARVESTER_STATE_DIR": str(tmp_path / f"state-{run}")}
            with subprocess.Popen(args, stdout=PIPE, stderr=PIPE, env=env) as child:
                assert child.stdout is not None
                for _ in range(rng.randint(1, 5)):  # a table line: its page's records are written
                    child.stdout.readline()
                time.sleep(rng.uniform(0.0, 0.05))
                child.send_signal(signal.SIGKILL)
                _, err = child.communicate(timeout=30)
            assert child.returncode == -signal.SIGKILL, err.decode()
    snapshots = archive / "snapshots"
    warc_dir = snapshots / "warc"
    for path in sorted(warc_dir.glob("*.warc.gz")):
        warcio_check(path)  # what was finished before a kill is whole
    # Each run salvaged the file the kill before it left; the last kill's file is still open.
    (left,) = warc_dir.glob("*.open")
    assert len(list(warc_dir.glob("*.warc.gz"))) == KILLS - 1
    done = reindex(snapshots)
    assert done.damaged == () and done.held_open == ()
    assert done.salvaged == (left.name.removesuffix(".open"),)
    assert list(warc_dir.glob("*.open")) == []
    for path in sorted(warc_dir.glob("*.warc.gz")):
        warcio_check(path)  # salvaged files too: cut at their last whole record
    index = SnapshotIndex.load(snapshots)
    for entry in index.entries():
        stored = read_record(warc_dir / entry.file, entry.offset)
        assert stored.warc_header("WARC-Record-ID") == entry.record_id
    rows = ds.dataset(archive / "tables", format="parquet").to_table(
        columns=["_warc_record_id", "_body_sha256"]
    )
    assert rows.num_rows > 0  # versions were committed between the kills
    pairs = zip(*(rows.column(n).to_pylist() for n in rows.column_names), strict=True)
    for record_id, body_sha256 in set(pairs):
        holder = index.record(record_id)
        assert holder is not None, record_id
        payload = read_record(warc_dir / holder.file, holder.offset).payload
        assert hashlib.sha256(payload).hexdigest() == body_sha256


def warcio_check(path: Path) -> None:
    done = run_warcio_check(path)
    assert done.returncode == 0, done.stdout + done.stderr
