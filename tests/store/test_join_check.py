"""Tests for store.join_check: counts against DuckDB, candidates against rapidfuzz, suggestions.

References: match counts and unmatched keys come from DuckDB SQL over the Parquet files
(tests/store/join_archive.py: an inner join and an anti-join of the latest versions); scores
come from ``rapidfuzz.fuzz.token_sort_ratio`` called here on the same strings (rapidfuzz docs:
"Sorts the words in the strings and calculates the fuzz.ratio between them", and ``fuzz.ratio``
is the normalized Indel similarity, 100 · (1 − distance / (len1 + len2))). Hand-worked scores
use that formula.
"""

from __future__ import annotations

import csv
from fractions import Fraction
from pathlib import Path

import pyarrow as pa
import pytest
from rapidfuzz import fuzz

from harvester.errors import JoinInputError, StoreError
from harvester.store.archive import Archive
from harvester.store.contract import PROVENANCE_COLUMNS
from harvester.store.join_check import Candidate, JoinCheck, JoinSide, UnmatchedKey, join_check
from harvester.store.join_options import (
    SUGGEST_THRESHOLD,
    parse_on,
    parse_rate,
    parse_table,
    write_aliases,
)
from harvester.store.writer import ArchiveWriter
from tests.store.join_archive import (
    CONTRACTS,
    PLAYERS,
    RIGHT_ONLY_2026,
    build_archive,
    duckdb_anti_join,
    duckdb_matched,
)


@pytest.fixture
def root(tmp_path: Path) -> str:
    build_archive(str(tmp_path))
    return str(tmp_path)


def check(root: str, where: dict[str, str] | None = None) -> JoinCheck:
    return join_check(root, PLAYERS, CONTRACTS, ("player_key", "name_key"), where)


# ----------------------------------------------------------------------------- counts, DuckDB


def test_matched_and_unmatched_equal_duckdb_joins_of_the_latest_versions(root: str) -> None:
    found = check(root)
    assert found.matched == duckdb_matched(root) == 4
    assert [e.key for e in found.left_unmatched] == duckdb_anti_join(root, "left")
    assert [e.key for e in found.right_unmatched] == duckdb_anti_join(root, "right")
    # The first version of 2026 held this key; only the latest version counts.
    assert "gone after one version" not in [e.key for e in found.left_unmatched]


def test_row_key_and_null_counts(root: str) -> None:
    # Worked out from tests/store/join_archive.py: players 4 + 8 rows (2 null keys, "kerr
    # tamsin" twice), contracts 3 + 8 rows (1 null key).
    found = check(root)
    assert (found.left.rows, found.left.keys, found.left.null) == (12, 8, 2)
    assert (found.right.rows, found.right.keys, found.right.null) == (11, 9, 1)
    assert found.match_rate == Fraction(4, 8)


def test_where_narrows_both_sides_to_a_season(root: str) -> None:
    found = check(root, {"season": "2026"})
    season = "season = 2026"
    assert found.matched == duckdb_matched(root, season, season) == 3
    assert [e.key for e in found.left_unmatched] == duckdb_anti_join(root, "left", season, season)
    assert [e.key for e in found.right_unmatched] == RIGHT_ONLY_2026
    assert [e.key for e in found.right_unmatched] == duckdb_anti_join(root, "right", season, season)


def test_where_on_a_column_one_side_has_narrows_only_that_side(root: str) -> None:
    found = check(root, {"club": "ELK"})  # a data column of contracts only
    assert found.matched == duckdb_matched(root, "true", "club = 'ELK'")
    assert [e.key for e in found.right_unmatched] == duckdb_anti_join(
        root, "right", "true", "club = 'ELK'"
    )
    assert found.left.rows == 12


def test_where_on_a_column_neither_side_has_is_an_error(root: str) -> None:
    with pytest.raises(JoinInputError, match="'round': neither") as caught:
        check(root, {"round": "1"})
    assert caught.value.exit_code == 2 and "\n" not in str(caught.value)


def test_a_missing_key_column_names_the_table_and_lists_its_columns(root: str) -> None:
    with pytest.raises(JoinInputError) as caught:
        join_check(root, PLAYERS, CONTRACTS, "player_key")
    assert str(caught.value) == (
        "league-contracts/contracts has no column 'player_key'"
        " — its columns: name_key, club, season, version"
    )
    assert caught.value.exit_code == 2


def test_an_unknown_table_is_an_archive_error(root: str) -> None:
    with pytest.raises(StoreError, match="no table 'transfers'") as caught:
        join_check(root, PLAYERS, "league-contracts/transfers", "player_key=name_key")
    assert caught.value.exit_code == 5


