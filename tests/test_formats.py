"""Cell values as JSON: one conversion for every JSON and CSV output of a table."""

from __future__ import annotations

import datetime as dt
import json
from decimal import Decimal

import pytest

from harvester.formats import json_value, tsv_field


@pytest.mark.parametrize(
    ("value", "expected"),
    [
        # RFC 8259 §6: "Numeric values that cannot be represented ... (such as Infinity and NaN)
        # are not permitted", so they are written as null.
        (float("nan"), None),
        (float("inf"), None),
        (float("-inf"), None),
        (Decimal("NaN"), None),
        (1.5, 1.5),
        (dt.date(2026, 3, 1), "2026-03-01"),  # ISO 8601 calendar date
        # RFC 3339 §5.6, in UTC with "Z" and microseconds (project rule, REFERENCES §8.1).
        (
            dt.datetime(2026, 3, 1, 19, 0, tzinfo=dt.timezone(dt.timedelta(hours=1))),
            "2026-03-01T18:00:00.000000Z",
        ),
        (dt.timedelta(minutes=12, seconds=30), 750.0),  # a duration as seconds
        (b"\x00\xff", "AP8="),  # RFC 4648 §4 base64: 00000000 11111111 → A P 8 =
        (Decimal("3.10"), "3.10"),
        ([1, None, float("nan")], [1, None, None]),
        ({"a": float("inf")}, {"a": None}),
        (None, None),
        (True, True),
    ],
)
def test_json_value(value: object, expected: object) -> None:
    assert json_value(value) == expected


def test_every_value_is_strict_json() -> None:
    values = [float("nan"), float("inf"), dt.date(2026, 1, 1), Decimal("1.5"), b"x", None]
    # allow_nan=False raises on any NaN or Infinity that slipped through (json module docs).
    text = json.dumps([json_value(value) for value in values], allow_nan=False)
    assert json.loads(text)[:2] == [None, None]


@pytest.mark.parametrize(
    ("value", "field"),
    [
        ("season=2019", "season=2019"),
        ("north\tsouth", "north\\tsouth"),  # a tab would start a new field
        ("a\nfailed\tforged", "a\\nfailed\\tforged"),  # a line break would start a new line
        ("cr\r", "cr\\r"),
        ("back\\slash", "back\\\\slash"),  # escaped too, so every escape reads back one way
        ("bell\x07 del\x7f c1\x85", "bell\\x07 del\\x7f c1\\x85"),
        ("Åsa Øberg\u00a0§", "Åsa Øberg\u00a0§"),  # printable text and NBSP stay as they are
        (2019, "2019"),
    ],
)
def test_tsv_field(value: object, field: str) -> None:
    assert tsv_field(value) == field


def test_a_forged_value_stays_on_its_line() -> None:
    line = "\t".join(tsv_field(part) for part in ["new", "x\nfailed\ty", "z"])
    assert line.count("\n") == 0 and line.split("\t") == ["new", "x\\nfailed\\ty", "z"]
