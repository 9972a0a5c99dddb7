"""Tests for the archive's paths: partition value encoding, partition folders, version names, roots.

Sources: RFC 3986 §2.1 (percent-encoding: "%" then two hex digits of each UTF-8 octet) and §2.3
(unreserved characters ALPHA DIGIT "-" "." "_" "~" are left as they are), the Python docs of
``urllib.parse.quote``, and pyarrow's ``HivePartitioning(segment_encoding="uri")`` used as the
reference encoder (REFERENCES §7.2). Expected strings are worked out by hand from those rules.
"""

from __future__ import annotations

import os
from pathlib import Path

import pyarrow as pa
import pyarrow.dataset as ds
import pyarrow.fs as pafs
import pytest

from harvester.errors import StoreError
from harvester.store.contract import NULL_SEGMENT
from harvester.store.layout import (
    decode_value,
    encode_value,
    join,
    local_path,
    open_root,
    parse_version,
    partition_path,
    version_dir,
)

# (value, folder text worked out by hand: RFC 3986 §2.1 encodes each UTF-8 octet, §2.3 keeps
# unreserved characters; quote(safe="") also encodes "/")
HOSTILE = [
    ("a/b", "a%2Fb"),  # "/" is 0x2F
    ("x=y", "x%3Dy"),  # "=" is 0x3D
    (" ", "%20"),
    ("%", "%25"),
    ("..", ".."),  # "." is unreserved; the folder is "k=..", not the parent folder
    (".", "."),
    ("naïve ✓", "na%C3%AFve%20%E2%9C%93"),  # ï = U+00EF = C3 AF; ✓ = U+2713 = E2 9C 93
    ("", ""),
    (None, "__HIVE_DEFAULT_PARTITION__"),  # pyarrow's null_fallback default (REFERENCES §7.2)
    ("back\\slash", "back%5Cslash"),  # "\" is 0x5C
    (2026, "2026"),
    (-3, "-3"),
]


@pytest.mark.parametrize(("value", "segment"), HOSTILE)
def test_encode_value_percent_encodes_every_octet_outside_unreserved(
    value: str | int | None, segment: str
) -> None:
    assert encode_value(value) == segment  # RFC 3986 §2.1, §2.3


@pytest.mark.parametrize(("value", "segment"), HOSTILE)
def test_decode_value_inverts_encoding(value: str | int | None, segment: str) -> None:
    # Integers come back as their text: a folder name has no type (REFERENCES §7.2).
    assert decode_value(segment) == (None if value is None else str(value))


def test_folder_names_equal_pyarrows_own_hive_uri_encoding(tmp_path: Path) -> None:
    # Reference: pyarrow writes the same values with HivePartitioning(segment_encoding="uri").
    values = [v for v, _ in HOSTILE if not isinstance(v, int)] + ["~!*'()#?&+,;:@$[]\"<>|^`{}"]
    table = pa.table({"k": pa.array(values, pa.string()), "i": list(range(len(values)))})
    partitioning = ds.HivePartitioning(pa.schema([("k", pa.string())]), segment_encoding="uri")
    ds.write_dataset(table, tmp_path, format="parquet", partitioning=partitioning)
    written = sorted(os.listdir(tmp_path))
    assert written == sorted(f"k={encode_value(v)}" for v in values)
    # by hand for the punctuation string: "~" is unreserved (RFC 3986 §2.3), the rest encoded
    assert "k=~%21%2A%27%28%29%23%3F%26%2B%2C%3B%3A%40%24%5B%5D%22%3C%3E%7C%5E%60%7B%7D" in written


def test_literal_null_marker_text_is_refused() -> None:
    # Documented choice (layout docstring): the text would share None's folder, and its escaped
    # form "%5F_HIVE…" is read as null by pyarrow (decode, then compare) but as text by DuckDB.
    with pytest.raises(StoreError, match="reserved for missing values"):
        encode_value(NULL_SEGMENT)


def test_decode_follows_pyarrow_for_an_escaped_null_marker() -> None:
    # pyarrow reads "%5F_HIVE_DEFAULT_PARTITION__" as null (observed, pyarrow 26.0.1).
    assert decode_value("%5F_HIVE_DEFAULT_PARTITION__") is None


def test_decode_rejects_percent_escapes_that_are_not_utf8() -> None:
    with pytest.raises(StoreError, match=r"'%FF' is not percent-encoded UTF-8"):
        decode_value("%FF")  # 0xFF never occurs in UTF-8 (RFC 3629 §1)


