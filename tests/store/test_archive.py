"""Archive, the read side of the versioned Parquet archive, against files laid out by hand.

Every archive here is written with pyarrow.parquet exactly as the archive contract describes it
(docs/archive.md "Layout", "What a file holds", "Footer metadata"), never by harvester's writer,
so the reader is checked against the contract rather than against the writer's code. Expected rows
are worked out by hand from the files each test writes.
"""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from datetime import UTC, datetime, timedelta, timezone
from pathlib import Path
from urllib.parse import quote

import pandas as pd  # no pandas-stubs in the venv
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from harvester.errors import StoreError
from harvester.store.archive import Archive, VersionInfo

NULL_SEGMENT = "__HIVE_DEFAULT_PARTITION__"  # pyarrow's null_fallback (REFERENCES §7.2)
DS = "league-players"
JAN = "2026-01-10T08:00:00.000000Z"
FEB = "2026-02-10T08:00:00.000000Z"
MAR = "2026-03-10T08:00:00.000000Z"
UTC_US = pa.timestamp("us", tz="UTC")
PROVENANCE = [
    "_source_url", "_final_url", "_captured_at", "_capture_origin", "_memento_datetime",
    "_http_status", "_body_sha256", "_recipe", "_recipe_sha256", "_harvester_version",
    "_table_selector", "_source_row", "_warc_record_id",
]  # fmt: skip


def write_version(
    root: Path,
    table: str,
    partition: Sequence[tuple[str, str | int | None]],
    version: int,
    data: pa.Table | Mapping[str, list[object]],
    committed_at: str = JAN,
    *,
    dataset: str = DS,
    sha: str = "00" * 32,
    recorded: Mapping[str, object] | None = None,
    footer: Mapping[str, str] | None = None,
) -> Path:
    """One ``part-0.parquet`` laid out as the contract says: data, provenance columns, footer.

    ``recorded`` replaces the provenance "partition" object; ``footer`` the whole footer metadata.
    """
    segments = [
        f"{k}={NULL_SEGMENT if v is None else quote(str(v), safe='')}" for k, v in partition
    ]
    folder = root.joinpath("tables", dataset, table, *segments, f"version={version}")
    folder.mkdir(parents=True)
    body = data if isinstance(data, pa.Table) else pa.table(dict(data))
    n, at = body.num_rows, datetime.fromisoformat(committed_at)
    values = [
        pa.array(["http://127.0.0.1:8650/p.html"] * n),
        pa.array(["http://127.0.0.1:8650/p.html"] * n),
        pa.array([at] * n, UTC_US),
        pa.array(["live"] * n),
        pa.nulls(n, UTC_US),
        pa.array([200] * n, pa.int32()),
        pa.array(["ab" * 32] * n),
        pa.array([dataset] * n),
        pa.array(["cd" * 32] * n),
        pa.array(["0.1.0.dev0"] * n),
        pa.array(["table#players"] * n),
        pa.array(range(n), pa.int32()),
        pa.array(["<urn:uuid:00000000-0000-4000-8000-000000000001>"] * n),
    ]
    full = pa.Table.from_arrays([*body.columns, *values], names=[*body.column_names, *PROVENANCE])
    provenance = {
        "run_id": "r1", "dataset": dataset, "table": table, "version": version,
        "partition": dict(partition) if recorded is None else dict(recorded),
        "committed_at": committed_at, "key": [],
    }  # fmt: skip
    meta = footer or {
        "harvester.data_sha256": sha,
        "harvester.committed_at": committed_at,
        "harvester.provenance": json.dumps(provenance),
    }
    path = folder / "part-0.parquet"
    pq.write_table(full.replace_schema_metadata(dict(meta)), path)
    return path


@pytest.fixture
def root(tmp_path: Path) -> Path:
    """players: 2024 v1 (Jan); 2025 v1 (Jan), v2 (Feb, adds `assists`). advanced: 2025 v1 (Mar)."""
    root = tmp_path / "archive"
    write_version(
        root,
        "players",
        [("season", 2024)],
        1,
        {"player": ["Ilvar Dunmoor", "Teo Saskel"], "goals": [31, 18]},
        JAN,
        sha="11" * 32,
    )
    write_version(
        root,
        "players",
        [("season", 2025)],
        1,
        {"player": ["Merek Olv"], "goals": [22]},
        JAN,
        sha="22" * 32,
    )
    write_version(
        root,
        "players",
        [("season", 2025)],
        2,
        {"player": ["Merek Olv", "Sten Araby"], "goals": [23, 4], "assists": [7, 1]},
        FEB,
        sha="33" * 32,
    )
    write_version(root, "advanced", [("season", 2025)], 1, {"player": ["Merek Olv"]}, MAR)
    return root  # fmt: skip


