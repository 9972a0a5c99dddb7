"""Tests for harvester.store.diff: row-level diff of two versions of one partition.

Expected rows and counts are worked out by hand from the small invented tables below. Matching
rows by key columns and reporting added / removed / changed rows is common practice, no published
source; float equality follows IEEE 754 (equal zeros of either sign, from memory) with the
documented exception that NaN equals NaN.
"""

from __future__ import annotations

import datetime as dt
import json
from decimal import Decimal

import pyarrow as pa
import pytest

from harvester.errors import StoreError
from harvester.store.row_diff import CellChange, RowChange, diff_versions

OLD = pa.table(
    {
        "player": ["Ilka Brandt", "Oda Venn", "Mara Quist", "Tove Aarn"],
        "club": ["Harrowby HC", "Ostermoor", "Kalvik", "Kalvik"],
        "goals": [31, 12, 8, 5],
        "_captured_at": ["2026-01-01T00:00:00Z"] * 4,
    }
)
NEW = pa.table(
    {
        "player": ["Oda Venn", "Ilka Brandt", "Tove Aarn", "Rune Sell"],
        "club": ["Ostermoor", "Harrowby HC", "Wendelstrand", "Kalvik"],
        "goals": [13, 31, 5, 2],
        "_captured_at": ["2026-02-01T00:00:00Z"] * 4,
    }
)


def test_rows_added_removed_and_changed_by_key() -> None:
    diff = diff_versions(OLD, NEW, ["player"])
    # Rune Sell is new; Mara Quist is gone; Oda Venn's goals 12 → 13; Tove Aarn changed club;
    # Ilka Brandt is unchanged (her _captured_at differs, but provenance does not count).
    assert diff.added == ({"player": "Rune Sell", "club": "Kalvik", "goals": 2},)
    assert diff.removed == ({"player": "Mara Quist", "club": "Kalvik", "goals": 8},)
    assert diff.changed == (
        RowChange((("player", "Oda Venn"),), (CellChange("goals", 12, 13),)),
        RowChange((("player", "Tove Aarn"),), (CellChange("club", "Kalvik", "Wendelstrand"),)),
    )
    assert diff.unchanged == 1
    assert diff.counts == {"added": 1, "removed": 1, "changed": 2, "unchanged": 1}
    assert diff.key == ("player",)
    assert diff.key_given
    assert not diff.identical
    assert diff.summary() == "rows: 1 added, 1 removed, 2 changed, 1 unchanged (key player)"


def test_a_changed_row_lists_every_changed_column() -> None:
    old = pa.table({"player": ["Oda Venn"], "club": ["Ostermoor"], "goals": [12]})
    new = pa.table({"player": ["Oda Venn"], "club": ["Kalvik"], "goals": [14]})
    diff = diff_versions(old, new, ["player"])
    assert diff.changed == (
        RowChange(
            (("player", "Oda Venn"),),
            (CellChange("club", "Ostermoor", "Kalvik"), CellChange("goals", 12, 14)),
        ),
    )


def test_two_column_key_and_a_null_in_the_key() -> None:
    old = pa.table(
        {
            "season": [2019, 2019, None],
            "club": ["Kalvik", "Ostermoor", "Kalvik"],
            "points": [20, 18, 3],
        }
    )
    new = pa.table(
        {
            "season": [None, 2019, 2019],
            "club": ["Kalvik", "Kalvik", "Ostermoor"],
            "points": [4, 20, 18],
        }
    )
    diff = diff_versions(old, new, ["season", "club"])
    # (None, Kalvik) is the same key on both sides: null equals null.
    assert diff.changed == (
        RowChange((("season", None), ("club", "Kalvik")), (CellChange("points", 3, 4),)),
    )
    assert diff.unchanged == 2
    assert (diff.added, diff.removed) == ((), ())


def test_nulls_equal_nulls_in_compared_cells() -> None:
    old = pa.table({"player": ["A", "B"], "assists": pa.array([None, None], pa.int64())})
    new = pa.table({"player": ["A", "B"], "assists": pa.array([None, 0], pa.int64())})
    diff = diff_versions(old, new, ["player"])
    assert diff.changed == (RowChange((("player", "B"),), (CellChange("assists", None, 0),)),)
    assert diff.unchanged == 1


def test_floats_are_compared_exactly() -> None:
    old = pa.table({"k": ["tiny", "nan", "zero", "same"], "v": [0.1, float("nan"), 0.0, 2.5]})
    new = pa.table(
        {"k": ["tiny", "nan", "zero", "same"], "v": [0.1000000000000001, float("nan"), -0.0, 2.5]}
    )
    diff = diff_versions(old, new, ["k"])
    # No tolerance: 0.1 and 0.1000000000000001 are different doubles. NaN = NaN by choice;
    # -0.0 == 0.0 by IEEE 754 comparison.
    assert [change.key for change in diff.changed] == [(("k", "tiny"),)]
    assert diff.unchanged == 3


