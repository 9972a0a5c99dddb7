"""Crash consistency: SIGKILL a committing writer at many points; the archive stays readable.

A child process commits versions of three partitions in a loop, taking and releasing the lock
around each commit. This test kills it with SIGKILL at 24 different delays after it is ready.
The child (and only the child: production code reads no such setting) slows each commit down by
wrapping ``pyarrow.parquet.write_table`` and ``os.fsync`` with sleeps, so the kills land in
different steps: taking the lock, an empty staging file, a whole staging file before its rename,
between the rename and the folder fsync, releasing the lock.

After every kill (sources: POSIX rename() via REFERENCES §7.3, and the archive contract's commit
protocol; pyarrow and DuckDB discovery rules from REFERENCES §7.2):
  - every visible version (``part-0.parquet`` present) reads whole with pyarrow and DuckDB, holds
    the rows its provenance says it should, and has its footer metadata;
  - no staging file is seen by DuckDB's ``**/*.parquet`` glob or by pyarrow.dataset discovery;
  - each partition's visible versions are 1..n with no gap;
  - a lock left by the killed pid is taken over by the next writer, which says so.
At the end a writer in this process commits once more (version n+1) and then the same data again
("unchanged").
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
import time
from collections import Counter
from pathlib import Path

import duckdb
import pyarrow as pa
import pyarrow.dataset as ds
import pyarrow.parquet as pq

from harvester.store.writer import ArchiveWriter

KILLS = 24
PARTITIONS = 3
SLOW_S = 0.01  # each write_table sleeps this before and after writing; each fsync a quarter

CHILD = r"""
import os, sys, time
from datetime import UTC, datetime

import pyarrow as pa
import pyarrow.parquet as pq

# Read only by this test child: slow each commit down so kills land inside its steps.
SLOW = float(os.environ["HARVESTER_CRASH_TEST_SLOW_S"])
real_write, real_fsync = pq.write_table, os.fsync

def slow_write(*args, **kwargs):
    time.sleep(SLOW)  # the staging file exists and is empty
    real_write(*args, **kwargs)
    time.sleep(SLOW)  # the staging file is whole but not renamed yet

def slow_fsync(fd):
    time.sleep(SLOW / 4)
    real_fsync(fd)

pq.write_table, os.fsync = slow_write, slow_fsync

from harvester.store.contract import PROVENANCE_COLUMNS
from harvester.store.writer import ArchiveWriter

root, run = sys.argv[1], int(sys.argv[2])
T = datetime(2026, 3, 1, 12, 0, tzinfo=UTC)

def harvest(seq):
    rows = 2 + seq % 5
    cols = {
        "n": pa.array([run * 100_000 + seq * 10 + r for r in range(rows)], pa.int64()),
        "label": pa.array([f"r{run}-{seq}-{r}" for r in range(rows)], pa.string()),
    }
    fixed = {"_captured_at": T, "_memento_datetime": None, "_http_status": 200, "_source_row": 0}
    for name, kind in PROVENANCE_COLUMNS.items():
        cols[name] = pa.array([fixed.get(name, "x")] * rows, kind)
    cols["_source_row"] = pa.array(range(rows), pa.int32())
    return pa.table(cols)

print("ready", flush=True)
for seq in range(100_000):
    with ArchiveWriter(root) as writer:
        if writer.took_over:
            print("took-over:", writer.took_over, flush=True)
        writer.commit(
            "crash", "t", [("p", seq % 3)], harvest(seq),
            provenance={"run_id": f"run-{run}", "seq": seq}, drift_policy="accept",
        )
"""


def expected_n(run: int, seq: int) -> list[int]:
    """The child's n column for one commit, worked out from its formula above."""
    return [run * 100_000 + seq * 10 + r for r in range(2 + seq % 5)]


