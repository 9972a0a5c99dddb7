"""Archive benchmark: our versioned writer and reader against bare pyarrow.parquet, same tables.

Builds 100 partitions × 1,000 rows of an invented player table (12 typed data columns plus the
archive's 13 provenance columns) and times, as the median of several repeats in this one run:
  write (a) bare: ``pyarrow.parquet.write_table`` of each table to ``season=<s>/part-0.parquet``;
        (b) ours: ``ArchiveWriter.commit`` of each table as version 1 of its partition (lock,
            drift check, metadata, staging file, fsync, rename, folder fsyncs);
        (b') ours with ``os.fsync`` replaced by a no-op in this script only, to show what the
            fsyncs cost on this disk;
        (c) ours again with the same tables: every commit is "unchanged" (footer check only);
  read  (d) bare: ``pyarrow.parquet.read_table`` of each file, then ``concat_tables``;
        (e) ours: ``harvester.store.archive.Archive.read`` of the table (latest version of every
            partition, partition and version columns added), when the read side is present;
        (f) ours via ``pyarrow.dataset`` over the latest versions' files (Hive partitioning, uri
            segment encoding), which needs no read side.
It prints b/a, b'/a, c/a, e/d and f/d.

Usage: .venv/bin/python bench/store_bench.py [--partitions 100] [--rows 1000] [--repeats 5]
"""

from __future__ import annotations

import argparse
import os
import random
import shutil
import statistics
import tempfile
import time
from collections.abc import Callable
from dataclasses import dataclass
from datetime import UTC, date, datetime, timedelta
from pathlib import Path

import pyarrow as pa
import pyarrow.dataset as ds
import pyarrow.parquet as pq

from harvester.store.contract import PROVENANCE_COLUMNS
from harvester.store.writer import ArchiveWriter

CLUBS = ("Elkbay HC", "Marsh Rovers", "Tidewater 07", "Fenwick SC", "Harrowgate", "Colm Vale")
POSITIONS = ("GK", "LW", "RW", "LB", "CB", "RB", "PV")
CAPTURED = datetime(2026, 3, 1, 12, 0, tzinfo=UTC)


def build_table(season: int, rows: int, seed: int) -> pa.Table:
    """One season's invented player table with the provenance columns, deterministic."""
    rng = random.Random(seed)
    url = f"http://127.0.0.1:8000/league/{season}/players.html"
    data: dict[str, pa.Array] = {
        "player": pa.array([f"Player {season}-{i:04d}" for i in range(rows)], pa.string()),
        "player_id": pa.array([f"p{season}{i:05d}" for i in range(rows)], pa.string()),
        "club": pa.array([rng.choice(CLUBS) for _ in range(rows)], pa.string()),
        "pos": pa.array([rng.choice(POSITIONS) for _ in range(rows)], pa.string()),
        "gp": pa.array([rng.randrange(1, 31) for _ in range(rows)], pa.int64()),
        "goals": pa.array([rng.randrange(0, 250) for _ in range(rows)], pa.int64()),
        "shots": pa.array([rng.randrange(0, 400) for _ in range(rows)], pa.int64()),
        "pct": pa.array(
            [rng.uniform(0, 100) if rng.random() > 0.05 else None for _ in range(rows)]
        ),
        "min": pa.array([timedelta(seconds=rng.randrange(0, 150_000)) for _ in range(rows)]),
        "born": pa.array(
            [date(1980 + rng.randrange(25), 1 + rng.randrange(12), 1) for _ in range(rows)]
        ),
        "captain": pa.array([rng.random() < 0.04 for _ in range(rows)], pa.bool_()),
        "salary": pa.array([rng.randrange(20_000, 900_000) * 100 for _ in range(rows)], pa.int64()),
    }
    values: dict[str, object] = {
        "_source_url": url,
        "_final_url": url,
        "_captured_at": CAPTURED,
        "_capture_origin": "cache",
        "_memento_datetime": None,
        "_http_status": 200,
        "_body_sha256": f"{seed:064x}",
        "_recipe": "league-players",
        "_recipe_sha256": "a" * 64,
        "_harvester_version": "0.1.0.dev0",
        "_table_selector": "table#players",
        "_warc_record_id": f"<urn:uuid:{seed:032x}>",
    }
    for name, kind in PROVENANCE_COLUMNS.items():
        if name in values:
            data[name] = pa.array([values[name]] * rows, kind)
    data["_source_row"] = pa.array(range(2, rows + 2), pa.int32())
    return pa.table(data)


def median_time(repeats: int, setup: Callable[[], None], step: Callable[[], object]) -> float:
    """Median seconds of ``step`` over ``repeats`` runs, after one warm-up; ``setup`` untimed."""
    times = []
    for i in range(repeats + 1):
        setup()
        start = time.perf_counter()
        step()
        if i:
            times.append(time.perf_counter() - start)
    return statistics.median(times)


@dataclass(frozen=True)
class Timings:
    """Median seconds of each measurement, lettered as in the module docstring."""

    bare_write: float  # (a)
    ours_write: float  # (b)
    ours_write_without_fsync: float  # (b')
    ours_unchanged: float  # (c)
    bare_read: float  # (d)
    archive_read: float | None  # (e), None when the read side is not present
    dataset_read: float  # (f)


def write_bare(tables: dict[int, pa.Table], root: Path) -> None:
    """(a) Each table with plain ``pyarrow.parquet.write_table``, one folder per season."""
    for s, table in tables.items():
        folder = root / f"season={s}"
        folder.mkdir(parents=True, exist_ok=True)
        pq.write_table(table, folder / "part-0.parquet")