def test_duplicate_key_is_an_error_naming_the_key_and_a_value() -> None:
    new = pa.table({"player": ["Oda Venn", "Ilka Brandt", "Oda Venn"], "goals": [1, 2, 3]})
    with pytest.raises(StoreError) as caught:
        diff_versions(OLD.select(["player", "goals"]), new, ["player"])
    message = str(caught.value)
    assert "\n" not in message
    assert "key (player) is not unique in the new version" in message
    assert "player='Oda Venn'" in message
    assert "rows 0 and 2" in message


def test_duplicate_key_in_the_old_version_is_reported_as_old() -> None:
    old = pa.table({"player": ["X", "X"], "goals": [1, 2]})
    with pytest.raises(StoreError, match=r"not unique in the old version: player='X'"):
        diff_versions(old, old.slice(0, 1), ["player"])


def test_a_missing_key_column_names_the_columns_there_are() -> None:
    with pytest.raises(
        StoreError,
        match=r"key column 'number' is not in the old version "
        r"\(data columns: player, club, goals\)",
    ):
        diff_versions(OLD, NEW, ["number"])


def test_no_key_compares_whole_rows_so_a_change_is_remove_plus_add() -> None:
    old = pa.table({"player": ["Oda Venn", "Ilka Brandt"], "goals": [12, 31]})
    new = pa.table({"player": ["Oda Venn", "Ilka Brandt"], "goals": [13, 31]})
    diff = diff_versions(old, new, [])
    assert diff.removed == ({"player": "Oda Venn", "goals": 12},)
    assert diff.added == ({"player": "Oda Venn", "goals": 13},)
    assert diff.changed == ()
    assert diff.unchanged == 1
    assert diff.key == ("player", "goals")
    assert not diff.key_given
    assert diff.summary() == (
        "rows: 1 added, 1 removed, 0 changed, 1 unchanged (no key: whole rows compared)"
    )


def test_no_key_counts_repeated_rows_as_a_multiset() -> None:
    row = {"club": "Kalvik", "result": "W"}
    other = {"club": "Kalvik", "result": "L"}
    old = pa.Table.from_pylist([row, row, other, other])
    new = pa.Table.from_pylist([row, row, row, other])
    diff = diff_versions(old, new, [])
    # Two copies of `row` before, three after: one added; two of `other` before, one after.
    assert diff.added == (row,)
    assert diff.removed == (other,)
    assert diff.unchanged == 3


def test_added_and_removed_columns_are_reported_once_not_per_row() -> None:
    old = pa.table({"player": ["A", "B"], "coach": ["C1", "C1"], "goals": [1, 2]})
    new = pa.table({"player": ["A", "B"], "goals": [1, 5], "venue": ["Kalvik Hall", "Kalvik Hall"]})
    diff = diff_versions(old, new, ["player"])
    assert diff.columns_added == ("venue",)
    assert diff.columns_removed == ("coach",)
    assert diff.changed == (RowChange((("player", "B"),), (CellChange("goals", 2, 5),)),)
    assert diff.unchanged == 1
    assert diff.summary() == (
        "rows: 0 added, 0 removed, 1 changed, 1 unchanged (key player); "
        "columns added: venue; columns removed: coach"
    )


def test_identical_versions() -> None:
    diff = diff_versions(OLD, OLD, ["player"])
    assert diff.identical
    assert diff.counts == {"added": 0, "removed": 0, "changed": 0, "unchanged": 4}


def test_to_dict_is_plain_json() -> None:
    when = dt.datetime(2026, 3, 1, 18, 0, tzinfo=dt.UTC)
    old = pa.table({"match": [1, 2], "kickoff": [when, when], "gate": [Decimal("1.50")] * 2})
    new = pa.table({"match": [2, 3], "kickoff": [when, when], "gate": [Decimal("2.00")] * 2})
    diff = diff_versions(old, new, ["match"])
    encoded = json.dumps(diff.to_dict(), allow_nan=False)  # must not need a default= hook
    # datetime.isoformat of an aware UTC time ends "+00:00" (Python docs, datetime.isoformat).
    assert json.loads(encoded) == {
        "key": ["match"],
        "key_given": True,
        "counts": {"added": 1, "removed": 1, "changed": 1, "unchanged": 0},
        "columns_added": [],
        "columns_removed": [],
        "added": [{"match": 3, "kickoff": "2026-03-01T18:00:00.000000Z", "gate": "2.00"}],
        "removed": [{"match": 1, "kickoff": "2026-03-01T18:00:00.000000Z", "gate": "1.50"}],
        "changed": [{"key": {"match": 2}, "changes": {"gate": {"old": "1.50", "new": "2.00"}}}],
        "summary": "rows: 1 added, 1 removed, 1 changed, 0 unchanged (key match)",
    }
