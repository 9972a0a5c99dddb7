"""Arrays built from buffers (harvester/extract/arrays.py) against pyarrow's own ``pa.array``.

``pa.array(values, type=...)`` is the reference (a general-purpose library, the one the typed
columns used to be built with); the arrays here must be equal to it, with the same type, for
every list of values.
"""

from __future__ import annotations

import math
from datetime import date
from typing import Any

import pyarrow as pa
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from harvester.extract.arrays import from_values, split_joined, spread, string_array

SETTINGS = settings(max_examples=200, deadline=None, derandomize=True)
# Any texts but lone surrogates (not UTF-8, refused alike: see below); NUL now and then.
TEXTS = st.text(st.characters(blacklist_categories=["Cs"]))
VALUES = {
    "string": (pa.string(), TEXTS),
    "int64": (pa.int64(), st.integers(min_value=-(2**63), max_value=2**63 - 1)),
    "float64": (pa.float64(), st.floats()),
    "bool": (pa.bool_(), st.booleans()),
    "date32": (pa.date32(), st.dates()),
}


def exact(array: pa.Array) -> list[Any]:
    """The values with floats as hex, so that -0.0 and 0.0 (and NaNs) are told apart."""
    return [v.hex() if isinstance(v, float) else v for v in array.to_pylist()]


def assert_same(ours: pa.Array, reference: pa.Array) -> None:
    assert ours.type == reference.type
    assert len(ours) == len(reference)
    assert ours.null_count == reference.null_count
    assert exact(ours) == exact(reference)
    if not any(isinstance(v, float) and math.isnan(v) for v in reference.to_pylist()):
        assert ours.equals(reference)  # Arrow's equality treats NaN as unequal to itself


@SETTINGS
@given(st.sampled_from(sorted(VALUES)), st.data())
def test_from_values_equals_pa_array(kind: str, data: st.DataObject) -> None:
    arrow_type, values = VALUES[kind]
    listed = data.draw(st.lists(st.one_of(st.none(), values), max_size=30))
    assert_same(from_values(listed, arrow_type), pa.array(listed, type=arrow_type))


@pytest.mark.parametrize(
    ("values", "arrow_type"),
    [
        ([], pa.string()),
        ([None, None], pa.string()),
        ([""], pa.string()),
        (["", "", "Lea Varn"], pa.string()),
        ([-(2**63), 2**63 - 1], pa.int64()),  # the ends of int64
        ([-0.0, 0.0, math.inf, -math.inf], pa.float64()),
        ([date(1, 1, 1), date(1970, 1, 1), date(9999, 12, 31)], pa.date32()),  # date's range
        ([True, None, False], pa.bool_()),
    ],
)
def test_from_values_worked_cases(values: list[Any], arrow_type: pa.DataType) -> None:
    assert_same(from_values(values, arrow_type), pa.array(values, type=arrow_type))


def test_date32_counts_days_from_the_unix_epoch() -> None:
    # Arrow format spec, Date32: days since the UNIX epoch, 1970-01-01.
    days = from_values([date(1970, 1, 2), date(1969, 12, 31)], pa.date32())
    assert days.view(pa.int32()).to_pylist() == [1, -1]


def test_an_int_past_64_bits_is_an_overflow_error_as_in_pyarrow() -> None:
    with pytest.raises(OverflowError):
        pa.array([2**63], type=pa.int64())
    with pytest.raises(OverflowError):
        from_values([2**63], pa.int64())


def test_a_lone_surrogate_is_a_unicode_error_as_in_pyarrow() -> None:
    with pytest.raises(UnicodeEncodeError):
        pa.array(["\ud800"], type=pa.string())
    with pytest.raises(UnicodeEncodeError):
        string_array(["\ud800"])


@SETTINGS
@given(st.lists(st.text(st.characters(blacklist_categories=["Cs"], blacklist_characters="\0"))))
def test_split_joined_gives_back_the_texts(texts: list[str]) -> None:
    assert split_joined("\0".join(texts), len(texts)).to_pylist() == texts


@SETTINGS
@given(st.lists(st.one_of(st.none(), st.integers(min_value=0, max_value=99)), max_size=30))
def test_spread_puts_values_back_at_their_positions(full: list[int | None]) -> None:
    positions = [i for i, v in enumerate(full) if v is not None]
    dense = pa.array([v for v in full if v is not None], type=pa.int64())
    assert_same(spread(dense, positions, len(full)), pa.array(full, type=pa.int64()))