@pytest.mark.parametrize("value", [True, 1.5, b"x"])
def test_other_value_types_are_refused(value: object) -> None:
    with pytest.raises(StoreError, match="text, integers or None"):
        encode_value(value)  # type: ignore[arg-type]


def test_partition_path_joins_key_value_folders_in_the_given_order() -> None:
    got = partition_path("league-players", "players", [("season", 2026), ("club", "a/b")])
    assert got == "tables/league-players/players/season=2026/club=a%2Fb"


def test_partition_path_without_keys_is_the_table_folder() -> None:
    assert partition_path("league", "standings", []) == "tables/league/standings"


@pytest.mark.parametrize(("value", "segment"), HOSTILE)
def test_hostile_values_stay_one_folder_below_the_table(
    value: str | int | None, segment: str
) -> None:
    got = partition_path("league", "t", [("k", value)])
    assert got.split("/") == ["tables", "league", "t", f"k={segment}"]


@pytest.mark.parametrize(
    ("dataset", "table", "partition", "message"),
    [
        ("League", "t", [], "dataset name 'League'"),
        ("-league", "t", [], "dataset name '-league'"),
        ("league", "t-1", [], "table name 't-1'"),
        ("league", "", [], "table name ''"),
        ("league", "t", [("Season", 1)], "partition key 'Season'"),
        ("league", "t", [("_season", 1)], "partition key '_season'"),
        ("league", "t", [("version", 1)], "partition key 'version'"),
        ("league", "t", [("a", 1), ("a", 2)], "repeat a key"),
    ],
)
def test_bad_names_are_store_errors(
    dataset: str, table: str, partition: list[tuple[str, int]], message: str
) -> None:
    with pytest.raises(StoreError, match=message):
        partition_path(dataset, table, partition)


def test_folder_name_over_255_bytes_is_refused() -> None:
    # 255 bytes is NAME_MAX on ext4, xfs and btrfs (from memory). "k=" + 253 × "a" is 255 bytes;
    # one more is 256. "✓" encodes to 9 bytes, so "k=" + 28 × "✓" is 2 + 252 = 254 bytes.
    assert len(partition_path("d", "t", [("k", "a" * 253)]).split("/")[-1]) == 255
    assert len(partition_path("d", "t", [("k", "✓" * 28)]).split("/")[-1]) == 254
    with pytest.raises(StoreError, match="256 bytes encoded, at most 255"):
        partition_path("d", "t", [("k", "a" * 254)])
    with pytest.raises(StoreError, match="263 bytes encoded"):
        partition_path("d", "t", [("k", "✓" * 29)])  # 2 + 29 × 9 = 263


def test_version_folder_names() -> None:
    assert version_dir(7) == "version=7"
    assert parse_version("version=12") == 12
    for other in ("version=0", "version=01", "version=", "version=x", "Version=1", "v=1"):
        assert parse_version(other) is None


def test_join_uses_slashes_and_drops_an_empty_root() -> None:
    assert join("/srv/archive/", "tables", "d") == "/srv/archive/tables/d"
    assert join("", "tables", "d") == "tables/d"
    assert join("/", "tables") == "/tables"


def test_open_root_makes_a_relative_local_root_absolute(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    fs, base = open_root("archive")
    assert isinstance(fs, pafs.LocalFileSystem)
    assert base == f"{tmp_path.as_posix()}/archive"


def test_open_root_accepts_file_uris_and_other_pyarrow_uris(tmp_path: Path) -> None:
    fs, base = open_root(f"file://{tmp_path.as_posix()}/a")  # RFC 8089 §2: file:///abs/path
    assert isinstance(fs, pafs.LocalFileSystem)
    assert base == f"{tmp_path.as_posix()}/a"
    mock, path = open_root("mock:///bucket/archive")  # pyarrow's in-memory test filesystem
    assert not isinstance(mock, pafs.LocalFileSystem)
    assert path == "bucket/archive"


def test_open_root_rejects_an_unusable_uri() -> None:
    with pytest.raises(StoreError, match="'nosuchscheme://x' is not a usable URI"):
        open_root("nosuchscheme://x")


def test_local_path_sees_through_a_subtree_over_the_local_disk(tmp_path: Path) -> None:
    subtree = pafs.SubTreeFileSystem(str(tmp_path), pafs.LocalFileSystem())
    assert local_path(subtree, "tables/x") == f"{tmp_path.as_posix()}/tables/x"
    assert local_path(pafs.LocalFileSystem(), "/a/b") == "/a/b"
    mock, _ = open_root("mock:///a")
    assert local_path(mock, "a/b") is None
