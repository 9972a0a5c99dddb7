"""Worked cases for turning cell texts into typed columns, each expected value found by hand.

Sources are named beside each check. Unicode character names and blocks are quoted from memory of
the Unicode code charts, and so are the section numbers of the SI Brochure and ISO 8601. Most
number conventions here (thousands grouping, footnote markers, dashes meaning "no value") are
common practice with no published source, and say so. Names, clubs and numbers are invented for
the demo handball league.
"""

from __future__ import annotations

from datetime import date

import pyarrow as pa
import pytest

from harvester.errors import ValueParseError
from harvester.extract.rules import ColumnRule, TableRule
from harvester.extract.values import (
    convert_column,
    infer_type,
    parse_boolean,
    parse_currency,
    parse_date,
    parse_decimal,
    parse_duration,
    parse_integer,
    parse_percent,
    split_markers,
)

TABLE = TableRule()


# --- integers --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("1,250,000", 1_250_000),  # comma every three digits (common practice, no published source)
        ("0", 0),
        ("+7", 7),  # a leading plus sign is accepted (issue text)
        ("  42  ", 42),  # surrounding whitespace is not part of the value
        ("007", 7),  # a declared integer reads leading zeros; only inference refuses them
        ("1 250 000", 1_250_000),  # SI Brochure 9th ed. §5.4.4, threes split by spaces (memory)
        ("1\u00a0250", 1250),  # U+00A0 NO-BREAK SPACE as group separator (Unicode name)
        ("1\u202f250", 1250),  # U+202F NARROW NO-BREAK SPACE
        ("1\u2009250", 1250),  # U+2009 THIN SPACE
    ],
)
def test_parse_integer_reads_grouped_and_signed_numbers(text: str, expected: int) -> None:
    assert parse_integer(text) == expected


@pytest.mark.parametrize(
    "minus",
    [
        "-",  # U+002D HYPHEN-MINUS (ASCII)
        "\u2212",  # U+2212 MINUS SIGN, the Unicode Standard's proper minus (Mathematical Operators)
        "\u2012",  # U+2012 FIGURE DASH (General Punctuation)
        "\u2013",  # U+2013 EN DASH, often typeset as a minus (common practice)
        "\ufe63",  # U+FE63 SMALL HYPHEN-MINUS (Small Form Variants)
        "\uff0d",  # U+FF0D FULLWIDTH HYPHEN-MINUS (Halfwidth and Fullwidth Forms)
    ],
)
def test_every_minus_sign_makes_a_number_negative(minus: str) -> None:
    assert parse_integer(f"{minus}1,250") == -1250
    assert parse_decimal(f"{minus}3.5") == -3.5


@pytest.mark.parametrize(
    "text",
    [
        "1,25",  # not a three-digit group: could be a decimal comma (common practice)
        "12,34,567",  # lakh-style grouping is not three-digit grouping
        "1,2500",  # a group of four
        ",250",  # a separator with nothing before it
        "1,250 000",  # two different separators in one number
        "1.5",  # a fraction is not an integer
        "",
        "twelve",
        "1e3",  # Python's int() rejects this too, and a cell grammar has no exponents
        "--5",
        "5-",
        "+-5",
    ],
)
def test_parse_integer_rejects_texts_that_are_not_integers(text: str) -> None:
    with pytest.raises(ValueError):
        parse_integer(text)


def test_decimal_comma_swaps_the_roles_of_dot_and_comma() -> None:
    # With a decimal comma the dot groups thousands (common practice, no published source).
    assert parse_integer("1.250.000", decimal_mark=",") == 1_250_000
    assert parse_decimal("1.250,5", decimal_mark=",") == 1250.5
    assert parse_decimal("1,25", decimal_mark=",") == 1.25
    with pytest.raises(ValueError):
        parse_integer("1,250", decimal_mark=",")  # the comma is now a decimal mark
    with pytest.raises(ValueError):
        parse_integer("1", decimal_mark=";")