def picked(table: pa.Table, *columns: str) -> list[tuple[object, ...]]:
    return list(zip(*(table[c].to_pylist() for c in columns), strict=True))


# ------------------------------------------------------------------------------------ listing


def test_versions_lists_every_visible_version_sorted(root: Path) -> None:
    listed = Archive(str(root)).versions(DS)
    assert [(v.table, v.partition, v.version) for v in listed] == [
        ("advanced", (("season", "2025"),), 1),
        ("players", (("season", "2024"),), 1),
        ("players", (("season", "2025"),), 1),
        ("players", (("season", "2025"),), 2),
    ]
    last = listed[-1]
    assert last == VersionInfo(
        dataset=DS,
        table="players",
        partition=(("season", "2025"),),
        version=2,
        path=str(root / "tables/league-players/players/season=2025/version=2/part-0.parquet"),
        rows=2,
        committed_at=datetime(2026, 2, 10, 8, tzinfo=UTC),
        data_sha256="33" * 32,
    )
    only_players = Archive(str(root)).versions(DS, "players")
    assert [v.data_sha256 for v in only_players] == ["11" * 32, "22" * 32, "33" * 32]


def test_partitions_sort_numbers_as_numbers(tmp_path: Path) -> None:
    # Design choice (archive.py): integer values sort numerically, so round 9 comes before 10.
    for value in (10, 9, "final"):
        write_version(tmp_path, "t", [("round", value)], 1, {"x": [1]})
    listed = Archive(str(tmp_path)).versions(DS, "t")
    assert [v.partition for v in listed] == [
        (("round", "9"),),
        (("round", "10"),),
        (("round", "final"),),
    ]


def test_debris_and_stray_files_are_not_versions(root: Path) -> None:
    players = root / "tables/league-players/players"
    staged = players / "season=2024/version=2"
    staged.mkdir()
    (staged / ".part-0.parquet.inprogress").write_bytes(b"PAR1 half written")  # crashed commit
    (players / "season=2024/version=3").mkdir()  # empty version folder
    odd = players / "season=2024/version=04"  # not a version name: leading zero
    odd.mkdir()
    (odd / "part-0.parquet").write_bytes(b"not parquet")
    (players / "season=2024/part-0.parquet").write_bytes(b"not in a version folder")
    (root / "tables/league-standings/standings/season=2024/version=1").mkdir(parents=True)
    archive = Archive(str(root))
    assert [v.version for v in archive.versions(DS, "players") if v.partition[0][1] == "2024"] == [
        1
    ]
    latest = archive.read(DS, "players", where={"season": 2024})
    assert latest["version"].to_pylist() == [1, 1]
    assert archive.datasets() == [DS]  # a dataset with only debris is not listed


def test_datasets_and_tables(root: Path) -> None:
    write_version(root, "standings", [("season", 2025)], 1, {"club": ["Brannvik"]},
                  dataset="league-standings")  # fmt: skip
    archive = Archive(str(root))
    assert archive.datasets() == ["league-players", "league-standings"]
    assert archive.tables(DS) == ["advanced", "players"]


def test_unknown_names_are_errors_that_list_what_exists(root: Path, tmp_path: Path) -> None:
    archive = Archive(str(root))
    with pytest.raises(StoreError) as dataset:
        archive.read("league-player", "players")
    assert "no dataset 'league-player'" in str(dataset.value)
    assert "datasets in the archive: league-players" in str(dataset.value)
    with pytest.raises(StoreError) as table:
        archive.versions(DS, "player")
    assert "no table 'player'" in str(table.value) and "advanced, players" in str(table.value)
    with pytest.raises(StoreError, match=r"dataset name .* is not valid"):
        archive.read("../league-players", "players")  # names never become paths unchecked
    with pytest.raises(StoreError, match=r"table name .* is not valid"):
        archive.read(DS, "players/../x")
    with pytest.raises(StoreError, match="no published version"):
        Archive(str(tmp_path / "empty")).tables(DS)


# ------------------------------------------------------------------------------------ reading


def test_read_gives_the_latest_version_of_each_partition(root: Path) -> None:
    table = Archive(str(root)).read(DS, "players")
    assert picked(table, "season", "version", "player", "goals", "assists") == [
        (2024, 1, "Ilvar Dunmoor", 31, None),
        (2024, 1, "Teo Saskel", 18, None),
        (2025, 2, "Merek Olv", 23, 7),
        (2025, 2, "Sten Araby", 4, 1),
    ]
    # Data columns, then provenance columns, then the partition key, then version (docs/archive.md).
    assert table.column_names == ["player", "goals", "assists", *PROVENANCE, "season", "version"]
    assert table.schema.field("version").type == pa.int32()
    assert table.schema.field("_captured_at").type == UTC_US