def run_and_kill(root: Path, script: Path, run: int, delay: float) -> tuple[int, str]:
    """Start a child writer, SIGKILL it ``delay`` s after it is ready; its pid and output."""
    env = {**os.environ, "HARVESTER_CRASH_TEST_SLOW_S": str(SLOW_S)}
    with subprocess.Popen(
        [sys.executable, str(script), str(root), str(run)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=env,
    ) as child:
        assert child.stdout is not None
        assert child.stdout.readline() == "ready\n"
        time.sleep(delay)
        child.kill()  # SIGKILL: no cleanup handler runs
        out, err = child.communicate(timeout=30)  # also reaps it, so its pid is dead, not a zombie
        assert child.returncode == -9, f"child {run} ended by itself: {err}"
        assert err == ""
        return child.pid, out


def state_after_kill(tables: Path) -> str:
    """Which step the kill interrupted, as far as the files show."""
    staging = list(tables.rglob(".part-0.parquet.inprogress"))
    if staging:
        return "staging file, empty" if staging[0].stat().st_size == 0 else "staging file, whole"
    if any(not (d / "part-0.parquet").exists() for d in tables.rglob("version=*")):
        return "empty version folder"
    return "no debris"


def check_archive(root: Path) -> dict[int, int]:
    """Every check on what readers see; returns the highest visible version per partition."""
    table_dir = root / "tables/crash/t"
    visible = sorted(p.as_posix() for p in root.rglob("part-0.parquet"))
    glob = f"{(root / 'tables').as_posix()}/**/*.parquet"
    # DuckDB's glob matches no staging file (REFERENCES §7.2: it does not skip dot files, but
    # ".inprogress" does not end in ".parquet")
    globbed = sorted(
        f for (f,) in duckdb.connect().execute("SELECT file FROM glob(?)", [glob]).fetchall()
    )
    assert globbed == visible
    if not visible:
        return {}
    # pyarrow discovery skips "."-prefixed names (REFERENCES §7.2)
    assert sorted(ds.dataset(table_dir, format="parquet", partitioning="hive").files) == visible
    versions: dict[int, list[int]] = {}
    total = 0
    for path in visible:
        meta = pq.read_metadata(path).metadata
        assert {b"harvester.data_sha256", b"harvester.committed_at"} <= set(meta)
        prov = json.loads(meta[b"harvester.provenance"])
        run = int(prov["run_id"].removeprefix("run-"))
        table = pq.read_table(path)  # reads every page: a torn file would raise here
        assert table.column("n").to_pylist() == expected_n(run, prov["seq"])
        (count,) = duckdb.connect().execute(
            "SELECT count(*) FROM read_parquet(?)", [path]
        ).fetchone() or (0,)
        assert count == table.num_rows
        found = re.search(r"/p=(\d+)/version=(\d+)/part-0\.parquet$", path)
        assert found is not None
        assert prov["partition"] == {"p": int(found.group(1))}
        assert prov["version"] == int(found.group(2))
        versions.setdefault(int(found.group(1)), []).append(int(found.group(2)))
        total += table.num_rows
    for partition, numbers in versions.items():
        assert sorted(numbers) == list(range(1, len(numbers) + 1)), f"gap in p={partition}"
    # DuckDB reads the whole table at once without tripping over anything half-written
    (rows,) = duckdb.connect().execute(
        "SELECT count(*) FROM read_parquet(?, hive_partitioning=true)", [glob]
    ).fetchone() or (0,)
    assert rows == total
    return {p: max(v) for p, v in versions.items()}


def lock_pid(root: Path) -> int | None:
    try:
        return int(json.loads((root / ".lock").read_text())["pid"])
    except (FileNotFoundError, ValueError, KeyError):
        return None


def test_sigkill_at_many_points_leaves_a_consistent_archive(tmp_path: Path) -> None:
    root = tmp_path / "archive"
    script = tmp_path / "child.py"
    script.write_text(CHILD)
    stale: int | None = None  # the pid of a killed child whose lock file was left behind
    takeovers = 0
    states: Counter[str] = Counter()
    for run in range(KILLS):
        delay = 0.002 + run * 0.0231  # 2 ms … 0.53 s: out of step with a ~40 ms commit
        pid, out = run_and_kill(root, script, run, delay)
        if stale is not None and f"stale lock of pid {stale} on host" in out:
            takeovers += 1
        states[state_after_kill(root / "tables")] += 1
        check_archive(root)
        left = lock_pid(root)
        if left is not None and left != stale:
            assert left == pid  # nobody else writes here
            stale = left
    # Kills landed in different steps, and some mid-commit (a staging file was left).
    print(f"states after the kills: {dict(states)}; stale locks taken over: {takeovers}")
    assert len(states) >= 2, states
    assert states["staging file, empty"] + states["staging file, whole"] >= 1, states
    assert takeovers >= 3, f"only {takeovers} stale locks taken over; states {states}"

    highest = check_archive(root)
    with ArchiveWriter(str(root)) as writer:
        assert lock_pid(root) == os.getpid()
        if stale is not None and writer.took_over is not None:
            assert f"pid {stale}" in writer.took_over
        latest = root / f"tables/crash/t/p=0/version={highest[0]}/part-0.parquet"
        data = pq.read_table(latest)
        seq = json.loads(pq.read_metadata(latest).metadata[b"harvester.provenance"])["seq"]
        # new values, same rows and types: what a child of run 999 would commit for this seq
        changed = data.set_column(0, "n", pa.array(expected_n(999, seq), pa.int64()))
        prov = {"run_id": "run-999", "seq": seq}
        new = writer.commit("crash", "t", [("p", 0)], changed, provenance=prov)
        again = writer.commit("crash", "t", [("p", 0)], changed, provenance=prov)
    assert (new.status, new.version) == ("new", highest[0] + 1)
    assert (again.status, again.version) == ("unchanged", highest[0] + 1)
    assert again.message.endswith(f"unchanged, checked against version {highest[0] + 1}")
    assert check_archive(root)[0] == highest[0] + 1
    assert not (root / ".lock").exists()
    # the debris of partition 0 is gone once it had its next version
    assert not list((root / "tables/crash/t/p=0").rglob(".part-0.parquet.inprogress"))