# --- decimals, percentages, currency ---------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        (".500", 0.5),  # leading-dot decimal, as batting-average style tables write it
        ("-.25", -0.25),
        ("12", 12.0),
        ("1,250.75", 1250.75),
        ("\u22120.5", -0.5),  # U+2212 MINUS SIGN
    ],
)
def test_parse_decimal(text: str, expected: float) -> None:
    assert parse_decimal(text) == expected


# Python's float() accepts every one of these (Python docs, built-in float(): "nan", "inf",
# exponents, underscores since 3.6, a trailing dot); none is a number as a table writes one.
@pytest.mark.parametrize("text", ["nan", "inf", "1e5", "1_000", "5.", ".", "-", "1.2.3"])
def test_parse_decimal_is_stricter_than_float(text: str) -> None:
    with pytest.raises(ValueError):
        parse_decimal(text)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("12.5%", 12.5),  # the number before "%" (issue text), not 0.125
        ("12.5\u00a0%", 12.5),  # French typography puts a no-break space before % (from memory)
        ("\u22123%", -3.0),
        ("100%", 100.0),
        ("40", 40.0),  # a declared percent column also takes a bare number
    ],
)
def test_parse_percent(text: str, expected: float) -> None:
    assert parse_percent(text) == expected


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("$1,250", 1250.0),
        ("€12.50", 12.5),
        ("£ 3", 3.0),
        ("¥500", 500.0),
        ("EUR 12.50", 12.5),  # ISO 4217 alphabetic code: three capital letters
        ("-$5", -5.0),
        ("$\u22125", -5.0),
        ("€1.2m", 1_200_000.0),  # multiplier suffixes (common practice, no published source)
        ("£3.5k", 3500.0),
        ("USD 2bn", 2_000_000_000.0),
        ("$7B", 7_000_000_000.0),
        ("0", 0.0),  # a declared currency column also takes a bare number
    ],
)
def test_parse_currency(text: str, expected: float) -> None:
    assert parse_currency(text) == expected


@pytest.mark.parametrize("text", ["-$-5", "usd 5", "US 5", "$", "$1,25", "5$x", "€1.2q"])
def test_parse_currency_rejects(text: str) -> None:
    with pytest.raises(ValueError):
        parse_currency(text)


# --- durations, dates, booleans --------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("45:30", 45 * 60 + 30),  # mm:ss, minutes and seconds (common practice)
        ("75:05", 75 * 60 + 5),  # minutes in mm:ss may pass 59 (issue text)
        ("0:09", 9),
        ("1:02:03", 3600 + 2 * 60 + 3),  # h:mm:ss
        ("1:02.5", 62.5),  # fractional seconds give a float
    ],
)
def test_parse_duration(text: str, expected: float) -> None:
    value = parse_duration(text)
    assert value == expected
    assert isinstance(value, float) == ("." in text)


# Seconds are 00-59 and written with two digits, as in ISO 8601 hh:mm:ss; in h:mm:ss the
# minutes are 00-59 as well.
@pytest.mark.parametrize("text", ["1:60", "1:2", "1:75:00", "1:02:60", ":30", "1:30:", "-1:30"])
def test_parse_duration_rejects(text: str) -> None:
    with pytest.raises(ValueError):
        parse_duration(text)


def test_parse_date_iso_by_default() -> None:
    # ISO 8601-1 calendar date, extended format YYYY-MM-DD; 2024 is a Gregorian leap year
    # (divisible by 4, not by 100), 2023 is not.
    assert parse_date("2024-02-29") == date(2024, 2, 29)
    for text in ("2023-02-29", "2024-1-5", "05.01.2024", "2024-13-01"):
        with pytest.raises(ValueError):
            parse_date(text)


def test_parse_date_tries_each_given_format() -> None:
    # Python docs, strptime: %d day, %m month, %Y four-digit year, %b abbreviated month name.
    formats = ("%d.%m.%Y", "%d %b %Y")
    assert parse_date("05.01.2024", formats) == date(2024, 1, 5)
    assert parse_date("7 Mar 2025", formats) == date(2025, 3, 7)
    with pytest.raises(ValueError):
        parse_date("2024-01-05", formats)  # ISO is only the default, not always allowed