def test_as_of_picks_per_partition_the_latest_committed_at_or_before(root: Path) -> None:
    archive = Archive(str(root))

    def seen(as_of: datetime) -> list[tuple[object, ...]]:
        return picked(archive.read(DS, "players", as_of=as_of), "season", "version")

    before = archive.read(DS, "players", as_of=datetime(2026, 1, 1, tzinfo=UTC))
    assert before.num_rows == 0
    assert before.column_names == ["player", "goals", "assists", *PROVENANCE, "season", "version"]
    between = datetime(2026, 1, 20, tzinfo=UTC)
    assert seen(between) == [(2024, 1), (2024, 1), (2025, 1)]
    assert seen(datetime(2026, 2, 10, 8, tzinfo=UTC)) == [
        (2024, 1),
        (2024, 1),
        (2025, 2),
        (2025, 2),
    ]
    assert seen(datetime(2026, 2, 10, 7, 59, tzinfo=UTC)) == [(2024, 1), (2024, 1), (2025, 1)]
    # 09:00 at UTC+1 is 08:00Z: the same instant as version 2's commit (compared as instants).
    plus_one = datetime(2026, 2, 10, 9, tzinfo=timezone(timedelta(hours=1)))
    assert seen(plus_one)[-1] == (2025, 2)
    assert seen(datetime(2030, 1, 1, tzinfo=UTC)) == picked(
        archive.read(DS, "players"), "season", "version"
    )
    with pytest.raises(StoreError, match="has no time zone"):
        archive.read(DS, "players", as_of=datetime(2026, 1, 20))


def test_where_filters_partitions_by_value(root: Path) -> None:
    archive = Archive(str(root))
    as_int = archive.read(DS, "players", where={"season": 2025})
    assert picked(as_int, "season", "player") == [(2025, "Merek Olv"), (2025, "Sten Araby")]
    assert archive.read(DS, "players", where={"season": "2025"}).equals(as_int)
    assert archive.read(DS, "players", where={"season": 1999}).num_rows == 0
    with pytest.raises(StoreError) as error:
        archive.read(DS, "players", where={"club": "Brannvik"})
    assert "'club' is not a partition key" in str(error.value) and "season" in str(error.value)


def test_version_reads_that_version_of_each_partition(root: Path) -> None:
    archive = Archive(str(root))
    first = archive.read(DS, "players", version=1)
    assert picked(first, "season", "version", "goals") == [
        (2024, 1, 31),
        (2024, 1, 18),
        (2025, 1, 22),
    ]
    assert "assists" not in first.column_names  # no file read has it
    assert picked(archive.read(DS, "players", version=2), "season", "version") == [
        (2025, 2),
        (2025, 2),
    ]
    assert archive.read(DS, "players", version=7).num_rows == 0
    with pytest.raises(StoreError, match="both as_of and version"):
        archive.read(DS, "players", version=1, as_of=datetime(2026, 3, 1, tzinfo=UTC))


def test_schemas_are_unified_by_name(tmp_path: Path) -> None:
    narrow = pa.table({"goals": pa.array([3], pa.int32()), "player": ["Ilvar Dunmoor"]})
    wide = {"player": ["Merek Olv"], "goals": [5], "minutes": ["61:30"]}
    write_version(tmp_path, "t", [("season", 2024)], 1, narrow)
    write_version(tmp_path, "t", [("season", 2025)], 1, wide)
    table = Archive(str(tmp_path)).read(DS, "t")
    assert table.column_names[:3] == ["goals", "player", "minutes"]  # first seen, data first
    assert table.schema.field("goals").type == pa.int64()  # int32 widened, as DuckDB would
    assert picked(table, "player", "goals", "minutes") == [
        ("Ilvar Dunmoor", 3, None),
        ("Merek Olv", 5, "61:30"),
    ]


def test_incompatible_column_types_are_an_error(tmp_path: Path) -> None:
    write_version(tmp_path, "t", [("season", 2024)], 1, {"goals": [3]})
    write_version(tmp_path, "t", [("season", 2025)], 1, {"goals": ["three"]})
    with pytest.raises(StoreError, match="incompatible column types"):
        Archive(str(tmp_path)).read(DS, "t")


