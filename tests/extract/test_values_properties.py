"""Property tests for cell parsing: Python's own number formatting is the reference.

Python's format-spec mini-language (Python docs, "Format Specification Mini-Language": the ","
option inserts a comma every three digits) writes numbers the way tables do, independently of
harvester; whatever it writes must parse back to the number it was given.
"""

from __future__ import annotations

import string

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from harvester.errors import ValueParseError
from harvester.extract.rules import ColumnRule, TableRule
from harvester.extract.values import (
    MINUS_SIGNS,
    convert_column,
    infer_type,
    parse_decimal,
    parse_duration,
    parse_integer,
    split_markers,
)

# Derandomized so a run is repeatable; the counts keep this file to a few seconds.
SETTINGS = settings(
    max_examples=200,
    deadline=None,
    derandomize=True,
    suppress_health_check=[HealthCheck.too_slow],
)
TABLE = TableRule()
# U+00A0 NO-BREAK SPACE, U+202F NARROW NO-BREAK SPACE, U+2009 THIN SPACE, SPACE.
GROUP_SPACES = ["\u00a0", "\u202f", "\u2009", " "]
NUMERIC = {"integer", "decimal", "percent", "currency"}
# Texts with a letter and no digit: never a number, date or duration, and never a default null.
WORDS = st.text(alphabet=string.ascii_letters + " .,'", min_size=1, max_size=12).filter(
    lambda t: any(c.isalpha() for c in t)
)


@SETTINGS
@given(st.integers())
def test_comma_grouped_integer_round_trips(n: int) -> None:
    assert parse_integer(f"{n:,}") == n


@SETTINGS
@given(st.integers(max_value=-1))
def test_unicode_minus_sign_round_trips(n: int) -> None:
    # Unicode Standard: U+2212 MINUS SIGN is the proper minus; Python writes U+002D.
    assert parse_integer(f"{n:,}".replace("-", "\u2212")) == n


@SETTINGS
@given(st.integers(), st.sampled_from(GROUP_SPACES))
def test_space_grouped_integer_round_trips(n: int, space: str) -> None:
    # SI Brochure 9th ed. §5.4.4 (from memory): digits grouped in threes, split by a space.
    assert parse_integer(f"{n:,}".replace(",", space)) == n


@SETTINGS
@given(st.integers())
def test_dot_grouped_integer_round_trips_with_decimal_comma(n: int) -> None:
    assert parse_integer(f"{n:,}".replace(",", "."), decimal_mark=",") == n


@SETTINGS
@given(st.integers(min_value=1000), st.integers(min_value=0, max_value=2))
def test_broken_grouping_is_never_an_integer(n: int, drop: int) -> None:
    # Dropping one digit of the last group leaves a group of two: "1,250" -> "1,25".
    text = f"{n:,}"
    broken = text[: len(text) - 3 + drop] + text[len(text) - 2 + drop :]
    with pytest.raises(ValueError):
        parse_integer(broken)


@SETTINGS
@given(st.floats(min_value=-1e12, max_value=1e12, allow_nan=False, allow_infinity=False))
def test_comma_grouped_two_place_decimal_round_trips(x: float) -> None:
    parsed = parse_decimal(f"{x:,.2f}")
    # Python's float() of the same digits without grouping is the exact reference, and
    # rounding to two places moves the value by at most half a hundredth.
    assert parsed == float(f"{x:.2f}")
    assert abs(parsed - x) <= 0.005 + abs(x) * 1e-15


@SETTINGS
@given(st.floats(min_value=0, max_value=1e9, allow_nan=False), st.sampled_from(MINUS_SIGNS))
def test_any_minus_sign_negates_a_decimal(x: float, minus: str) -> None:
    assert parse_decimal(f"{minus}{x:,.3f}") == -float(f"{x:.3f}")


@SETTINGS
@given(st.integers(min_value=0, max_value=10**6), st.integers(min_value=0, max_value=59))
def test_minutes_seconds_is_sixty_m_plus_s(m: int, s: int) -> None:
    assert parse_duration(f"{m}:{s:02d}") == 60 * m + s


@SETTINGS
@given(
    st.integers(min_value=0, max_value=10**4),
    st.integers(min_value=0, max_value=59),
    st.integers(min_value=0, max_value=59),
)
def test_hours_minutes_seconds(h: int, m: int, s: int) -> None:
    assert parse_duration(f"{h}:{m:02d}:{s:02d}") == 3600 * h + 60 * m + s


@SETTINGS
@given(st.integers(min_value=0, max_value=999), st.integers(min_value=60, max_value=99))
def test_seconds_of_sixty_or_more_are_refused(m: int, s: int) -> None:
    with pytest.raises(ValueError):
        parse_duration(f"{m}:{s}")


@SETTINGS
@given(
    st.lists(st.integers(min_value=-(10**9), max_value=10**9), max_size=20),
    st.data(),
    WORDS,
)
def test_inference_is_never_numeric_with_a_word_in_the_column(
    numbers: list[int], data: st.DataObject, word: str
) -> None:
    texts = [f"{n:,}" for n in numbers]
    texts.insert(data.draw(st.integers(min_value=0, max_value=len(texts))), word)
    assert infer_type(texts, TABLE) not in NUMERIC
    assert infer_type(texts, TABLE) == "text"


@SETTINGS
@given(st.lists(st.integers(min_value=-(2**63), max_value=2**63 - 1), min_size=1, max_size=30))
def test_inferred_integer_column_keeps_every_value(numbers: list[int]) -> None:
    col = convert_column("goals", [f"{n:,}" for n in numbers], None, TABLE)
    assert col.type == "integer"
    assert col.values.to_pylist() == numbers


# Marker characters (no whitespace) and texts built from letters, spaces and those markers.
MARKERS = st.text(alphabet="*†‡+#§¹!", min_size=0, max_size=4)


@SETTINGS
@given(st.text(alphabet="ab *†‡+#§¹!\u00a0\t", max_size=15), MARKERS)
def test_split_markers_never_loses_a_character(text: str, markers: str) -> None:
    core, marks = split_markers(text, markers)
    stripped = text.strip()
    tail = stripped[len(core) :]
    assert stripped.startswith(core)
    assert "".join(tail.split()) == marks  # only whitespace between markers is dropped
    assert all(c in markers for c in marks)
    # The run is maximal: what is left does not end in a marker or in whitespace.
    assert core == "" or (core[-1] not in markers and not core[-1].isspace())


@SETTINGS
@given(st.text(alphabet="ab7+*†‡#", max_size=15), MARKERS)
def test_split_markers_without_whitespace_is_an_exact_split(text: str, markers: str) -> None:
    core, marks = split_markers(text, markers)
    assert core + marks == text


@SETTINGS
@given(
    st.lists(st.integers(min_value=0, max_value=10**6), min_size=1, max_size=15),
    st.data(),
    WORDS,
    st.integers(min_value=1, max_value=10**4),
)
def test_declared_integer_error_names_the_bad_row(
    numbers: list[int], data: st.DataObject, word: str, first_row: int
) -> None:
    bad = data.draw(st.integers(min_value=0, max_value=len(numbers)))
    texts = [f"{n:,}" for n in numbers]
    texts.insert(bad, word)
    rows = list(range(first_row, first_row + len(texts)))
    with pytest.raises(ValueParseError) as caught:
        convert_column("goals", texts, ColumnRule("goals", type="integer"), TABLE, body_rows=rows)
    message = str(caught.value)
    assert f", row {first_row + bad} of the table body: " in message
    assert repr(word) in message
