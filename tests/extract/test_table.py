"""The extraction pipeline (harvester/extract/table.py): rules applied end to end.

Expected values are worked out by hand from the small pages below.
"""

from __future__ import annotations

import pyarrow as pa
import pytest

from harvester import ColumnRule, ExtractError, RowDrop, TableRule, ValueParseError, extract_table

ROSTER = """
<table id="roster">
<thead><tr><th>Player</th><th>Club</th><th>Goals</th></tr></thead>
<tbody>
<tr><td colspan="3">North Conference</td></tr>
<tr><td><a href="/players/p0007.html">Lea Varn</a>*</td><td>HRN</td><td>1,204</td></tr>
<tr><td><a href="players/p0012.html">Osk Belund</a></td><td>DAS</td><td>−3</td></tr>
<tr><td colspan="3">South Conference</td></tr>
<tr><td>Mira Tavik†</td><td>QUE</td><td>—</td></tr>
</tbody>
</table>
"""


def test_markers_are_kept_in_their_own_column_next_to_the_source() -> None:
    rule = TableRule(columns=(ColumnRule(name="player", markers_to="flags"),))
    table = extract_table(ROSTER, rule).table
    assert table.column_names == ["player", "flags", "club", "goals"]
    assert table.column("player").to_pylist() == ["Lea Varn", "Osk Belund", "Mira Tavik"]
    assert table.column("flags").to_pylist() == ["*", None, "†"]


def test_link_column_applies_the_pattern_and_resolves_against_the_base_url() -> None:
    rule = TableRule(
        columns=(
            ColumnRule(name="player_id", link_of="player", pattern=r"/players/(p\d+)"),
            ColumnRule(name="player_url", link_of="player"),
        )
    )
    result = extract_table(ROSTER, rule, base_url="http://127.0.0.1:8650/seasons/2026/x.html")
    table = result.table
    assert table.column_names == ["player", "player_id", "player_url", "club", "goals"]
    assert table.column("player_id").to_pylist() == ["p0007", "p0012", None]
    # RFC 3986 §5.2 reference resolution: "players/…" is relative to the page's folder.
    assert table.column("player_url").to_pylist() == [
        "http://127.0.0.1:8650/players/p0007.html",
        "http://127.0.0.1:8650/seasons/2026/players/p0012.html",
        None,
    ]


def test_group_labels_become_a_first_column_when_asked() -> None:
    rule = TableRule(group_rows="column", group_column="conference")
    table = extract_table(ROSTER, rule).table
    assert table.column_names[0] == "conference"
    assert table.column("conference").to_pylist() == [
        "North Conference",
        "North Conference",
        "South Conference",
    ]


def test_source_rows_point_at_grid_rows() -> None:
    # Grid rows: 0 header, 1 label, 2 Lea, 3 Osk, 4 label, 5 Mira.
    assert extract_table(ROSTER).source_rows == (2, 3, 5)


def test_inferred_types_with_minus_sign_grouping_and_em_dash() -> None:
    table = extract_table(ROSTER).table
    assert table.schema.field("goals").type == pa.int64()
    assert table.column("goals").to_pylist() == [1204, -3, None]


def test_decimal_comma_tables() -> None:
    page = "<table><tr><th>Wert</th></tr><tr><td>1.250,5</td></tr><tr><td>−0,25</td></tr></table>"
    table = extract_table(page, TableRule(decimal_mark=",")).table
    assert table.column("wert").to_pylist() == [1250.5, -0.25]


def test_declared_type_that_does_not_fit_names_column_row_and_text() -> None:
    rule = TableRule(columns=(ColumnRule(name="club", type="integer"),))
    with pytest.raises(ValueParseError) as caught:
        extract_table(ROSTER, rule)
    # Grid rows from 1: 1 header, 2 "North Conference" (body row 1), 3 Lea Varn (body row 2).
    assert caught.value.message == (
        "column 'club', row 2 of the table body (grid row 3): "
        "cannot read 'HRN' as declared type 'integer'"
    )
    assert "\n" not in str(caught.value)


SHOOTING_HEAD = """
<tr><th rowspan="2">Player</th><th colspan="2">Shooting</th></tr>
<tr><th>Goals</th><th>Shots</th></tr>
"""
SHOOTING_BODY = """
<tr><td colspan="3">North Conference</td></tr>
<tr><td>Lea Varn</td><td>4</td><td>9</td></tr>
<tr><td></td><td></td><td></td></tr>
<tr><th>Player</th><th>Goals</th><th>Shots</th></tr>
<tr><td>Osk Belund</td><td>two</td><td>5</td></tr>
"""