def test_parse_boolean() -> None:
    for text in ("✓", "✔", "x", "X", "yes", "Yes", "Y", "y", "true", "True", "*"):
        assert parse_boolean(text) is True
    assert parse_boolean("") is False
    assert parse_boolean("C", true_values=("C",)) is True
    for text in ("no", "0", "false"):
        with pytest.raises(ValueError):
            parse_boolean(text)


# --- footnote markers ------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # Trailing footnote marks (common practice, no published source).
        ("Lea Varn*", ("Lea Varn", "*")),
        ("Kai Lund †‡", ("Kai Lund", "†‡")),
        ("12 * †", ("12", "*†")),
        ("7+", ("7", "+")),
        ("+7", ("+7", "")),  # a leading plus is a sign, never a marker
        ("C#", ("C", "#")),
        ("*", ("", "*")),
        ("Ola *Berg", ("Ola *Berg", "")),  # only a trailing run counts
        ("", ("", "")),
    ],
)
def test_split_markers(text: str, expected: tuple[str, str]) -> None:
    assert split_markers(text, "*†‡+#") == expected


def test_split_markers_with_no_markers_keeps_the_text() -> None:
    assert split_markers(" Lea Varn* ", "") == ("Lea Varn*", "")


# --- whole columns: inference ----------------------------------------------------------------


def py(column: pa.Array) -> list[object]:
    return list(column.to_pylist())


def test_inferred_integer_column_with_nulls_and_markers() -> None:
    col = convert_column("goals", ["12", "—", "3*", "1,250", "N/A", "\u22124"], None, TABLE)
    assert col.type == "integer"
    assert col.values.type == pa.int64()
    assert py(col.values) == [12, None, 3, 1250, None, -4]
    assert col.markers is None  # no markers_to asked for


@pytest.mark.parametrize(
    ("texts", "kind", "arrow", "expected"),
    [
        (["1", "2.5", ".5"], "decimal", pa.float64(), [1.0, 2.5, 0.5]),
        (["12.5%", "40%"], "percent", pa.float64(), [12.5, 40.0]),
        (["$1,250", "€3"], "currency", pa.float64(), [1250.0, 3.0]),
        (["45:30", "61:00"], "duration", pa.int64(), [2730, 3660]),
        (["1:00.5", "0:30"], "duration", pa.float64(), [60.5, 30.0]),
        (["2024-03-01", "–"], "date", pa.date32(), [date(2024, 3, 1), None]),
        (["Nordhavn HC", "Velde IF"], "text", pa.string(), ["Nordhavn HC", "Velde IF"]),
    ],
)
def test_inferred_types(
    texts: list[str], kind: str, arrow: pa.DataType, expected: list[object]
) -> None:
    col = convert_column("c", texts, None, TABLE)
    assert (col.type, col.values.type) == (kind, arrow)
    assert py(col.values) == expected


@pytest.mark.parametrize(
    ("texts", "kind"),
    [
        (["007", "12", "100"], "text"),  # ids with leading zeros stay text (issue text)
        (["007.5", "1.5"], "text"),  # nor may a leading zero sneak in as a decimal
        (["0", "0.5"], "decimal"),  # a lone zero before the point is no leading zero
        (["12", "1,25"], "text"),  # "1,25" is no integer and no decimal with a point mark
        (["12", "twelve"], "text"),  # every cell must parse
        (["—", "N/A", ""], "text"),  # only nulls
        ([], "text"),
        (["x", "", "x"], "text"),  # booleans are never inferred
        (["12%", "12"], "text"),  # an inferred percent needs the % on every cell
        (["5", "$5"], "text"),  # an inferred currency needs the symbol on every cell
        (["12345678901234567890"], "text"),  # past 64-bit integers: an identifier
        (["05.01.2024"], "text"),  # inference reads ISO dates only
    ],
)
def test_infer_type(texts: list[str], kind: str) -> None:
    assert infer_type(texts, TABLE) == kind


def test_inference_can_be_turned_off() -> None:
    col = convert_column("g", ["1", "2"], None, TableRule(infer_types=False))
    assert (col.type, py(col.values)) == ("text", ["1", "2"])


