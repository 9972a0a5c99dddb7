"""`harvester versions` and `harvester diff`, run on small archives written here by hand.

The archives are laid out exactly as the archive contract (docs/archive.md) says, with pyarrow:
``tables/<dataset>/<table>/<key>=<value>/version=<n>/part-0.parquet``, values percent-encoded
(RFC 3986 §2.1: "/" is %2F) and null written as ``__HIVE_DEFAULT_PARTITION__`` (pyarrow
HivePartitioning's null_fallback), footers holding harvester.data_sha256 / committed_at /
provenance. Expected output lines are worked out by hand from the rows below.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import typer
from typer.testing import CliRunner

from harvester.cli.store import diff_command, versions_command

RUNNER = CliRunner()
DATASET = "league-players"


def _app() -> typer.Typer:
    app = typer.Typer()
    app.command("versions")(versions_command)
    app.command("diff")(diff_command)
    return app


def run(*args: str) -> tuple[int, str, str]:
    result = RUNNER.invoke(_app(), list(args))
    return result.exit_code, result.stdout, result.stderr


def _data_sha256(table: pa.Table) -> str:
    # docs/archive.md: SHA-256 of the Arrow IPC stream of the data columns, metadata dropped.
    data = table.select([n for n in table.column_names if not n.startswith("_")])
    sink = pa.BufferOutputStream()
    chunked = data.replace_schema_metadata(None).combine_chunks()
    with pa.ipc.new_stream(sink, chunked.schema) as writer:
        writer.write_table(chunked)
    return hashlib.sha256(sink.getvalue().to_pybytes()).hexdigest()


def put(
    root: Path,
    table: str,
    folders: list[str],
    version: int,
    rows: dict[str, list[object]],
    *,
    key: list[str],
    committed_at: str,
) -> str:
    """Write one version's part-0.parquet with provenance columns and footer; return its sha."""
    count = len(next(iter(rows.values())))
    captured = dt.datetime(2026, 3, version, 9, 30, tzinfo=dt.UTC)
    data = pa.table(
        {
            **rows,
            "_captured_at": pa.array([captured] * count, pa.timestamp("us", tz="UTC")),
            "_source_row": pa.array(list(range(count)), pa.int32()),
        }
    )
    sha = _data_sha256(data)
    provenance = {
        "run_id": f"run-{version}",
        "dataset": DATASET,
        "table": table,
        "partition": {},
        "version": version,
        "recipe": DATASET,
        "recipe_sha256": "0" * 64,
        "harvester_version": "0.0.0",
        "source_urls": ["http://127.0.0.1:8650/players.html"],
        "committed_at": committed_at,
        "key": key,
    }
    folder = root.joinpath("tables", DATASET, table, *folders, f"version={version}")
    folder.mkdir(parents=True)
    metadata = {
        b"harvester.data_sha256": sha.encode(),
        b"harvester.committed_at": committed_at.encode(),
        b"harvester.provenance": json.dumps(provenance).encode(),
    }
    pq.write_table(data.replace_schema_metadata(metadata), folder / "part-0.parquet")
    return sha


STAMPS = [f"2026-03-0{day}T12:00:00.00000{day}Z" for day in range(1, 5)]


def build(root: Path) -> dict[str, str]:
    """The test archive; returns the data sha of each version by "table/partition/version"."""
    sha = {}
    players: list[dict[str, list[object]]] = [
        {"player": ["Ilka Brandt", "Oda Venn", "Mara Quist"], "goals": [31, 12, 8]},
        {"player": ["Ilka Brandt", "Oda Venn", "Mara Quist"], "goals": [31, 13, 8]},
        {"player": ["Ilka Brandt", "Oda Venn", "Rune Sell"], "goals": [31, 13, 2]},
    ]
    for number, rows in enumerate(players, start=1):
        sha[f"players/2019/{number}"] = put(
            root, "players", ["season=2019"], number, rows, key=["player"],
            committed_at=STAMPS[number - 1],
        )  # fmt: skip
    sha["players/2020/1"] = put(
        root, "players", ["season=2020"], 1, {"player": ["Tove Aarn"], "goals": [5]},
        key=["player"], committed_at=STAMPS[3],
    )  # fmt: skip
    # A crashed commit's debris: no part-0.parquet, so version 4 is not visible.
    debris = root / "tables" / DATASET / "players" / "season=2019" / "version=4"
    debris.mkdir()
    (debris / ".part-0.parquet.inprogress").write_bytes(b"PAR1 half a file")
    standings: list[dict[str, list[object]]] = [
        {"club": ["Kalvik", "Ostermoor"], "points": [20, 18]},
        {"club": ["Kalvik", "Ostermoor"], "points": [22, 18]},
    ]
    for number, rows in enumerate(standings, start=1):
        sha[f"standings/{number}"] = put(
            root, "standings", [], number, rows, key=[], committed_at=STAMPS[number - 1]
        )
    return sha


# ------------------------------------------------------------------------------ versions