@pytest.mark.parametrize(
    ("page", "header_rows"),
    [
        (f"<table><thead>{SHOOTING_HEAD}</thead><tbody>{SHOOTING_BODY}</tbody></table>", None),
        (f"<table>{SHOOTING_HEAD}{SHOOTING_BODY}</table>", 2),
    ],
    ids=["thead", "header_rows=2"],
)
def test_error_rows_count_the_body_from_under_a_two_row_header(
    page: str, header_rows: int | None
) -> None:
    # Grid rows from 1: 1-2 the header; 3 "North Conference", a group label (dropped), is row 1
    # of the body; 4 Lea Varn is body row 2; 5 the empty row (dropped) body row 3; 6 the
    # repeated header (dropped) body row 4; 7 Osk Belund, whose goals read "two", body row 5.
    rule = TableRule(
        header_rows=header_rows, columns=(ColumnRule(name="shooting_goals", type="integer"),)
    )
    with pytest.raises(ValueParseError) as caught:
        extract_table(page, rule)
    assert caught.value.message == (
        "column 'shooting_goals', row 5 of the table body (grid row 7): "
        "cannot read 'two' as declared type 'integer'"
    )
    kept = extract_table(page.replace("two", "2"), rule)
    assert kept.table.column("shooting_goals").to_pylist() == [4, 2]
    assert kept.source_rows == (3, 6)  # 0-based grid rows of Lea Varn and Osk Belund


def test_error_rows_skip_a_header_that_comes_after_a_body_row() -> None:
    # Table-model order: the bare tr (in an implied tbody) is grid row 1, the thead row grid row
    # 2, the tbody rows grid rows 3 and 4. Every grid row that is not a header row counts in
    # the body: grid rows 1, 3 and 4 are body rows 1, 2 and 3.
    page = (
        "<table><tr><td>one</td></tr><thead><tr><th>n</th></tr></thead>"
        "<tbody><tr><td>2</td></tr><tr><td>x</td></tr></tbody></table>"
    )
    rule = TableRule(columns=(ColumnRule(name="n", type="integer"),))
    with pytest.raises(ValueParseError) as caught:
        extract_table(page, rule)
    assert caught.value.message == (
        "column 'n', row 1 of the table body (grid row 1): cannot read 'one' as declared type"
        " 'integer'"
    )
    with pytest.raises(ValueParseError) as caught:
        extract_table(page.replace("one", "1"), rule)
    assert caught.value.message == (
        "column 'n', row 3 of the table body (grid row 4): cannot read 'x' as declared type"
        " 'integer'"
    )


def test_rule_for_a_column_the_table_lacks_lists_the_columns() -> None:
    rule = TableRule(columns=(ColumnRule(name="gaols", type="integer"),))
    with pytest.raises(ExtractError) as caught:
        extract_table(ROSTER, rule, source="roster.html")
    message = str(caught.value)
    assert "roster.html" in message and "'gaols'" in message
    assert "player, club, goals" in message


def test_link_of_an_unknown_column_is_an_error() -> None:
    rule = TableRule(columns=(ColumnRule(name="player_id", link_of="name"),))
    with pytest.raises(ExtractError, match="link_of = 'name'"):
        extract_table(ROSTER, rule)


def test_new_column_may_not_reuse_an_existing_name() -> None:
    rule = TableRule(columns=(ColumnRule(name="club", link_of="player"),))
    with pytest.raises(ExtractError, match="clashes"):
        extract_table(ROSTER, rule)


def test_group_column_may_not_reuse_an_existing_name() -> None:
    with pytest.raises(ExtractError, match="group_column 'club'"):
        extract_table(ROSTER, TableRule(group_rows="column", group_column="club"))


def test_key_columns_must_exist() -> None:
    with pytest.raises(ExtractError, match="key column"):
        extract_table(ROSTER, TableRule(key=("player_id",)))


def test_drop_rows_then_types_see_only_the_kept_rows() -> None:
    # Dropping the em-dash row leaves goals all integers; the pattern must match in full.
    rule = TableRule(drop_rows=(RowDrop(column="player", matches=r"Mira Tavik."),))
    table = extract_table(ROSTER, rule).table
    assert table.column("player").to_pylist() == ["Lea Varn", "Osk Belund"]
    assert table.column("goals").null_count == 0


def test_commented_table_is_reported_as_such() -> None:
    page = '<div><!-- <table id="adv"><tr><th>A</th></tr><tr><td>1</td></tr></table> --></div>'
    result = extract_table(page, TableRule(select="#adv"))
    assert result.in_comment
    assert result.table.to_pylist() == [{"a": 1}]


def test_overlapping_cells_are_counted() -> None:
    # HTML §4.9.12.1: the rowspan=2 cell and the colspan=2 cell claim the same slot.
    page = (
        "<table><tr><th>a</th><th>b</th><th>c</th></tr>"
        "<tr><td>1</td><td rowspan=2>2</td><td>3</td></tr>"
        "<tr><td colspan=2>4</td><td>5</td></tr></table>"
    )
    assert extract_table(page).overlaps == 1


