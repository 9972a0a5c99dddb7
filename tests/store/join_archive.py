"""A small archive of two tables whose key columns overlap in part, and DuckDB to read it back.

The keys are invented names, already normalized ("last first", lower case). The players table
(left) has two versions of season 2026; the first holds a key the second dropped, so a check that
read anything but the latest version would see it. DuckDB reads the Parquet files with the
query docs/archive.md gives for "the latest version of each season" (tested there as
``duckdb-latest``), so expectations come from another reader of the same files.
"""

from __future__ import annotations

import duckdb
import pyarrow as pa

from harvester.store.contract import PROVENANCE_COLUMNS
from harvester.store.writer import ArchiveWriter

__all__ = [
    "CONTRACTS",
    "PLAYERS",
    "RIGHT_ONLY_2026",
    "build_archive",
    "duckdb_anti_join",
    "duckdb_matched",
]

PLAYERS = "league-players/players"
CONTRACTS = "league-contracts/contracts"

_PLAYERS: dict[int, list[list[str | None]]] = {  # season → versions, oldest first
    2025: [["smith john", "oda venn", "brask ilo", None]],
    2026: [
        ["smith john", "gone after one version"],
        [
            "smith john",
            "smith john jr",
            "ode venn",
            "kerr tamsin",
            "kerr tamsin",
            "vallo peder",
            "lindqvist ara",
            None,
        ],
    ],
}
_CONTRACTS: dict[int, list[tuple[str | None, str]]] = {  # season → (name_key, club)
    2025: [("smith john", "ELK"), ("brask ilo", "MAR"), ("venn oda", "ELK")],
    2026: [
        ("smith john", "ELK"),
        ("smith jon jr", "ELK"),
        ("kerr tamsin", "MAR"),
        ("ode venn", "TID"),
        ("lindqvist ari", "MAR"),
        ("lindqvist arb", "ELK"),
        ("marr ulla", "TID"),
        (None, "TID"),
    ],
}
RIGHT_ONLY_2026 = ["lindqvist arb", "lindqvist ari", "marr ulla", "smith jon jr"]


def _with_provenance(data: dict[str, pa.Array]) -> pa.Table:
    """Data columns plus the contract's provenance columns (nulls of the contract's types)."""
    rows = len(next(iter(data.values())))
    columns = {name: pa.nulls(rows, kind) for name, kind in PROVENANCE_COLUMNS.items()}
    return pa.table({**data, **columns})


def build_archive(root: str) -> None:
    """Commit the players and contracts tables, partitioned by season, through the writer."""
    with ArchiveWriter(root) as writer:
        for season, versions in _PLAYERS.items():
            for keys in versions:
                data = {
                    "player_key": pa.array(keys, pa.string()),
                    "goals": pa.array(range(len(keys)), pa.int64()),
                }
                writer.commit(
                    "league-players",
                    "players",
                    [("season", season)],
                    _with_provenance(data),
                    provenance={"run_id": f"run-{season}"},
                    drift_policy="accept",
                )
        for season, rows in _CONTRACTS.items():
            data = {
                "name_key": pa.array([name for name, _ in rows], pa.string()),
                "club": pa.array([club for _, club in rows], pa.string()),
            }
            writer.commit(
                "league-contracts",
                "contracts",
                [("season", season)],
                _with_provenance(data),
                provenance={"run_id": f"run-{season}"},
            )


def _latest(root: str, table: str, where: str) -> str:
    # docs/archive.md, "DuckDB (tested)": the highest version of each season, by Hive folders.
    return f"""
        SELECT * FROM read_parquet(
            '{root}/tables/{table}/*/version=*/part-0.parquet',
            hive_partitioning = true,
            hive_types = {{'season': BIGINT, 'version': BIGINT}},
            union_by_name = true
        )
        WHERE {where}
        QUALIFY version = max(version) OVER (PARTITION BY season)
    """


def duckdb_matched(root: str, left_where: str = "true", right_where: str = "true") -> int:
    """Distinct keys on both sides: DuckDB's inner join of the latest versions."""
    query = f"""
        SELECT count(DISTINCT l.player_key)
        FROM ({_latest(root, "league-players/players", left_where)}) AS l
        JOIN ({_latest(root, "league-contracts/contracts", right_where)}) AS r
          ON l.player_key = r.name_key
    """
    [(count,)] = duckdb.execute(query).fetchall()
    return int(count)


def duckdb_anti_join(
    root: str, side: str, left_where: str = "true", right_where: str = "true"
) -> list[str]:
    """Distinct non-null keys of ``side`` ("left" or "right") that the other side lacks, sorted."""
    left = f"({_latest(root, 'league-players/players', left_where)})"
    right = f"({_latest(root, 'league-contracts/contracts', right_where)})"
    if side == "left":
        this, other, key, other_key = left, right, "player_key", "name_key"
    else:
        this, other, key, other_key = right, left, "name_key", "player_key"
    query = f"""
        SELECT DISTINCT a.{key} FROM {this} AS a
        ANTI JOIN {other} AS b ON a.{key} = b.{other_key}
        WHERE a.{key} IS NOT NULL
        ORDER BY 1
    """
    return [row[0] for row in duckdb.execute(query).fetchall()]