def test_partition_columns_are_typed_from_the_provenance(tmp_path: Path) -> None:
    # docs/archive.md: int64 when every file's provenance gives an integer for the key, else string.
    write_version(tmp_path, "ints", [("season", 2024), ("conference", "north")], 1, {"x": [1]})
    write_version(tmp_path, "ints", [("season", 2025), ("conference", "south")], 1, {"x": [2]})
    ints = Archive(str(tmp_path)).read(DS, "ints", where={"season": 2025, "conference": "south"})
    assert ints.schema.field("season").type == pa.int64()
    assert ints.schema.field("conference").type == pa.string()
    assert picked(ints, "x", "season", "conference") == [(2, 2025, "south")]

    write_version(tmp_path, "texts", [("club", "0042")], 1, {"x": [1]})
    write_version(tmp_path, "texts", [("club", None)], 1, {"x": [2]})
    texts = Archive(str(tmp_path)).read(DS, "texts")
    assert texts.schema.field("club").type == pa.string()
    assert picked(texts, "x", "club") == [(1, "0042"), (2, None)]  # zeros kept; null marker

    write_version(tmp_path, "mixed", [("season", 2024)], 1, {"x": [1]})
    write_version(tmp_path, "mixed", [("season", 2025)], 1, {"x": [2]}, recorded={"season": "2025"})
    mixed = Archive(str(tmp_path)).read(DS, "mixed")
    assert mixed.schema.field("season").type == pa.string()
    assert mixed["season"].to_pylist() == ["2024", "2025"]
    # Reading only the file whose provenance has an integer gives int64 again.
    assert Archive(str(tmp_path)).read(DS, "mixed", where={"season": 2024})["season"].type == (
        pa.int64()
    )


def test_percent_encoded_values_are_decoded(tmp_path: Path) -> None:
    for i, club in enumerate(["Kossa/Ulmby", "HK=Tarn", "Ærøvik", "50% Ravn"]):
        write_version(tmp_path, "t", [("club", club)], 1, {"x": [i]})
    assert (tmp_path / "tables/league-players/t/club=Kossa%2FUlmby").is_dir()  # as laid out
    archive = Archive(str(tmp_path))
    assert {v.partition[0][1] for v in archive.versions(DS)} == {
        "Kossa/Ulmby",
        "HK=Tarn",
        "Ærøvik",
        "50% Ravn",
    }
    assert archive.read(DS, "t", where={"club": "Kossa/Ulmby"})["x"].to_pylist() == [0]


def test_a_table_without_partition_keys(tmp_path: Path) -> None:
    write_version(tmp_path, "clubs", [], 1, {"club": ["Brannvik"]})
    write_version(tmp_path, "clubs", [], 2, {"club": ["Brannvik", "Ulmby"]}, FEB)
    archive = Archive(str(tmp_path))
    assert [(v.partition, v.version) for v in archive.versions(DS)] == [((), 1), ((), 2)]
    table = archive.read(DS, "clubs")
    assert table.column_names == ["club", *PROVENANCE, "version"]
    assert picked(table, "club", "version") == [("Brannvik", 2), ("Ulmby", 2)]
    with pytest.raises(StoreError, match="not partitioned"):
        archive.read(DS, "clubs", where={"season": 2024})


def test_read_pandas(root: Path) -> None:
    frame = Archive(str(root)).read_pandas(DS, "players", where={"season": 2025})
    assert isinstance(frame, pd.DataFrame)
    assert frame["player"].tolist() == ["Merek Olv", "Sten Araby"]
    assert frame["season"].tolist() == [2025, 2025]
    assert str(frame["_captured_at"].dt.tz) == "UTC"  # tz-aware, as pyarrow converts it


def test_root_as_a_file_uri(root: Path) -> None:
    # pyarrow.fs.FileSystem.from_uri: file:// gives the local filesystem (pyarrow docs, fs).
    archive = Archive(root.as_uri())
    listed = archive.versions(DS, "players")
    assert listed[0].path == str(
        root / "tables/league-players/players/season=2024/version=1/part-0.parquet"
    )
    assert archive.read(DS, "players").equals(Archive(str(root)).read(DS, "players"))


def test_a_footer_without_committed_at_is_an_error_naming_the_file(tmp_path: Path) -> None:
    write_version(tmp_path, "t", [("season", 2024)], 1, {"x": [1]}, footer={"other": "1"})
    with pytest.raises(StoreError) as error:
        Archive(str(tmp_path)).versions(DS)
    assert "season=2024/version=1/part-0.parquet" in str(error.value)
    assert "harvester.committed_at" in str(error.value)


def test_a_data_column_named_version_is_an_error(tmp_path: Path) -> None:
    write_version(tmp_path, "t", [("season", 2024)], 1, {"version": ["1.2"]})
    with pytest.raises(StoreError, match="'version'"):
        Archive(str(tmp_path)).read(DS, "t")