def test_keys_of_other_types_are_compared_as_text(root: str) -> None:
    # season is an int64 partition column on both sides: two seasons, both matched.
    found = join_check(Archive(root), PLAYERS, CONTRACTS, "season")
    assert (found.matched, found.left.keys, found.left_unmatched) == (2, 2, ())


# ------------------------------------------------------------------- candidates, rapidfuzz


def test_candidate_scores_are_rapidfuzz_token_sort_ratio_best_first(root: str) -> None:
    found = check(root)
    pools = {
        "left": [e.key for e in found.right_unmatched],
        "right": [e.key for e in found.left_unmatched],
    }
    for side, entries in (("left", found.left_unmatched), ("right", found.right_unmatched)):
        for entry in entries:
            pool = pools[side]
            assert len(entry.candidates) == min(3, len(pool))
            for candidate in entry.candidates:
                assert candidate.key in pool
                assert candidate.score == fuzz.token_sort_ratio(entry.key, candidate.key)
            order = [(-c.score, c.key) for c in entry.candidates]
            assert order == sorted(order)  # best first, ties by key text
            worst = entry.candidates[-1].score
            left_out = set(pool) - {c.key for c in entry.candidates}
            assert all(fuzz.token_sort_ratio(entry.key, k) <= worst for k in left_out)


def test_hand_worked_candidates(root: str) -> None:
    found = {e.key: e for e in check(root).left_unmatched}
    # "oda venn" and "venn oda" have the same sorted words: 100.
    assert found["oda venn"].candidates[0] == Candidate("venn oda", 100.0)
    # sorted words "john jr smith" (13) and "jon jr smith" (12), one letter apart: 100·(1 − 1/25).
    assert found["smith john jr"].candidates[0] == Candidate("smith jon jr", 96.0)
    # One letter changed in 13: 100·(1 − 2/26) for both; the tie goes to the key text.
    tied = found["lindqvist ara"].candidates[:2]
    assert [c.key for c in tied] == ["lindqvist arb", "lindqvist ari"]
    assert tied[0].score == tied[1].score == pytest.approx(100 * (1 - 2 / 26))


def test_candidates_come_from_the_other_sides_unmatched_keys_only(root: str) -> None:
    # "ode venn" is on the right, but it matched a left key exactly, so "oda venn" is not
    # offered it (docs/joins.md: the candidate pool).
    entry = next(e for e in check(root).left_unmatched if e.key == "oda venn")
    assert "ode venn" not in [c.key for c in entry.candidates]
    assert fuzz.token_sort_ratio("oda venn", "ode venn") > entry.candidates[1].score


def test_no_candidates_when_the_other_side_has_no_unmatched_keys(root: str) -> None:
    found = join_check(root, CONTRACTS, CONTRACTS, "name_key", {"season": "2025"})
    assert (found.matched, found.left_unmatched, found.right_unmatched) == (3, (), ())


# ----------------------------------------------------------------------------- JSON and text


def test_to_dict_holds_the_relied_on_fields_with_their_types(root: str) -> None:
    data = check(root).to_dict()
    assert type(data["matched"]) is int and data["matched"] == 4
    for side in ("left_unmatched", "right_unmatched"):
        entries = data[side]
        assert isinstance(entries, list)
        for entry in entries:
            assert isinstance(entry["key"], str)
            for candidate in entry["candidates"]:
                assert set(candidate) == {"key", "score"}
                assert isinstance(candidate["key"], str)
                assert isinstance(candidate["score"], float) and 0 <= candidate["score"] <= 100
    first = data["left_unmatched"][0]  # type: ignore[index]
    assert first == {
        "key": "lindqvist ara",
        "rows": 1,
        "candidates": [
            {
                "key": "lindqvist arb",
                "score": fuzz.token_sort_ratio("lindqvist ara", "lindqvist arb"),
            },
            {
                "key": "lindqvist ari",
                "score": fuzz.token_sort_ratio("lindqvist ara", "lindqvist ari"),
            },
            {"key": "marr ulla", "score": fuzz.token_sort_ratio("lindqvist ara", "marr ulla")},
        ],
    }
    counts = ("left_rows", "right_rows", "left_keys", "right_keys", "left_null", "right_null")
    assert [data[name] for name in counts] == [12, 11, 8, 9, 2, 1]
    assert data["match_rate"] == 0.5


def test_text_lines(root: str) -> None:
    lines = check(root, {"season": "2026"}).text_lines()
    assert lines[0] == (
        "matched 3 keys; 3 left without a match, 4 right without a match; match rate 50.0 %"
    )
    assert lines[1] == (
        "left\tlindqvist ara\tlindqvist arb (92.3), lindqvist ari (92.3), marr ulla (36.4)"
    )
    assert [line.split("\t")[:2] for line in lines[4:]] == [
        ["right", key] for key in RIGHT_ONLY_2026
    ]


