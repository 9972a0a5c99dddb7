"""Tests for harvester.store.drift: column and row-count drift between two versions.

Rename pairing is a heuristic of the trade (common practice, no published source); the name
similarity it uses is difflib's ratio, 2*M/T with M matched characters and T the total length of
both names (Python docs, ``difflib.SequenceMatcher.ratio``). Expected ratios below are worked by
hand from that definition.
"""

from __future__ import annotations

import pyarrow as pa
import pytest

from harvester.store.drift import DriftReport, detect_drift


def test_the_example_from_the_brief_rename_by_name_and_too_few_rows() -> None:
    old = pa.table({"player": ["Ilka Brandt", "Oda Venn"], "shooting_pct": [0.5, 0.25]})
    new = pa.table(
        {"player": ["Ilka Brandt", "Oda Venn", "Mara Quist"], "shot_pct": [0.4, 0.3, 0.2]}
    )
    # "shooting_pct" vs "shot_pct": blocks "_pct" (4) + "sho" (3) + "t" (1) = 8 of 12 + 8
    # characters, ratio 2*8/20 = 0.8, at the threshold; values differ, so it is the name rule.
    report = detect_drift(old, new, min_rows=10, max_rows=None)
    assert report.renamed == (("shooting_pct", "shot_pct"),)
    assert report.added == ()
    assert report.removed == ()
    assert report.row_problems == ("3 rows < min_rows 10",)
    assert report.changed
    assert report.summary() == (
        "drift: removed shooting_pct; added shot_pct (looks renamed from shooting_pct); "
        "3 rows < min_rows 10"
    )


def test_equal_values_pair_columns_whose_names_differ() -> None:
    old = pa.table({"player": ["A. Holm", "B. Lind"], "goals": [12, 7]})
    new = pa.table({"player": ["A. Holm", "B. Lind"], "g": [12, 7]})
    # "goals" vs "g": ratio 2*1/6 = 0.33, so only the equal values can pair them.
    report = detect_drift(old, new, min_rows=None, max_rows=None)
    assert report.renamed == (("goals", "g"),)
    assert (report.added, report.removed) == ((), ())


def test_unrelated_names_with_different_values_are_added_and_removed() -> None:
    old = pa.table({"player": ["A. Holm"], "goals": [12]})
    new = pa.table({"player": ["A. Holm"], "assists": [3]})
    report = detect_drift(old, new, min_rows=None, max_rows=None)
    assert report.added == ("assists",)
    assert report.removed == ("goals",)
    assert report.renamed == ()
    assert report.summary() == "drift: removed goals; added assists"


def test_close_names_of_different_types_are_not_a_rename() -> None:
    old = pa.table({"shooting_pct": pa.array([0.5], pa.float64())})
    new = pa.table({"shot_pct": pa.array(["50%"], pa.string())})
    report = detect_drift(old, new, min_rows=None, max_rows=None)
    assert report.renamed == ()
    assert report.removed == ("shooting_pct",)
    assert report.added == ("shot_pct",)


def test_names_just_below_the_ratio_are_not_paired() -> None:
    # "wins" vs "won": "w" + "n" match, 2*2/7 = 0.57 < 0.8.
    old = pa.table({"wins": [3]})
    new = pa.table({"won": [4]})
    report = detect_drift(old, new, min_rows=None, max_rows=None)
    assert report.renamed == ()
    assert (report.removed, report.added) == (("wins",), ("won",))


def test_type_change_names_both_arrow_types() -> None:
    old = pa.table({"club": ["Harrowby HC"], "goals": pa.array([31], pa.int64())})
    new = pa.table({"club": ["Harrowby HC"], "goals": pa.array(["31"], pa.string())})
    report = detect_drift(old, new, min_rows=None, max_rows=None)
    # str() of a pyarrow DataType is its type name (pyarrow docs, "Data Types and Schemas").
    assert report.type_changed == (("goals", "int64", "string"),)
    assert report.summary() == "drift: type of goals changed from int64 to string"


def test_provenance_columns_are_ignored() -> None:
    old = pa.table({"club": ["Ostermoor"], "_captured_at": ["2026-01-01"], "_source_row": [0]})
    new = pa.table(
        {"club": ["Ostermoor"], "_final_url": ["http://127.0.0.1/x"], "_source_row": ["0"]}
    )
    report = detect_drift(old, new, min_rows=None, max_rows=None)
    assert report == DriftReport()
    assert not report.changed
    assert report.summary() == "no drift"