def test_versions_lists_every_table_partition_and_version_in_order(tmp_path: Path) -> None:
    sha = build(tmp_path)
    code, out, err = run("versions", DATASET, "--archive", str(tmp_path))
    assert (code, err) == (0, "")
    assert out.splitlines() == [
        f"players\tseason=2019\t1\t3\t2026-03-01T12:00:00.000001Z\t{sha['players/2019/1']}",
        f"players\tseason=2019\t2\t3\t2026-03-02T12:00:00.000002Z\t{sha['players/2019/2']}",
        f"players\tseason=2019\t3\t3\t2026-03-03T12:00:00.000003Z\t{sha['players/2019/3']}",
        f"players\tseason=2020\t1\t1\t2026-03-04T12:00:00.000004Z\t{sha['players/2020/1']}",
        f"standings\t-\t1\t2\t2026-03-01T12:00:00.000001Z\t{sha['standings/1']}",
        f"standings\t-\t2\t2\t2026-03-02T12:00:00.000002Z\t{sha['standings/2']}",
    ]


def test_versions_of_one_table_as_json(tmp_path: Path) -> None:
    sha = build(tmp_path)
    code, out, _ = run(
        "versions", f"{DATASET}/standings", "--archive", str(tmp_path), "--format", "json"
    )
    assert code == 0
    base = f"{tmp_path}/tables/{DATASET}/standings"
    assert json.loads(out) == [
        {
            "dataset": DATASET,
            "table": "standings",
            "partition": {},
            "version": number,
            "rows": 2,
            "committed_at": STAMPS[number - 1],
            "data_sha256": sha[f"standings/{number}"],
            "path": f"{base}/version={number}/part-0.parquet",
        }
        for number in (1, 2)
    ]


def test_versions_of_an_unknown_dataset_names_the_ones_there_are(tmp_path: Path) -> None:
    build(tmp_path)
    code, out, err = run("versions", "league-coaches", "--archive", str(tmp_path))
    assert code == 5  # StoreError.exit_code
    assert out == ""
    assert len(err.splitlines()) == 1
    assert err.startswith("error: ")
    assert "'league-coaches'" in err and DATASET in err


def test_versions_of_an_unknown_table_names_the_tables(tmp_path: Path) -> None:
    build(tmp_path)
    code, _, err = run("versions", f"{DATASET}/contracts", "--archive", str(tmp_path))
    assert code == 5
    assert len(err.splitlines()) == 1
    assert "'contracts'" in err and "players" in err and "standings" in err


def test_versions_refuses_a_target_with_two_slashes(tmp_path: Path) -> None:
    code, _, err = run("versions", f"{DATASET}/players/extra", "--archive", str(tmp_path))
    assert code == 2
    assert err == (
        "error: 'league-players/players/extra' is not DATASET or DATASET/TABLE — "
        "write e.g. league-players/players\n"
    )


# ------------------------------------------------------------------------------ diff


def test_diff_defaults_to_the_latest_visible_version_and_the_one_before(tmp_path: Path) -> None:
    build(tmp_path)
    code, out, err = run(
        "diff", f"{DATASET}/players", "--partition", "season=2019", "--archive", str(tmp_path)
    )
    assert (code, err) == (0, "")
    # v2 → v3: Rune Sell joins, Mara Quist leaves, Ilka Brandt and Oda Venn are as they were
    # (their _captured_at differs, but provenance columns do not count).
    assert out.splitlines() == [
        "league-players/players season=2019: version 2 → 3",
        "rows: 1 added, 1 removed, 0 changed, 2 unchanged (key player)",
        'added player="Rune Sell", goals=2',
        'removed player="Mara Quist", goals=8',
    ]


def test_diff_between_chosen_versions(tmp_path: Path) -> None:
    build(tmp_path)
    code, out, _ = run(
        "diff", f"{DATASET}/players", "-p", "season=2019", "--from", "1", "--to", "3",
        "--archive", str(tmp_path),
    )  # fmt: skip
    assert code == 0
    assert out.splitlines() == [
        "league-players/players season=2019: version 1 → 3",
        "rows: 1 added, 1 removed, 1 changed, 1 unchanged (key player)",
        'added player="Rune Sell", goals=2',
        'removed player="Mara Quist", goals=8',
        'changed player="Oda Venn": goals 12 → 13',
    ]


def test_diff_to_alone_compares_with_the_version_before_it(tmp_path: Path) -> None:
    build(tmp_path)
    code, out, _ = run(
        "diff", f"{DATASET}/players", "-p", "season=2019", "--to", "2", "--archive", str(tmp_path),
        "--format", "json",
    )  # fmt: skip
    assert code == 0
    assert json.loads(out) == {
        "dataset": DATASET,
        "table": "players",
        "partition": {"season": "2019"},
        "from_version": 1,
        "to_version": 2,
        "key": ["player"],
        "key_given": True,
        "counts": {"added": 0, "removed": 0, "changed": 1, "unchanged": 2},
        "columns_added": [],
        "columns_removed": [],
        "added": [],
        "removed": [],
        "changed": [{"key": {"player": "Oda Venn"}, "changes": {"goals": {"old": 12, "new": 13}}}],
        "summary": "rows: 0 added, 0 removed, 1 changed, 2 unchanged (key player)",
    }


