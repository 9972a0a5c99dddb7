"""Whole-column parsing (harvester/extract/bulk_numbers.py) against the per-cell parsers.

The per-cell parsers (parsers.py, Python's ``re``, ``int()`` and ``float()``) are the reference:
forced with ``per_cell_only()``, they must give the same column — the same type, the same
values bit for bit, the same nulls — or the same error, for every column of texts. The worked
cases below were read by hand; Unicode character names are quoted from memory of the code
charts, and the grouping conventions are common practice with no published source.
"""

from __future__ import annotations

import re
from typing import Any

import pyarrow as pa
import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from harvester.errors import ValueParseError
from harvester.extract import parsers
from harvester.extract.bulk_numbers import BULK_KINDS, bulk_column, column_pattern, per_cell_only
from harvester.extract.parsers import MINUS_SIGNS
from harvester.extract.rules import ColumnRule, ColumnType, TableRule
from harvester.extract.values import convert_column

SETTINGS = settings(
    max_examples=800,
    deadline=None,
    derandomize=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
TABLE = TableRule()
COMMA_TABLE = TableRule(decimal_mark=",")

# --- the shapes a number cell can take ------------------------------------------------------

# Signs: none, plus, every minus the parsers know, doubled signs, and U+2010 HYPHEN and U+2014
# EM DASH, which are no minus signs.
SIGNS = ["", "+", *MINUS_SIGNS, "--", "+-", "\u2010", "\u2014"]
# Group separators: right ones for either decimal mark, and ones no parser groups with
# (underscore, which int() accepts; apostrophe, Swiss style; a doubled comma; a tab).
SEPARATORS = [",", ".", " ", "\u00a0", "\u202f", "\u2009", "_", "'", ",,", "\t"]
# Digits no parser should read: U+0661 U+0662 ARABIC-INDIC ONE and TWO (int() reads them),
# U+FF11 FULLWIDTH DIGIT ONE, U+00B2 SUPERSCRIPT TWO (str.isdigit() says yes).
ODD_DIGITS = ["\u0661\u0662", "\uff11", "\u00b2", "1\u0662"]
# float() reads all of these; no cell parser should.
FLOAT_WORDS = ["1e5", "1E-3", "inf", "-inf", "nan", "Infinity", "1_000", "0x1F", "1.", "5e"]
SUFFIXES = ["", "", "", "%", " %", "\u00a0%", "%%", "*", " †", "k", "e5", "."]
PADDING = ["", "", " ", "\u00a0", "\t", "\n"]
NULL_TEXTS = ["", "—", "–", "-", "N/A", "n/a"]
WORDS = ["Lea Varn", "x", "DNP", "12:30", "2026-04-01", "$5", "€1.2m", "1:02:03"]
# Around the ends of int64 (two's complement, 64 bits: -2**63 to 2**63 - 1) and past them.
EDGES = [2**63 - 1, 2**63, 2**63 + 1, 2**64, 10**19, 10**25, 10**40]


def grouped(digits: str, separator: str, cut: int) -> str:
    """``digits`` with ``separator`` every three digits from the right (``cut`` = 3), or at
    another stride (1, 2, 4), which puts the separators in the wrong places."""
    head = len(digits) % cut or cut
    parts = [digits[:head]] + [digits[i : i + cut] for i in range(head, len(digits), cut)]
    return separator.join(parts)


@st.composite
def whole_parts(draw: st.DrawFn, clean: bool) -> str:
    plain = [
        st.integers(min_value=0, max_value=10**6).map(str),
        st.sampled_from(EDGES).map(str),
        st.integers(min_value=0, max_value=2**64).map(str),
    ]
    odd = [
        st.text("0123456789", min_size=1, max_size=24),  # leading zeros, long runs
        st.sampled_from(["0", "00", "007", ""]),
        st.sampled_from(ODD_DIGITS),
    ]
    whole: str = draw(st.one_of(plain if clean else plain + odd))
    return whole


@st.composite
def number_texts(draw: st.DrawFn, shape: dict[str, Any], clean: bool) -> str:
    """One number-like cell in the column's shape, now and then bent out of it."""
    whole = draw(whole_parts(clean))
    if shape["separator"] and whole.isascii() and draw(st.integers(0, 4)):
        whole = grouped(whole, shape["separator"], shape["cut"])
    sign: str = draw(st.sampled_from(shape["signs"]))
    fraction = ""
    if shape["fraction"] and draw(st.booleans()):
        mark: str = shape["mark"]
        fraction = mark + draw(st.text("0123456789", min_size=1, max_size=20))
    suffix: str = draw(st.sampled_from(shape["suffixes"]))
    pad = draw(st.sampled_from(PADDING))
    return pad + sign + whole + fraction + suffix + pad


@st.composite
def odd_cells(draw: st.DrawFn) -> str:
    return draw(
        st.one_of(
            st.sampled_from(NULL_TEXTS + WORDS + FLOAT_WORDS),
            st.text(st.characters(blacklist_categories=["Cs"]), max_size=6),
            st.integers().map(lambda n: f"{n:,}"),  # Python's own grouping, any size
        )
    )


@st.composite
def columns(draw: st.DrawFn) -> tuple[list[str], TableRule]:
    """A column whose cells share one shape (as a real column does), and its table rule: half
    the time a shape the bulk route reads, otherwise any shape, with a few odd cells."""
    table = draw(st.sampled_from([TABLE, COMMA_TABLE]))
    clean = draw(st.booleans())
    mark = table.decimal_mark if clean else draw(st.sampled_from([".", ","]))
    separators = [s for s in ("", ",", ".", " ", "\u00a0") if s != mark] if clean else SEPARATORS
    suffixes = (
        [[""], ["%"], ["%", " %"], ["", "%"]] if clean else [[s] for s in SUFFIXES] + [SUFFIXES]
    )
    shape = {
        "signs": draw(st.lists(st.sampled_from(SIGNS[:8] if clean else SIGNS), min_size=1)),
        "separator": draw(st.sampled_from(separators)),
        "cut": 3 if clean else draw(st.sampled_from([3, 3, 1, 2, 4])),
        "fraction": draw(st.booleans()),
        "mark": mark,
        "suffixes": draw(st.sampled_from(suffixes)),
    }
    cells = draw(st.lists(number_texts(shape, clean), max_size=25))
    odd = st.one_of(odd_cells(), st.sampled_from(NULL_TEXTS))
    for cell in draw(st.lists(st.sampled_from(NULL_TEXTS) if clean else odd, max_size=3)):
        cells.insert(draw(st.integers(min_value=0, max_value=len(cells))), cell)
    return cells, table


def outcome(texts: list[str], rule: ColumnRule | None, table: TableRule) -> tuple[Any, ...]:
    """What convert_column gives: the kind, Arrow type and exact values, or the error."""
    try:
        column = convert_column("goals", texts, rule, table)
    except ValueParseError as error:
        return ("error", str(error), error.hint)
    except ValueError as error:  # int() refuses more than 4300 digits (sys.int_info)
        return ("crash", type(error).__name__, str(error))
    values = column.values
    exact = [v.hex() if isinstance(v, float) else v for v in values.to_pylist()]
    markers = None if column.markers is None else column.markers.to_pylist()
    return ("ok", column.type, str(values.type), values.null_count, exact, markers)


def assert_routes_agree(texts: list[str], rule: ColumnRule | None, table: TableRule) -> None:
    bulk = outcome(texts, rule, table)
    with per_cell_only():
        per_cell = outcome(texts, rule, table)
    assert bulk == per_cell
    if bulk[0] == "ok":
        with per_cell_only():
            reference = convert_column("goals", texts, rule, table).values
        ours = convert_column("goals", texts, rule, table).values
        assert ours.type == reference.type and ours.equals(reference)


RULES: list[ColumnRule | None] = [
    None,
    None,
    *(ColumnRule("goals", type=kind) for kind in BULK_KINDS),
    ColumnRule("goals", type="currency"),
    ColumnRule("goals", markers_to="flags"),
]


@SETTINGS
@given(columns(), st.sampled_from(RULES))
def test_bulk_and_per_cell_routes_give_the_same_column(
    column: tuple[list[str], TableRule], rule: ColumnRule | None
) -> None:
    texts, table = column
    declared = rule.type if rule is not None else None
    cells = [t.strip().replace("\0", "\ufffd") for t in texts if t.strip() not in table.nulls]
    taken = bulk_column(declared, cells, table.decimal_mark) is not None
    event(f"bulk route {'taken' if taken else 'not taken'}")
    assert_routes_agree(texts, rule, table)


# The forms here are the parsers' forms in RE2 syntax: the same language, text for text.
KINDS_AND_MODES = [(k, m, i) for k in BULK_KINDS for m in ".," for i in (True, False)]


@SETTINGS
@given(columns(), st.sampled_from(KINDS_AND_MODES))
def test_each_cell_matches_the_bulk_form_exactly_when_it_matches_the_parsers_form(
    column: tuple[list[str], TableRule], kind_and_mode: tuple[ColumnType, str, bool]
) -> None:
    import pyarrow.compute as pc

    texts, kind, mark, infer = column[0], *kind_and_mode
    cells = [t.strip() for t in texts if "\0" not in t]
    if not cells:
        return
    # The parsers' column pattern (Python re) over one cell at a time.
    python = [parsers._pattern(mark, kind, infer).fullmatch(c) is not None for c in cells]
    re2 = pc.match_substring_regex(pa.array(cells), column_pattern(kind, mark, infer))
    assert re2.to_pylist() == python


# --- worked cases ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("texts", "table", "kind", "expected"),
    [
        (["1,250,000", "\u221212", "+7", "0"], TABLE, "integer", [1_250_000, -12, 7, 0]),
        (["1\u00a0250", "2 500", "3\u202f000"], TABLE, "integer", [1250, 2500, 3000]),
        (["9223372036854775807", "-9223372036854775808"], TABLE, "integer", [2**63 - 1, -(2**63)]),
        (["1,5", "\u22120,25", "1.250,5"], COMMA_TABLE, "decimal", [1.5, -0.25, 1250.5]),
        (["12.5%", "0.5 %", "\u22123%"], TABLE, "percent", [12.5, 0.5, -3.0]),
        ([".5", "7", "-0.0"], TABLE, "decimal", [0.5, 7.0, -0.0]),
    ],
)
def test_bulk_route_reads_plain_columns(
    texts: list[str], table: TableRule, kind: ColumnType, expected: list[Any]
) -> None:
    result = bulk_column(None, texts, table.decimal_mark)
    assert result is not None
    assert result[0] == kind
    assert [repr(v) for v in result[1].to_pylist()] == [repr(v) for v in expected]
    assert_routes_agree(texts, None, table)


