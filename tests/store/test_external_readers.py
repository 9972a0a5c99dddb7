"""The archive read straight from its files by DuckDB and polars, as docs/archive.md shows it.

The queries are taken from the code blocks of docs/archive.md marked ``<!-- tested: NAME -->``, so
the page cannot drift from what is run here. They run against an archive written in this file with
pyarrow.parquet exactly as the archive contract lays it out (docs/archive.md "Layout"), not by
harvester's writer, and must agree row for row with ``Archive.read`` and with the rows worked out by
hand from the files written. The pins at the end record what DuckDB and polars do with
percent-encoded and integer-looking partition values (REFERENCES §7.4 test ideas).
"""

from __future__ import annotations

import hashlib
import json
import re
from collections.abc import Iterator, Sequence
from datetime import UTC, datetime
from pathlib import Path
from urllib.parse import quote

import duckdb
import polars as pl
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from harvester.store.archive import Archive

DOC = Path(__file__).resolve().parents[2] / "docs" / "archive.md"
NULL_SEGMENT = "__HIVE_DEFAULT_PARTITION__"  # pyarrow's null_fallback (REFERENCES §7.2)
PLAYERS = "archive/tables/league-players/players"


def snippet(name: str) -> str:
    """The one code block of docs/archive.md marked ``<!-- tested: name -->``."""
    text = DOC.read_text(encoding="utf-8")
    blocks = re.findall(rf"<!-- tested: {re.escape(name)} -->\n```\w+\n(.*?)\n```", text, re.S)
    assert len(blocks) == 1, f"docs/archive.md has {len(blocks)} blocks marked {name!r}"
    return str(blocks[0])


def write_version(
    root: Path,
    dataset: str,
    table: str,
    partition: Sequence[tuple[str, str | int | None]],
    version: int,
    data: dict[str, list[object]],
    committed_at: str,
) -> Path:
    """One ``part-0.parquet`` as the contract lays it out: data, provenance columns, footer."""
    segments = [
        f"{k}={NULL_SEGMENT if v is None else quote(str(v), safe='')}" for k, v in partition
    ]
    folder = root.joinpath("tables", dataset, table, *segments, f"version={version}")
    folder.mkdir(parents=True)
    body = pa.table(data)
    rows, captured = body.num_rows, datetime.fromisoformat(committed_at)
    utc_us = pa.timestamp("us", tz="UTC")
    provenance = {
        "_source_url": pa.array(["http://127.0.0.1:8650/players.html"] * rows),
        "_final_url": pa.array(["http://127.0.0.1:8650/players.html"] * rows),
        "_captured_at": pa.array([captured] * rows, utc_us),
        "_capture_origin": pa.array(["live"] * rows),
        "_memento_datetime": pa.nulls(rows, utc_us),
        "_http_status": pa.array([200] * rows, pa.int32()),
        "_body_sha256": pa.array(["ab" * 32] * rows),
        "_recipe": pa.array([dataset] * rows),
        "_recipe_sha256": pa.array(["cd" * 32] * rows),
        "_harvester_version": pa.array(["0.1.0.dev0"] * rows),
        "_table_selector": pa.array(["table#players"] * rows),
        "_source_row": pa.array(range(rows), pa.int32()),
        "_warc_record_id": pa.array(["<urn:uuid:00000000-0000-4000-8000-000000000000>"] * rows),
    }
    full = pa.Table.from_arrays(
        [*body.columns, *provenance.values()], names=[*body.column_names, *provenance]
    )
    sink = pa.BufferOutputStream()  # data_sha256 as the contract defines it
    with pa.ipc.new_stream(sink, body.schema) as stream:
        stream.write_table(body.combine_chunks())
    meta = {
        "harvester.data_sha256": hashlib.sha256(sink.getvalue().to_pybytes()).hexdigest(),
        "harvester.committed_at": committed_at,
        "harvester.provenance": json.dumps(
            {
                "run_id": "r1",
                "dataset": dataset,
                "table": table,
                "partition": dict(partition),
                "version": version,
                "committed_at": committed_at,
                "key": [],
            }
        ),
    }
    path = folder / "part-0.parquet"
    pq.write_table(full.replace_schema_metadata(meta), path)
    return path