def test_text_summary_without_left_keys(root: str) -> None:
    found = check(root, {"season": "1999"})
    assert found.text_lines() == [
        "matched 0 keys; 0 left without a match, 0 right without a match;"
        " match rate n/a (the left side has no keys)"
    ]
    assert found.match_rate is None and found.below(Fraction(0))


# ----------------------------------------------------------------------------- suggestions, rates


def test_suggestions_take_a_unique_best_at_or_above_the_threshold(root: str) -> None:
    found = check(root)
    # "lindqvist ara" scores 92.3 twice: a tie, so no suggestion; "vallo peder" scores 40.
    assert found.suggestions() == [("oda venn", "venn oda"), ("smith john jr", "smith jon jr")]
    assert found.suggestions(threshold=96.0) == found.suggestions()  # equal passes
    assert found.suggestions(threshold=96.5) == [("oda venn", "venn oda")]
    assert SUGGEST_THRESHOLD == 90.0


def test_a_single_candidate_at_the_threshold_is_suggested() -> None:
    side = JoinSide("a/b", "k", 1, 1, 0)
    entry = UnmatchedKey("x", 1, (Candidate("y", 90.0),))
    found = JoinCheck(side, side, 0, (entry,), ())
    assert found.suggestions() == [("x", "y")]
    assert found.suggestions(90.5) == []


def test_write_aliases_writes_csv_and_never_overwrites(tmp_path: Path) -> None:
    target = tmp_path / "aliases.csv"
    pairs = [("oda venn", "venn oda"), ('o"neil, ada', "oneil ada")]
    assert write_aliases(target, pairs) == 2
    with target.open(newline="", encoding="utf-8") as handle:
        assert list(csv.reader(handle)) == [["alias", "key"], *map(list, pairs)]
    before = target.read_bytes()
    with pytest.raises(JoinInputError, match="already exists"):
        write_aliases(target, [("a", "b")])
    assert target.read_bytes() == before


@pytest.mark.parametrize(
    ("text", "rate"),
    [
        ("0.95", Fraction(19, 20)),
        ("95%", Fraction(19, 20)),
        ("1", Fraction(1)),
        ("0", 0),
        ("97.5 %", Fraction(39, 40)),
        (".5", Fraction(1, 2)),
        ("100%", Fraction(1)),
    ],
)
def test_parse_rate(text: str, rate: Fraction) -> None:
    assert parse_rate(text) == rate


@pytest.mark.parametrize("text", ["95", "1.01", "101%", "-0.5", "abc", "", "nan", "1/2", "5%%"])
def test_parse_rate_refuses(text: str) -> None:
    with pytest.raises(JoinInputError, match="is not a fraction from 0 to 1"):
        parse_rate(text)


def test_below_is_strict(root: str) -> None:
    found = check(root)  # 4 of 8
    assert not found.below(Fraction(1, 2))
    assert found.below(Fraction(5001, 10000))


@pytest.mark.parametrize(
    ("text", "pair"), [("k", ("k", "k")), ("a=b", ("a", "b")), (" a = b ", ("a", "b"))]
)
def test_parse_on(text: str, pair: tuple[str, str]) -> None:
    assert parse_on(text) == pair


@pytest.mark.parametrize("text", ["", "=b", "a=", "a=b=c", " "])
def test_parse_on_refuses(text: str) -> None:
    with pytest.raises(JoinInputError, match="is not COLUMN or LEFT=RIGHT"):
        parse_on(text)


@pytest.mark.parametrize("text", ["players", "a/", "/b", "a/b/c"])
def test_parse_table_refuses(text: str) -> None:
    with pytest.raises(JoinInputError, match="is not DATASET/TABLE"):
        parse_table(text)


def test_a_key_column_that_is_not_text_or_number_is_refused(tmp_path: Path) -> None:
    lists = pa.array([["a"], ["b"]], pa.list_(pa.string()))
    data = {"tags": lists, **{n: pa.nulls(2, t) for n, t in PROVENANCE_COLUMNS.items()}}
    with ArchiveWriter(str(tmp_path)) as writer:
        writer.commit("d", "t", [], pa.table(data), provenance={"run_id": "run-1"})
    with pytest.raises(JoinInputError, match=r"d/t: column 'tags' \(list<.*>\) cannot be compared"):
        join_check(str(tmp_path), "d/t", "d/t", "tags")


def test_tables_as_pairs_and_the_archive_as_a_path(root: str) -> None:
    pairs = (("league-players", "players"), ("league-contracts", "contracts"))
    found = join_check(Path(root), *pairs, "player_key=name_key", {"season": "2026"})
    season = "season = 2026"
    assert found.matched == duckdb_matched(root, season, season)
    assert (found.left.table, found.right.table) == (PLAYERS, CONTRACTS)