def test_declared_leading_zeros_are_read_but_not_inferred() -> None:
    # "007" is an identifier when inferring, a number when declared (values.py, common practice).
    assert bulk_column(None, ["007", "12"], ".") is None
    declared = bulk_column("integer", ["007", "12"], ".")
    assert declared is not None and declared[1].to_pylist() == [7, 12]
    assert convert_column("goals", ["007", "12"], None, TABLE).type == "text"


def test_declared_percent_takes_bare_numbers() -> None:
    result = bulk_column("percent", ["12.5%", "40"], ".")
    assert result is not None and result[1].to_pylist() == [12.5, 40.0]


def test_nulls_and_markers_sit_where_they_were() -> None:
    column = convert_column("goals", ["1,204*", "\u2014", "87", "N/A"], None, TABLE)
    assert column.type == "integer"
    assert column.values.to_pylist() == [1204, None, 87, None]


@pytest.mark.parametrize(
    "texts",
    [
        ["\u0661\u0662"],  # ARABIC-INDIC digits: int() reads them, the parsers do not
        ["\uff11\uff12"],  # FULLWIDTH digits
        ["1e5"],  # float() reads exponents
        ["inf"],
        ["nan"],
        ["1_000"],  # int() and float() read underscores
        ["1,25"],  # not a group of three
        ["1,250 000"],  # two separators in one number
        ["1.5", "2"],  # integer refused, and then no decimal mark... (see the next case)
        ["9223372036854775808"],  # past int64
        ["\u2010" + "5"],  # U+2010 HYPHEN is no minus sign
        ["5\u2212"],  # a trailing sign
        ["$5"],  # currency is left to the parsers
    ],
)
def test_columns_outside_the_bulk_forms_go_to_the_parsers(texts: list[str]) -> None:
    result = bulk_column(None, texts, ".")
    if texts == ["1.5", "2"]:
        assert result is not None and result[0] == "decimal"  # a decimal mark: decimal
    else:
        assert result is None
    assert_routes_agree(texts, None, TABLE)
    for kind in BULK_KINDS:
        assert_routes_agree(texts, ColumnRule("goals", type=kind), TABLE)


def test_past_64_bits_declared_is_the_parsers_error() -> None:
    texts = ["12", "9,223,372,036,854,775,808"]
    assert bulk_column("integer", texts, ".") is None
    with pytest.raises(ValueParseError, match=r"row 2 of the table body.*past 64 bits"):
        convert_column("goals", texts, ColumnRule("goals", type="integer"), TABLE)
    assert_routes_agree(texts, ColumnRule("goals", type="integer"), TABLE)


def test_a_bad_cell_in_a_declared_column_is_named_by_either_route() -> None:
    texts = ["12", "3", "twelve"]
    rule = ColumnRule("goals", type="integer")
    with pytest.raises(ValueParseError, match=re.escape("row 3 of the table body: cannot read")):
        convert_column("goals", texts, rule, TABLE)
    assert_routes_agree(texts, rule, TABLE)


def test_per_cell_only_turns_the_bulk_route_off_inside_the_block() -> None:
    assert bulk_column(None, ["1", "2"], ".") is not None
    with per_cell_only():
        assert bulk_column(None, ["1", "2"], ".") is None
    assert bulk_column(None, ["1", "2"], ".") is not None
