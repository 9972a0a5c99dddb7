"""`harvester join-check` on a small archive: the JSON contract, text lines, --where, --suggest,
--fail-under and one-line errors.

References: match counts and unmatched keys from DuckDB SQL over the Parquet files
(tests/store/join_archive.py); scores from ``rapidfuzz.fuzz.token_sort_ratio`` on the same
strings; the alias file read back with the csv module (RFC 4180). Exit statuses are those the
command's help and docs/cron.md define (0, 1 below --fail-under, 2 usage, 5 archive).
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from rapidfuzz import fuzz
from typer.testing import CliRunner

from harvester.cli import app
from tests.store.join_archive import (
    CONTRACTS,
    PLAYERS,
    RIGHT_ONLY_2026,
    build_archive,
    duckdb_anti_join,
    duckdb_matched,
)

RUNNER = CliRunner()


@pytest.fixture
def root(tmp_path: Path) -> str:
    build_archive(str(tmp_path / "archive"))
    return str(tmp_path / "archive")


def run(root: str, *args: str) -> tuple[int, str, str]:
    base = ["join-check", PLAYERS, CONTRACTS, "--on", "player_key=name_key", "--archive", root]
    result = RUNNER.invoke(app, [*base, *args])
    return result.exit_code, result.stdout, result.stderr


def test_json_contract(root: str) -> None:
    code, out, err = run(root, "--format", "json")
    assert (code, err) == (0, "")
    data = json.loads(out)
    assert type(data["matched"]) is int and data["matched"] == duckdb_matched(root)
    for side in ("left", "right"):
        entries = data[f"{side}_unmatched"]
        assert [entry["key"] for entry in entries] == duckdb_anti_join(root, side)
        for entry in entries:
            assert isinstance(entry["key"], str) and isinstance(entry["candidates"], list)
            scores = [candidate["score"] for candidate in entry["candidates"]]
            assert scores == sorted(scores, reverse=True)  # best first
            for candidate in entry["candidates"]:
                assert isinstance(candidate["key"], str)
                assert isinstance(candidate["score"], int | float)
                assert candidate["score"] == fuzz.token_sort_ratio(entry["key"], candidate["key"])
    smith = next(e for e in data["left_unmatched"] if e["key"] == "smith john jr")
    assert smith["candidates"][0] == {"key": "smith jon jr", "score": 96.0}


def test_text_output(root: str) -> None:
    code, out, err = run(root, "--where", "season=2026")
    assert (code, err) == (0, "")
    lines = out.splitlines()
    assert lines[0] == (
        "matched 3 keys; 3 left without a match, 4 right without a match; match rate 50.0 %"
    )
    assert lines[1:4] == [
        "left\tlindqvist ara\tlindqvist arb (92.3), lindqvist ari (92.3), marr ulla (36.4)",
        "left\tsmith john jr\tsmith jon jr (96.0), lindqvist arb (30.8), lindqvist ari (30.8)",
        "left\tvallo peder\tmarr ulla (40.0), lindqvist arb (25.0), lindqvist ari (25.0)",
    ]
    assert [line.split("\t")[1] for line in lines[4:]] == RIGHT_ONLY_2026


def test_where_narrows_both_sides(root: str) -> None:
    code, out, _ = run(root, "--where", "season=2025", "--format", "json")
    data = json.loads(out)
    season = "season = 2025"
    assert code == 0 and data["matched"] == duckdb_matched(root, season, season) == 2
    assert [e["key"] for e in data["left_unmatched"]] == ["oda venn"]
    assert [e["key"] for e in data["right_unmatched"]] == ["venn oda"]
    assert (data["left_rows"], data["right_rows"], data["left_null"]) == (4, 3, 1)


def test_suggest_writes_alias_lines_and_refuses_to_overwrite(root: str, tmp_path: Path) -> None:
    target = tmp_path / "aliases.csv"
    code, out, _ = run(root, "--suggest", str(target))
    assert code == 0
    assert out.splitlines()[-1] == f"wrote 2 alias line(s) to {target}"
    with target.open(newline="", encoding="utf-8") as handle:
        assert list(csv.reader(handle)) == [
            ["alias", "key"],
            ["oda venn", "venn oda"],
            ["smith john jr", "smith jon jr"],
        ]
    before = target.read_bytes()
    code, out, err = run(root, "--suggest", str(target))
    assert (code, out) == (2, "")
    assert err == (
        f"error: {target}: the file already exists; alias suggestions never overwrite a file"
        " — confirm or move the old file, or name a new one\n"
    )
    assert target.read_bytes() == before


def test_suggest_with_json_keeps_stdout_one_document(root: str, tmp_path: Path) -> None:
    target = tmp_path / "aliases.csv"
    code, out, err = run(root, "--suggest", str(target), "--format", "json")
    assert code == 0 and json.loads(out)["matched"] == 4
    assert err == f"wrote 2 alias line(s) to {target}\n"


@pytest.mark.parametrize(
    ("rate", "code"),
    [("0.5", 0), ("50%", 0), ("0.49", 0), ("0.5001", 1), ("50.01%", 1), ("1", 1), ("0", 0)],
)
def test_fail_under_at_the_boundary(root: str, rate: str, code: int) -> None:
    found, out, err = run(root, "--fail-under", rate)  # the rate is 4 of 8 left keys
    assert found == code
    assert out.startswith("matched 4 keys;")  # the report is printed either way
    if code:
        assert err == (
            f"error: match rate 50.0 % (4 of 8 left keys) is below --fail-under {rate}\n"
        )
    else:
        assert err == ""


def test_fail_under_with_no_left_keys_fails(root: str) -> None:
    code, _, err = run(root, "--where", "season=1999", "--fail-under", "0")
    assert code == 1
    assert err == "error: match rate n/a (0 of 0 left keys) is below --fail-under 0\n"


@pytest.mark.parametrize(
    ("args", "code", "message"),
    [
        (
            ["--on", "player_key"],
            2,
            "error: league-contracts/contracts has no column 'player_key'"
            " — its columns: name_key, club, season, version",
        ),
        (["--on", "=name_key"], 2, "error: --on '=name_key' is not COLUMN or LEFT=RIGHT"),
        (["--fail-under", "95"], 2, "error: rate '95' is not a fraction from 0 to 1"),
        (["--fail-under", "high"], 2, "error: rate 'high' is not a fraction from 0 to 1"),
        (["--where", "season"], 2, "error: --where 'season' is not NAME=VALUE"),
        (["--where", "round=1"], 2, "error: --where 'round': neither league-players/players"),
    ],
)
def test_bad_input_is_one_line(root: str, args: list[str], code: int, message: str) -> None:
    found, out, err = run(root, *args)
    assert (found, out) == (code, "")
    assert err.startswith(message) and err.count("\n") == 1 and "Traceback" not in err


@pytest.mark.parametrize(
    ("left", "code", "message"),
    [
        ("league-players/transfers", 5, "league-players' has no table 'transfers'"),
        ("league-nobody/players", 5, "no dataset 'league-nobody'"),
        ("league-players", 2, "'league-players' is not DATASET/TABLE"),
    ],
)
def test_bad_table_is_one_line(root: str, left: str, code: int, message: str) -> None:
    args = ["join-check", left, CONTRACTS, "--on", "player_key=name_key", "--archive", root]
    result = RUNNER.invoke(app, args)
    assert (result.exit_code, result.stdout) == (code, "")
    assert message in result.stderr and result.stderr.count("\n") == 1