def test_pages_given_as_bytes_read_like_the_text() -> None:
    from harvester import read_page

    text = (
        '<div><!-- <table id="adv"><tr><th>Name</th></tr>'
        "<tr><td>Léa — Varn</td></tr></table> --></div>"
    )
    as_text = extract_table(read_page(text), TableRule(select="#adv")).table
    # UTF-8 with a BOM (HTML §13.2.3.1: the BOM decides) and without one.
    for data in (text.encode(), b"\xef\xbb\xbf" + text.encode()):
        assert extract_table(read_page(data), TableRule(select="#adv")).table == as_text


def test_bytes_that_are_not_utf8_fall_back_to_windows_1252() -> None:
    from harvester import read_page

    # 0x93/0x94 are curly quotes in windows-1252 (Encoding Standard index) and invalid UTF-8.
    page = read_page(b"<table><tr><th>q</th></tr><tr><td>\x93x\x94</td></tr></table>")
    assert extract_table(page).table.column("q").to_pylist() == ["\u201cx\u201d"]


# --- footnote markers --------------------------------------------------------------------------

MARKED = """
<table>
<thead><tr><th>Player</th><th>Goals</th></tr></thead>
<tbody>
<tr><td>Lea Varn<sup>§</sup></td><td>12<sup>¶</sup></td></tr>
<tr><td>Ola Berg <sup>‖</sup></td><td>7<sup>*</sup></td></tr>
<tr><td>Kai Lund<sup>†‡</sup></td><td>1,204<sup>#</sup></td></tr>
<tr><td>Mira Tavik</td><td>3</td></tr>
</tbody>
</table>
"""


def test_section_pilcrow_and_double_bar_are_default_markers_also_inside_sup() -> None:
    # Common practice, no published source: §, ¶ and ‖ mark footnotes as *, †, ‡, + and # do,
    # and a site often sets the marker as <sup>; a <sup> at the end of the cell adds its text
    # to the end of the cell's text content, so its marker is split off like a plain one.
    rule = TableRule(
        columns=(
            ColumnRule(name="player", markers_to="player_notes"),
            ColumnRule(name="goals", markers_to="goal_notes"),
        )
    )
    table = extract_table(MARKED, rule).table
    assert table.column("player").to_pylist() == ["Lea Varn", "Ola Berg", "Kai Lund", "Mira Tavik"]
    assert table.column("player_notes").to_pylist() == ["§", "‖", "†‡", None]
    assert table.column("goals").type == pa.int64()  # every cell is a number once split
    assert table.column("goals").to_pylist() == [12, 7, 1204, 3]
    assert table.column("goal_notes").to_pylist() == ["¶", "*", "#", None]


# --- durations past 64 bits ------------------------------------------------------------------

HUGE_MINUTES = """
<table>
<thead><tr><th>Player</th><th>Time</th></tr></thead>
<tbody>
<tr><td>Lea Varn</td><td>12:05</td></tr>
<tr><td>Ola Berg</td><td>99999999999999999999:23</td></tr>
</tbody>
</table>
"""


def test_duration_past_64_bits_makes_an_inferred_column_text() -> None:
    # 99999999999999999999 minutes is 5,999,999,999,999,999,999,423 s, far past 2**63 - 1
    # (9,223,372,036,854,775,807): no int64 duration, so the column stays text, as an
    # over-long integer column does.
    table = extract_table(HUGE_MINUTES).table
    assert table.column("time").type == pa.string()
    assert table.column("time").to_pylist() == ["12:05", "99999999999999999999:23"]


@pytest.mark.parametrize(
    "text", ["99999999999999999999:23", "2562047788015216:00:00", "99999999999999999999:23.5"]
)
def test_duration_past_64_bits_stays_text_in_every_form(text: str) -> None:
    # h:mm:ss: 2,562,047,788,015,216 h is 9,223,372,036,854,777,600 s, just past 2**63 - 1;
    # fractional seconds become float seconds, checked against the same bound.
    html = HUGE_MINUTES.replace("99999999999999999999:23", text)
    assert extract_table(html).table.column("time").to_pylist() == ["12:05", text]


def test_declared_duration_past_64_bits_is_a_one_line_parse_error() -> None:
    rule = TableRule(columns=(ColumnRule(name="time", type="duration"),))
    with pytest.raises(ValueParseError) as raised:
        extract_table(HUGE_MINUTES, rule)
    assert str(raised.value) == (
        "column 'time', row 2 of the table body (grid row 3): cannot read "
        "'99999999999999999999:23' as declared type 'duration' — its seconds are past 64 bits; "
        'declare type = "text" or add the text to nulls'
    )


def test_duration_just_inside_64_bits_is_still_a_duration() -> None:
    # 2,562,047,788,015,215 h is 9,223,372,036,854,774,000 s, just below 2**63 - 1.
    html = HUGE_MINUTES.replace("99999999999999999999:23", "2562047788015215:00:00")
    column = extract_table(html).table.column("time")
    assert column.type == pa.int64()
    assert column.to_pylist() == [725, 9_223_372_036_854_774_000]