def test_decimal_comma_table() -> None:
    table = TableRule(decimal_mark=",")
    assert py(convert_column("a", ["1.250", "3"], None, table).values) == [1250, 3]
    col = convert_column("b", ["1,5", "2,25"], None, table)
    assert (col.type, py(col.values)) == ("decimal", [1.5, 2.25])


# --- whole columns: text, markers, nulls -----------------------------------------------------


def test_text_cells_lose_their_markers_which_go_to_a_column_of_their_own() -> None:
    rule = ColumnRule("player", type="text", markers_to="player_flags")
    col = convert_column("player", ["Lea Varn*", "Ola Berg", "Kai Lund †‡", "—"], rule, TABLE)
    assert py(col.values) == ["Lea Varn", "Ola Berg", "Kai Lund", None]
    assert col.markers is not None
    assert col.markers.type == pa.string()
    assert py(col.markers) == ["*", None, "†‡", None]


def test_markers_to_without_any_markers_gives_all_nulls() -> None:
    rule = ColumnRule("goals", markers_to="goal_notes")
    col = convert_column("goals", ["3", "4"], rule, TABLE)
    assert col.markers is not None
    assert py(col.markers) == [None, None]


def test_empty_markers_setting_keeps_cells_whole() -> None:
    col = convert_column("player", ["Lea Varn*", "C#"], None, TableRule(markers=""))
    assert py(col.values) == ["Lea Varn*", "C#"]


def test_marker_only_cell_and_marked_null_are_null() -> None:
    col = convert_column("goals", ["4", "*", "—†"], ColumnRule("goals", markers_to="m"), TABLE)
    assert py(col.values) == [4, None, None]
    assert col.markers is not None
    assert py(col.markers) == [None, "*", "†"]


def test_custom_nulls_replace_the_defaults() -> None:
    table = TableRule(nulls=("n.a.",))
    col = convert_column("g", ["n.a.", "5", "—"], None, table)
    # "—" is no longer null, so the column is text; "n.a." still is.
    assert (col.type, py(col.values)) == ("text", [None, "5", "—"])


def test_nul_in_a_cell_does_not_upset_the_column() -> None:
    col = convert_column("g", ["1", "2\x003"], None, TABLE)
    assert (col.type, py(col.values)) == ("text", ["1", "2\ufffd3"])


# --- whole columns: declared types and errors ------------------------------------------------


def test_declared_integer_reads_leading_zeros() -> None:
    col = convert_column("shirt", ["07", "12"], ColumnRule("shirt", type="integer"), TABLE)
    assert (col.type, py(col.values)) == ("integer", [7, 12])


def test_declared_text_keeps_numbers_as_text() -> None:
    col = convert_column("score", ["28", "31*"], ColumnRule("score", type="text"), TABLE)
    assert (col.type, py(col.values)) == ("text", ["28", "31"])


def test_declared_type_error_names_column_rows_text_type_and_fix() -> None:
    rule = ColumnRule("goals", type="integer")
    with pytest.raises(ValueParseError) as caught:
        convert_column(
            "goals",
            ["3", "—", "four", "5"],
            rule,
            TABLE,
            body_rows=[10, 11, 12, 13],
            grid_rows=[12, 13, 14, 15],
        )
    # "four" is the third cell: body row 12, grid row 14.
    assert str(caught.value) == (
        "column 'goals', row 12 of the table body (grid row 14): cannot read 'four' as declared"
        " type 'integer' — declare type = \"text\" or add the text to nulls"
    )


def test_declared_error_rows_default_to_one_based_positions() -> None:
    with pytest.raises(ValueParseError) as caught:
        convert_column("d", ["2024-01-01", "1 Jan"], ColumnRule("d", type="date"), TABLE)
    assert caught.value.message == (
        "column 'd', row 2 of the table body: cannot read '1 Jan' as declared type 'date'"
    )