@pytest.fixture
def archive(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """Seasons 2024-2026 over several versions; ``assists`` appears in 2025's version 2."""
    root = tmp_path / "archive"
    write_version(
        root,
        "league-players",
        "players",
        [("season", 2024)],
        1,
        {"player": ["Ilvar Dunmoor", "Teo Saskel"], "goals": [31, 18]},
        "2026-01-10T08:00:00.000000Z",
    )
    write_version(
        root,
        "league-players",
        "players",
        [("season", 2024)],
        2,
        {"player": ["Ilvar Dunmoor", "Teo Saskel"], "goals": [31, 19]},
        "2026-02-10T08:00:00.000000Z",
    )
    write_version(
        root,
        "league-players",
        "players",
        [("season", 2025)],
        1,
        {"player": ["Ilvar Dunmoor", "Merek Olv"], "goals": [40, 22]},
        "2026-01-10T08:00:00.000000Z",
    )
    write_version(
        root,
        "league-players",
        "players",
        [("season", 2025)],
        2,
        {"player": ["Ilvar Dunmoor", "Merek Olv"], "goals": [40, 23], "assists": [12, 7]},
        "2026-03-10T08:00:00.000000Z",
    )
    write_version(
        root,
        "league-players",
        "players",
        [("season", 2026)],
        1,
        {"player": ["Merek Olv"], "goals": [5], "assists": [2]},
        "2026-03-10T08:00:00.000000Z",
    )
    # Debris of crashed runs (docs/archive.md "How versions work"): never a version.
    staged = root / "tables/league-players/players/season=2026/version=2"
    staged.mkdir()
    (staged / ".part-0.parquet.inprogress").write_bytes(b"PAR1 half written")
    (root / "tables/league-players/players/season=2024/version=3").mkdir()
    monkeypatch.chdir(tmp_path)  # the snippets use the relative path archive/...
    return root


@pytest.fixture
def con() -> Iterator[duckdb.DuckDBPyConnection]:
    connection = duckdb.connect()
    yield connection
    connection.close()


COLUMNS = ["season", "version", "player", "goals", "assists"]
# Worked out by hand from the fixture: the highest version of each season.
LATEST = [
    (2024, 2, "Ilvar Dunmoor", 31, None),
    (2024, 2, "Teo Saskel", 19, None),
    (2025, 2, "Ilvar Dunmoor", 40, 12),
    (2025, 2, "Merek Olv", 23, 7),
    (2026, 1, "Merek Olv", 5, 2),
]


def rows(table: pa.Table, columns: Sequence[str]) -> list[tuple[object, ...]]:
    """The table's rows as tuples of ``columns``, sorted by season then player."""
    records = table.select(list(columns)).to_pylist()
    records.sort(key=lambda r: (r["season"], r["player"]))
    return [tuple(r[c] for c in columns) for r in records]


def test_snippets_need_no_harvester() -> None:
    for name in ("duckdb-latest", "polars-latest", "pandas-latest", "duckdb-kv", "duckdb-as-of"):
        code = snippet(name)
        assert "import harvester" not in code and "from harvester" not in code


def test_duckdb_latest_query_matches_archive_read(
    archive: Path, con: duckdb.DuckDBPyConnection
) -> None:
    result = con.sql(snippet("duckdb-latest")).to_arrow_table()
    ours = Archive(str(archive)).read("league-players", "players")
    assert rows(result, COLUMNS) == LATEST
    assert rows(ours, COLUMNS) == LATEST
    # Every column agrees too, the provenance ones included (timestamps compare as instants).
    assert sorted(result.column_names) == sorted(ours.column_names)
    assert rows(result, ours.column_names) == rows(ours, ours.column_names)


def test_polars_latest_snippet_matches_archive_read(
    archive: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.delenv("POLARS_WARN_UNSTABLE", raising=False)  # hive_schema is marked unstable
    namespace: dict[str, object] = {}
    exec(compile(snippet("polars-latest"), "docs/archive.md:polars-latest", "exec"), namespace)
    players = namespace["players"]
    assert isinstance(players, pl.DataFrame)
    result = players.to_arrow()
    ours = Archive(str(archive)).read("league-players", "players")
    assert rows(result, COLUMNS) == LATEST
    assert sorted(result.column_names) == sorted(ours.column_names)
    assert rows(result, ours.column_names) == rows(ours, ours.column_names)


def test_pandas_latest_snippet_matches_archive_read(
    archive: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(archive.parent)  # the snippet reads archive/… from the working folder
    namespace: dict[str, object] = {}
    exec(compile(snippet("pandas-latest"), "docs/archive.md:pandas-latest", "exec"), namespace)
    players = namespace["players"]
    result = pa.Table.from_pandas(players, preserve_index=False)
    ours = Archive(str(archive)).read("league-players", "players")
    assert rows(result, COLUMNS) == LATEST
    assert sorted(result.column_names) == sorted(ours.column_names)


def test_duckdb_as_of_query_matches_archive_read_as_of(
    archive: Path, con: duckdb.DuckDBPyConnection
) -> None:
    query = snippet("duckdb-as-of")
    assert "TIMESTAMPTZ '2026-02-15 00:00:00+00'" in query  # the moment used below
    result = con.sql(query).to_arrow_table()
    ours = Archive(str(archive)).read(
        "league-players", "players", as_of=datetime(2026, 2, 15, tzinfo=UTC)
    )
    # By hand: 2024 is at version 2 (10 Feb), 2025 at version 1 (its version 2 is from 10 March),
    # 2026 has no version yet. None of those files has `assists`.
    expected = [
        (2024, 2, "Ilvar Dunmoor", 31),
        (2024, 2, "Teo Saskel", 19),
        (2025, 1, "Ilvar Dunmoor", 40),
        (2025, 1, "Merek Olv", 22),
    ]
    assert rows(result, COLUMNS[:4]) == expected
    assert rows(ours, COLUMNS[:4]) == expected
    assert "assists" not in ours.column_names
    # DuckDB's union_by_name spans every file globbed, so it keeps the later column, all null.
    assert result.column("assists").null_count == result.num_rows
    assert rows(result, ours.column_names) == rows(ours, ours.column_names)


def test_duckdb_kv_query_lists_the_footer_of_every_visible_version(
    archive: Path, con: duckdb.DuckDBPyConnection
) -> None:
    found = con.sql(snippet("duckdb-kv")).fetchall()
    committed = {name: value for name, key, value in found if key == "harvester.committed_at"}
    written = {
        f"{PLAYERS}/season=2024/version=1/part-0.parquet": "2026-01-10T08:00:00.000000Z",
        f"{PLAYERS}/season=2024/version=2/part-0.parquet": "2026-02-10T08:00:00.000000Z",
        f"{PLAYERS}/season=2025/version=1/part-0.parquet": "2026-01-10T08:00:00.000000Z",
        f"{PLAYERS}/season=2025/version=2/part-0.parquet": "2026-03-10T08:00:00.000000Z",
        f"{PLAYERS}/season=2026/version=1/part-0.parquet": "2026-03-10T08:00:00.000000Z",
    }
    assert committed == written  # the .inprogress file and the empty folder are not listed
    keys = {key for _, key, _ in found}
    assert keys == {"harvester.committed_at", "harvester.data_sha256", "harvester.provenance"}
    listed = Archive(str(archive)).versions("league-players", "players")
    assert [v.committed_at for v in listed] == [
        datetime.fromisoformat(written[f"{PLAYERS}/{s}/part-0.parquet"])
        for s in (
            "season=2024/version=1",
            "season=2024/version=2",
            "season=2025/version=1",
            "season=2025/version=2",
            "season=2026/version=1",
        )
    ]


# --------------------------------------------------------------------------- pinned behaviour


def test_duckdb_without_union_by_name_drops_a_column_added_later(
    archive: Path, con: duckdb.DuckDBPyConnection
) -> None:
    # REFERENCES §7.2 (verified): without union_by_name DuckDB keeps the first file's columns.
    query = snippet("duckdb-latest").replace(",\n    union_by_name = true", "")
    assert "union_by_name" not in query
    assert "assists" not in con.sql(query).columns


def test_partition_values_are_percent_decoded_by_duckdb_polars_and_archive(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, con: duckdb.DuckDBPyConnection
) -> None:
    root = tmp_path / "archive"
    clubs: list[str | None] = [
        "Kossa/Ulmby",
        "HK=Tarn",
        "Vell Nordby",
        "50% Ravn",
        "Ærøvik",
        "Dal\\Vik",
        None,
    ]
    for i, club in enumerate(clubs):
        write_version(
            root, "clubs", "roster", [("club", club)], 1, {"i": [i]}, "2026-01-10T08:00:00.000000Z"
        )
    monkeypatch.chdir(tmp_path)
    # The folder names are the RFC 3986 percent-encoding (docs/archive.md): checked, not assumed.
    assert (root / "tables/clubs/roster/club=Kossa%2FUlmby").is_dir()
    assert (root / "tables/clubs/roster/club=%C3%86r%C3%B8vik").is_dir()
    expected = [(i, club) for i, club in enumerate(clubs)]
    # DuckDB URI-decodes Hive values since duckdb PR #12974 (July 2024), and reads the null
    # marker as NULL; observed with duckdb 2.0.1 and pinned here.
    glob = "archive/tables/clubs/roster/*/version=*/part-0.parquet"
    duck = con.sql(
        f"SELECT i, club FROM read_parquet('{glob}', hive_partitioning = true) ORDER BY i"
    )
    assert duck.fetchall() == expected
    # polars decodes them the same way (observed with polars 2.1.0; no published source found).
    frames = [pl.scan_parquet(f, hive_partitioning=True) for f in sorted(Path().glob(glob))]
    polars_rows = (
        pl.concat(frames, how="diagonal_relaxed").sort("i").select("i", "club").collect().rows()
    )
    assert polars_rows == expected
    ours = Archive(str(root)).read("clubs", "roster").sort_by("i")
    assert list(zip(ours["i"].to_pylist(), ours["club"].to_pylist(), strict=True)) == expected


def test_partition_key_types_with_and_without_declared_types(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, con: duckdb.DuckDBPyConnection
) -> None:
    root = tmp_path / "archive"
    for season in (2025, 2026):  # integers in the provenance
        write_version(
            root,
            "d",
            "by_season",
            [("season", season)],
            1,
            {"i": [season]},
            "2026-01-10T08:00:00.000000Z",
        )
    for club in ("0042", "0107"):  # text that looks like a number
        write_version(
            root,
            "d",
            "by_club",
            [("club", club)],
            1,
            {"i": [int(club)]},
            "2026-01-10T08:00:00.000000Z",
        )
    write_version(
        root,
        "d",
        "by_round",
        [("round", "2024-06-30")],
        1,
        {"i": [1]},
        "2026-01-10T08:00:00.000000Z",
    )
    monkeypatch.chdir(tmp_path)

    def duck(table: str, key: str, options: str = "") -> list[tuple[object, ...]]:
        glob = f"archive/tables/d/{table}/*/version=*/part-0.parquet"
        query = f"SELECT {key}, typeof({key}) FROM read_parquet('{glob}', hive_partitioning = true"
        return con.sql(f"{query}{options}) ORDER BY i").fetchall()

    # DuckDB guesses: `2025` → BIGINT, `2024-06-30` → DATE (REFERENCES §7.2, verified). `0042`
    # stays VARCHAR with its zeros (observed with duckdb 2.0.1: no integer would print back as it).
    assert duck("by_season", "season") == [(2025, "BIGINT"), (2026, "BIGINT")]
    assert duck("by_club", "club") == [("0042", "VARCHAR"), ("0107", "VARCHAR")]
    assert duck("by_round", "round") == [(datetime(2024, 6, 30).date(), "DATE")]
    # Declared types win (REFERENCES §7.2: hive_types).
    declared = ", hive_types = {'season': VARCHAR}"
    assert duck("by_season", "season", declared) == [("2025", "VARCHAR"), ("2026", "VARCHAR")]
    assert duck("by_round", "round", ", hive_types = {'round': VARCHAR}") == [
        ("2024-06-30", "VARCHAR")
    ]

    # polars guesses per folder: `0042` becomes the integer 42 and `2024-06-30` a date (observed
    # with polars 2.1.0; its docstring: hive schema inferred, try_parse_hive_dates=True).
    def guessed(table: str) -> pl.DataFrame:
        files = sorted(Path().glob(f"archive/tables/d/{table}/*/version=*/part-0.parquet"))
        frames = [pl.scan_parquet(f, hive_partitioning=True) for f in files]
        return pl.concat(frames, how="diagonal_relaxed").sort("i").collect()

    assert guessed("by_season")["season"].dtype == pl.Int64
    assert guessed("by_club")["club"].to_list() == [42, 107]
    assert guessed("by_round")["round"].dtype == pl.Date

    # Archive.read types a key int64 only when every file's provenance gives an integer.
    archive = Archive(str(root))
    by_season = archive.read("d", "by_season")
    assert by_season.schema.field("season").type == pa.int64()
    assert by_season["season"].to_pylist() == [2025, 2026]
    by_club = archive.read("d", "by_club")
    assert by_club.schema.field("club").type == pa.string()
    assert by_club["club"].to_pylist() == ["0042", "0107"]
    assert archive.read("d", "by_round")["round"].to_pylist() == ["2024-06-30"]


def test_duckdb_version_as_text_picks_version_9_over_10(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, con: duckdb.DuckDBPyConnection
) -> None:
    root = tmp_path / "archive"
    for version in range(1, 11):
        write_version(
            root,
            "d",
            "t",
            [("season", 2026)],
            version,
            {"n": [version]},
            f"2026-01-{version:02d}T08:00:00.000000Z",
        )
    monkeypatch.chdir(tmp_path)
    glob = "archive/tables/d/t/*/version=*/part-0.parquet"
    qualify = "QUALIFY version = max(version) OVER (PARTITION BY season)"
    as_text = (
        f"SELECT n, version FROM read_parquet('{glob}', hive_types_autocast = false) {qualify}"
    )
    # Text order: '9' > '10' (the comparison is by character), so version 9 passes for the latest.
    assert con.sql(as_text).fetchall() == [(9, "9")]
    typed = (
        f"SELECT n, version FROM read_parquet('{glob}', "
        f"hive_types = {{'season': BIGINT, 'version': BIGINT}}) {qualify}"
    )
    assert con.sql(typed).fetchall() == [(10, 10)]
    ours = Archive(str(root)).read("d", "t")
    assert ours["n"].to_pylist() == [10] and ours["version"].to_pylist() == [10]