def test_first_version_checks_only_row_bounds() -> None:
    new = pa.table({"club": ["Ostermoor", "Wendelstrand", "Kalvik"]})
    assert detect_drift(None, new, min_rows=None, max_rows=None) == DriftReport()
    report = detect_drift(None, new, min_rows=4, max_rows=None)
    assert report == DriftReport(row_problems=("3 rows < min_rows 4",))


@pytest.mark.parametrize(
    ("rows", "min_rows", "max_rows", "problems"),
    [
        (10, 10, 10, ()),  # both bounds are inclusive
        (9, 10, None, ("9 rows < min_rows 10",)),
        (11, None, 10, ("11 rows > max_rows 10",)),
        (0, 1, 5, ("0 rows < min_rows 1",)),
    ],
)
def test_row_bounds(
    rows: int, min_rows: int | None, max_rows: int | None, problems: tuple[str, ...]
) -> None:
    table = pa.table({"n": list(range(rows))})
    report = detect_drift(table, table, min_rows=min_rows, max_rows=max_rows)
    assert report.row_problems == problems
    assert report.changed is bool(problems)


def test_each_column_is_in_at_most_one_pair() -> None:
    old = pa.table({"alpha": [1, 2], "beta": [1, 2]})
    new = pa.table({"gamma": [1, 2]})
    report = detect_drift(old, new, min_rows=None, max_rows=None)
    # Both old columns equal the new one; the first in the old order takes it.
    assert report.renamed == (("alpha", "gamma"),)
    assert report.removed == ("beta",)
    assert report.added == ()


def test_value_matches_are_paired_before_name_matches() -> None:
    old = pa.table({"goal": [4, 9]})
    new = pa.table({"goals": [5, 6], "scored": [4, 9]})
    # "goal"/"goals" ratio 2*4/9 = 0.89 would pair by name, but "scored" holds equal values.
    report = detect_drift(old, new, min_rows=None, max_rows=None)
    assert report.renamed == (("goal", "scored"),)
    assert report.added == ("goals",)


def test_all_null_or_reordered_or_shorter_columns_do_not_pair_by_values() -> None:
    nulls = detect_drift(
        pa.table({"notes": pa.array([None, None], pa.string())}),
        pa.table({"remark": pa.array([None, None], pa.string())}),
        min_rows=None,
        max_rows=None,
    )
    assert nulls.renamed == ()
    reordered = detect_drift(
        pa.table({"tally": [1, 2]}), pa.table({"score": [2, 1]}), min_rows=None, max_rows=None
    )
    assert reordered.renamed == ()
    shorter = detect_drift(
        pa.table({"tally": [1, 2]}), pa.table({"score": [1]}), min_rows=None, max_rows=None
    )
    assert shorter.renamed == ()


def test_nulls_in_the_same_places_still_pair_by_values() -> None:
    old = pa.table({"caps": [3, None, 5]})
    new = pa.table({"apps": [3, None, 5]})
    # Chunked differently on purpose: equality is by value, not by layout.
    new = pa.Table.from_batches(new.to_batches(max_chunksize=1))
    report = detect_drift(old, new, min_rows=None, max_rows=None)
    assert report.renamed == (("caps", "apps"),)


def test_summary_lists_everything_in_one_line() -> None:
    report = DriftReport(
        added=("venue",),
        removed=("coach",),
        type_changed=(("points", "int64", "double"),),
        renamed=(("goals_for", "gf"),),
        row_problems=("2 rows < min_rows 8",),
    )
    line = report.summary()
    assert "\n" not in line
    assert line == (
        "drift: removed coach, goals_for; added venue, gf (looks renamed from goals_for); "
        "type of points changed from int64 to double; 2 rows < min_rows 8"
    )


@pytest.mark.parametrize(
    "report",
    [
        DriftReport(added=("a",)),
        DriftReport(removed=("a",)),
        DriftReport(type_changed=(("a", "int64", "string"),)),
        DriftReport(renamed=(("a", "b"),)),
        DriftReport(row_problems=("0 rows < min_rows 1",)),
    ],
)
def test_changed_is_true_for_any_finding(report: DriftReport) -> None:
    assert report.changed