def test_declared_boolean_error_names_the_rows() -> None:
    rule = ColumnRule("captain", type="boolean")
    with pytest.raises(ValueParseError) as caught:
        convert_column("captain", ["✓", "no"], rule, TABLE, body_rows=[4, 6], grid_rows=[5, 7])
    assert caught.value.message == (
        "column 'captain', row 6 of the table body (grid row 7): "
        "cannot read 'no' as declared type 'boolean'"
    )


def test_declared_date_error_hints_at_formats() -> None:
    rule = ColumnRule("played", type="date", formats=("%d.%m.%Y",))
    col = convert_column("played", ["05.01.2024", "06.01.2024"], rule, TABLE)
    assert py(col.values) == [date(2024, 1, 5), date(2024, 1, 6)]
    with pytest.raises(ValueParseError, match="formats"):
        convert_column("played", ["2024-01-05"], rule, TABLE)


def test_declared_integer_past_64_bits_is_an_error() -> None:
    rule = ColumnRule("id", type="integer")
    with pytest.raises(ValueParseError, match="64 bits"):
        convert_column("id", ["1", str(2**63)], rule, TABLE)
    assert py(convert_column("id", [str(2**63 - 1)], rule, TABLE).values) == [2**63 - 1]


def test_declared_boolean_column() -> None:
    rule = ColumnRule("captain", type="boolean", markers_to="captain_notes")
    col = convert_column("captain", ["✓", "", "*", "—", "x†"], rule, TABLE)
    assert (col.type, col.values.type) == ("boolean", pa.bool_())
    # "*" is a default true value, checked before it could be read as a marker.
    assert py(col.values) == [True, False, True, None, True]
    assert col.markers is not None
    assert py(col.markers) == [None, None, None, None, "†"]
    with pytest.raises(ValueParseError, match="true_values"):
        convert_column("captain", ["✓", "no"], rule, TABLE)


def test_declared_boolean_with_own_true_values() -> None:
    rule = ColumnRule("captain", type="boolean", true_values=("C",))
    assert py(convert_column("captain", ["C", ""], rule, TABLE).values) == [True, False]
    with pytest.raises(ValueParseError):
        convert_column("captain", ["✓"], rule, TABLE)


def test_declared_currency_and_percent_take_bare_numbers() -> None:
    money = convert_column("fee", ["€1.2m", "0"], ColumnRule("fee", type="currency"), TABLE)
    assert py(money.values) == [1_200_000.0, 0.0]
    share = convert_column("pct", ["12.5%", "40"], ColumnRule("pct", type="percent"), TABLE)
    assert py(share.values) == [12.5, 40.0]


def test_row_numbers_must_match_the_cells() -> None:
    with pytest.raises(ValueError, match="2 cells but 1 body row numbers"):
        convert_column("g", ["1", "2"], None, TABLE, body_rows=[1])
    with pytest.raises(ValueError, match="2 cells but 3 grid row numbers"):
        convert_column("g", ["1", "2"], None, TABLE, grid_rows=[2, 3, 4])


# Python refuses int() on strings of over 4,300 digits (its int_max_str_digits, from memory of
# the CPython 3.11 documentation); such a cell is past 64 bits, never a crash.
HUGE = "9" * 5000


def test_an_integer_of_thousands_of_digits_is_text_when_inferred() -> None:
    column = convert_column("n", [HUGE, "1"], None, TableRule())
    assert column.type == "text" and column.values.to_pylist() == [HUGE, "1"]


@pytest.mark.parametrize(
    ("kind", "texts"), [("integer", [HUGE, "1"]), ("duration", [f"{HUGE}:00:00", "1:00"])]
)
def test_a_declared_number_of_thousands_of_digits_is_a_clear_error(
    kind: str, texts: list[str]
) -> None:
    rule = ColumnRule("n", type=kind)  # type: ignore[arg-type]
    with pytest.raises(ValueParseError, match=r"row 1 .*(past 64 bits|64-bit)"):
        convert_column("n", texts, rule, TableRule(columns=(rule,)))


def test_parse_integer_refuses_thousands_of_digits_but_reads_long_ones() -> None:
    assert parse_integer("9" * 25) == int("9" * 25)
    with pytest.raises(ValueError, match="over 4,300 digits"):
        parse_integer(HUGE)
