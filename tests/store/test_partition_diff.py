"""diff_partition: the library call behind `harvester diff`, through a real harvest-like archive."""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path

import pyarrow as pa
import pytest

from harvester import Archive, ArchiveWriter, StoreError, diff_partition
from harvester.run.provenance import RowSource, with_provenance

SOURCE = RowSource(
    "http://127.0.0.1:8650/s.html",
    "http://127.0.0.1:8650/s.html",
    datetime(2026, 12, 1, tzinfo=UTC),
    "live",
    200,
    "ab" * 32,
    "league-standings",
    "cd" * 32,
    "table#standings",
)


def commit(root: Path, clubs: list[str], points: list[int]) -> None:
    data = with_provenance(
        pa.table({"club": clubs, "pts": points}), SOURCE, list(range(len(clubs)))
    )
    with ArchiveWriter(str(root)) as writer:
        writer.commit(
            "league-standings",
            "standings",
            [("season", 2026)],
            data,
            provenance={"run_id": "r", "key": ["club"]},
            key=["club"],
            drift_policy="accept",
        )


def test_latest_against_the_one_before(tmp_path: Path) -> None:
    commit(tmp_path, ["HRN", "DAS", "QUE"], [20, 18, 9])
    commit(tmp_path, ["HRN", "DAS", "VRE"], [22, 18, 7])
    found = diff_partition(Archive(str(tmp_path)), "league-standings", "standings", {})
    assert (found.older.version, found.newer.version) == (1, 2)
    record = found.diff.to_dict()
    # By the key "club": QUE left, VRE arrived, HRN's points changed 20 → 22, DAS unchanged.
    assert record["counts"] == {"added": 1, "removed": 1, "changed": 1, "unchanged": 1}


def test_a_partition_that_does_not_exist_is_named(tmp_path: Path) -> None:
    commit(tmp_path, ["HRN"], [1])
    with pytest.raises(StoreError, match="season=2019"):
        diff_partition(Archive(str(tmp_path)), "league-standings", "standings", {"season": "2019"})