def write_ours(tables: dict[int, pa.Table], root: Path) -> list[str]:
    """(b), (c) Each table committed as a partition of the archive; the commit statuses."""
    with ArchiveWriter(str(root)) as writer:
        return [
            writer.commit(
                "league-players", "players", [("season", s)], t, provenance={"run_id": "bench"}
            ).status
            for s, t in tables.items()
        ]


def read_bare(root: Path) -> pa.Table:
    """(d) Every bare file read back and concatenated."""
    return pa.concat_tables(pq.read_table(p) for p in sorted(root.glob("*/part-0.parquet")))


def read_ours_dataset(root: Path) -> pa.Table:
    """(f) The latest version of every partition through ``pyarrow.dataset``."""
    folder = root / "tables/league-players/players"
    latest: dict[Path, tuple[int, str]] = {}
    for path in folder.glob("season=*/version=*/part-0.parquet"):
        n = int(path.parent.name.removeprefix("version="))
        if n > latest.get(path.parent.parent, (0, ""))[0]:
            latest[path.parent.parent] = (n, path.as_posix())
    hive = ds.HivePartitioning(
        pa.schema([("season", pa.int32()), ("version", pa.int32())]), segment_encoding="uri"
    )
    files = [p for _, p in latest.values()]
    return ds.dataset(
        files, format="parquet", partitioning=hive, partition_base_dir=str(folder)
    ).to_table()


def time_archive_read(root: Path, repeats: int, rows: int) -> float | None:
    """(e) ``Archive.read`` of the table, or None when the read side is not present."""
    try:
        from harvester.store.archive import Archive
    except ImportError:
        return None
    archive = Archive(str(root))
    assert archive.read("league-players", "players").num_rows == rows
    return median_time(repeats, lambda: None, lambda: archive.read("league-players", "players"))


def run(tables: dict[int, pa.Table], bare: Path, ours: Path, repeats: int, rows: int) -> Timings:
    """Time every measurement, in the order of the module docstring."""

    def clear(folder: Path) -> Callable[[], None]:
        return lambda: shutil.rmtree(folder, ignore_errors=True)

    a = median_time(repeats, clear(bare), lambda: write_bare(tables, bare))
    b = median_time(repeats, clear(ours), lambda: write_ours(tables, ours))
    real_fsync = os.fsync
    os.fsync = lambda fd: None  # this script only: how much of (b) the fsyncs are
    try:
        b_nofsync = median_time(repeats, clear(ours), lambda: write_ours(tables, ours))
    finally:
        os.fsync = real_fsync
    c = median_time(repeats, lambda: None, lambda: write_ours(tables, ours))  # all "unchanged"
    assert set(write_ours(tables, ours)) == {"unchanged"}
    d = median_time(repeats, lambda: None, lambda: read_bare(bare))
    f = median_time(repeats, lambda: None, lambda: read_ours_dataset(ours))
    assert read_bare(bare).num_rows == rows and read_ours_dataset(ours).num_rows == rows
    e = time_archive_read(ours, repeats, rows)
    return Timings(a, b, b_nofsync, c, d, e, f)


def report(args: argparse.Namespace, columns: int, size: int, t: Timings) -> None:
    """Print the timings in milliseconds, then the ratios to bare pyarrow."""
    a, b, b_nofsync, c = t.bare_write, t.ours_write, t.ours_write_without_fsync, t.ours_unchanged
    d, e, f = t.bare_read, t.archive_read, t.dataset_read
    print(f"{args.partitions} partitions × {args.rows} rows, {columns} columns")
    print(f"bare files total {size / 1e6:.1f} MB; median of {args.repeats} repeats")
    print(f"(a) bare write_table                    {a * 1000:8.1f} ms")
    print(f"(b) ArchiveWriter.commit, new versions  {b * 1000:8.1f} ms")
    print(f"(b') the same with fsync a no-op         {b_nofsync * 1000:8.1f} ms")
    print(f"(c) ArchiveWriter.commit, all unchanged {c * 1000:8.1f} ms")
    print(f"(d) bare read_table + concat            {d * 1000:8.1f} ms")
    if e is not None:
        print(f"(e) Archive.read (latest versions)      {e * 1000:8.1f} ms")
    print(f"(f) pyarrow.dataset, latest versions    {f * 1000:8.1f} ms")
    print(f"write  b/a  = {b / a:.2f}   b'/a = {b_nofsync / a:.2f}   c/a = {c / a:.2f}")
    read = f"read   f/d  = {f / d:.2f}"
    print(read + (f"   e/d = {e / d:.2f}" if e is not None else "   (read side not present)"))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--partitions", type=int, default=100)
    parser.add_argument("--rows", type=int, default=1000)
    parser.add_argument("--repeats", type=int, default=5)
    args = parser.parse_args()
    seasons = list(range(1927, 1927 + args.partitions))
    tables = {s: build_table(s, args.rows, seed=s) for s in seasons}
    work = Path(tempfile.mkdtemp(prefix="store-bench-"))
    bare, ours = work / "bare", work / "ours"
    timings = run(tables, bare, ours, args.repeats, args.partitions * args.rows)
    size = sum(p.stat().st_size for p in bare.rglob("*.parquet"))
    shutil.rmtree(work)
    report(args, len(tables[seasons[0]].schema), size, timings)


if __name__ == "__main__":
    main()