def test_diff_without_a_recorded_key_compares_whole_rows(tmp_path: Path) -> None:
    build(tmp_path)
    code, out, _ = run("diff", f"{DATASET}/standings", "--archive", str(tmp_path))
    assert code == 0
    assert out.splitlines() == [
        "league-players/standings: version 1 → 2",
        "rows: 1 added, 1 removed, 0 changed, 1 unchanged (no key: whole rows compared)",
        'added club="Kalvik", points=22',
        'removed club="Kalvik", points=20',
    ]


def test_diff_of_a_null_partition_and_an_encoded_value(tmp_path: Path) -> None:
    for folder, club in (("club=__HIVE_DEFAULT_PARTITION__", None), ("club=Kalvik%2FNord", "K/N")):
        for number, salary in ((1, 100), (2, 150)):
            rows: dict[str, list[object]] = {"player": [f"{club} keeper"], "salary": [salary]}
            put(tmp_path, "contracts", [folder], number, rows, key=["player"],
                committed_at=STAMPS[number - 1])  # fmt: skip
    code, out, err = run(
        "diff", f"{DATASET}/contracts", "-p", "club=__HIVE_DEFAULT_PARTITION__",
        "--archive", str(tmp_path),
    )  # fmt: skip
    assert (code, err) == (0, "")
    # Only the null partition's row: the Kalvik/Nord partition has a version 2 as well.
    assert out.splitlines() == [
        "league-players/contracts club=__HIVE_DEFAULT_PARTITION__: version 1 → 2",
        "rows: 0 added, 0 removed, 1 changed, 0 unchanged (key player)",
        'changed player="None keeper": salary 100 → 150',
    ]
    code, out, _ = run(
        "diff", f"{DATASET}/contracts", "-p", "club=Kalvik/Nord", "--archive", str(tmp_path)
    )
    assert code == 0
    assert out.splitlines()[0] == "league-players/contracts club=Kalvik/Nord: version 1 → 2"
    assert out.splitlines()[2] == 'changed player="K/N keeper": salary 100 → 150'


def _diff_error(tmp_path: Path, *args: str) -> tuple[int, str]:
    build(tmp_path)
    code, out, err = run("diff", *args, "--archive", str(tmp_path))
    assert out == ""
    assert len(err.splitlines()) == 1
    return code, err


def test_diff_of_a_partition_that_does_not_exist_lists_the_partitions(tmp_path: Path) -> None:
    code, err = _diff_error(tmp_path, f"{DATASET}/players", "-p", "season=2018")
    assert code == 5
    assert err == (
        "error: league-players/players has no partition season=2018 "
        "(partitions: season=2019, season=2020) — name one of those with --partition KEY=VALUE\n"
    )


def test_diff_with_an_unknown_partition_key_lists_the_keys(tmp_path: Path) -> None:
    code, err = _diff_error(tmp_path, f"{DATASET}/players", "-p", "year=2019")
    assert code == 5
    assert err.startswith(
        "error: league-players/players has no partition key 'year' (keys: season)"
    )


def test_diff_of_several_partitions_without_a_run_report_says_how_to_pick(
    tmp_path: Path,
) -> None:
    # Without --partition, the partitions of the latest run are listed (tests/run/
    # test_changes.py); an archive built without runs has no such run to go by.
    code, err = _diff_error(tmp_path, f"{DATASET}/players")
    assert code == 5
    assert err.startswith("error: no run report under ")
    assert "wrote a version of league-players/players — give --since" in err


def test_diff_refuses_a_partition_that_is_not_key_equals_value(tmp_path: Path) -> None:
    code, err = _diff_error(tmp_path, f"{DATASET}/players", "-p", "season")
    assert code == 2
    assert err == (
        "error: --partition 'season' is not KEY=VALUE — write e.g. --partition season=2019\n"
    )


def test_diff_of_a_version_that_does_not_exist_lists_the_versions(tmp_path: Path) -> None:
    # Version 4 is only debris (no part-0.parquet), so it is not offered.
    code, err = _diff_error(tmp_path, f"{DATASET}/players", "-p", "season=2019", "--to", "4")
    assert code == 5
    assert err == (
        "error: league-players/players season=2019 has no version 4 (versions: 1, 2, 3) — "
        "pick --from and --to among those\n"
    )


def test_diff_of_a_partition_with_one_version_says_so(tmp_path: Path) -> None:
    code, err = _diff_error(tmp_path, f"{DATASET}/players", "-p", "season=2020")
    assert code == 1  # nothing is wrong with the archive (5 would say so): there is no pair yet
    assert err.startswith(
        "error: league-players/players season=2020 has no version before 1 to compare it with "
        "(versions: 1)"
    )


def test_diff_of_an_unknown_dataset_names_the_datasets(tmp_path: Path) -> None:
    code, err = _diff_error(tmp_path, "league-coaches/players", "-p", "season=2019")
    assert code == 5
    assert "'league-coaches'" in err and DATASET in err


def test_diff_needs_a_table(tmp_path: Path) -> None:
    code, err = _diff_error(tmp_path, DATASET)
    assert code == 2
    assert "names no table" in err
