"""Header rows: detection, collapsing to snake_case names, de-duplication, renames, row drops.

Collapsing multi-row headers is common practice with no published source (REFERENCES §6.3);
the grid underneath is HTML §4.9.12.1. Expected names are worked by hand from the markup.
"""

from __future__ import annotations

import pytest
from selectolax.lexbor import LexborHTMLParser

from harvester.errors import ExtractError
from harvester.extract.grid import Grid, build_grid
from harvester.extract.headers import (
    collapse_headers,
    deduplicate,
    header_row_indices,
    is_group_label_row,
    rename_columns,
    snake_case,
)
from harvester.extract.rules import RowDrop, TableRule
from harvester.extract.table import extract_table


def grid_of(html: str) -> Grid:
    node = LexborHTMLParser(html).css_first("table")
    assert node is not None
    return build_grid(node)


def names_of(html: str, header_rows: int | None = None, separator: str = "_") -> list[str]:
    grid = grid_of(html)
    return deduplicate(collapse_headers(grid, header_row_indices(grid, header_rows), separator))


POPULATION = (
    "<table><thead>"
    '<tr><th></th><th colspan="2">Population</th></tr>'
    "<tr><th>Town</th><th>2020</th><th>2021</th></tr>"
    "</thead><tbody><tr><td>Ostra</td><td>1</td><td>2</td></tr></tbody></table>"
)

SHOOTING = (
    "<table><thead>"
    '<tr><th rowspan="2">Player</th><th colspan="2">Shooting</th></tr>'
    "<tr><th>Goals</th><th>Shots</th></tr>"
    "</thead><tbody><tr><td>Vell</td><td>3</td><td>9</td></tr></tbody></table>"
)


# --- collapsing ----------------------------------------------------------------------------------


def test_two_row_header_collapses_and_skips_the_empty_corner() -> None:
    # REFERENCES §6.5: "Population" over "2020 | 2021" → Population / 2020, Population / 2021;
    # the empty corner th is skipped (§6.3 step 3, practice).
    assert names_of(POPULATION) == ["town", "population_2020", "population_2021"]


def test_separator_joins_the_parts() -> None:
    assert names_of(POPULATION, separator=" / ") == [
        "town",
        "population / 2020",
        "population / 2021",
    ]


def test_rowspan_header_cell_is_not_repeated() -> None:
    # HTML §4.9.12.1: "Player" (rowspan=2) covers both header rows of column 0; REFERENCES §6.3
    # step 3 drops the repeat of the same spanning cell.
    assert names_of(SHOOTING) == ["player", "shooting_goals", "shooting_shots"]


def test_equal_texts_from_different_cells_are_not_repeated() -> None:
    # Practice (headers.py docstring): a part equal to the one above is skipped.
    html = "<table><thead><tr><th>Goals<th>A</tr><tr><th>Goals<th>B</tr></thead></table>"
    assert names_of(html) == ["goals", "a_b"]


def test_column_without_header_text_gets_a_positional_name() -> None:
    html = "<table><thead><tr><th>Club<th></tr></thead><tbody><tr><td>x<td>y</table>"
    assert names_of(html) == ["club", "column_2"]


def test_no_header_rows_gives_positional_names() -> None:
    html = "<table><tr><td>a<td>b<tr><td>c<td>d</table>"
    grid = grid_of(html)
    assert header_row_indices(grid) == []
    assert collapse_headers(grid, []) == ["column_1", "column_2"]


# --- snake_case ----------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "name"),
    [
        ("Shot share %", "shot_share_pct"),  # headers.py docstring example
        ("%", "pct"),
        ("#", "num"),
        ("Jersey #", "jersey_num"),
        ("No. #", "no_num"),
        ("  GA  ", "ga"),
        ("Saves/Shots", "saves_shots"),
        ("7m Goals", "7m_goals"),
        ("GF–GA", "gf_ga"),  # an en dash is not a word character
        ("Straße", "strasse"),  # Unicode casefold: ß → ss
        ("\ufb01nal", "final"),  # NFKC (UAX #15): the "fi" ligature is two letters
        ("\uff27\uff30", "gp"),  # NFKC: fullwidth G P → G P
        ("", ""),
    ],
)
def test_snake_case(text: str, name: str) -> None:
    assert snake_case(text) == name


def test_snake_case_keeps_accented_letters_and_composes_them() -> None:
    # NFKC (Unicode UAX #15) composes E + U+0301 into É, so both spellings give one name; the
    # letter is a word character and stays (headers.py keeps \w, it does not transliterate).
    assert snake_case("Équipe") == "équipe"
    assert snake_case("E\u0301quipe") == "équipe"
    assert snake_case("Ø Minutes") == "ø_minutes"


# --- de-duplication ------------------------------------------------------------------------------


def test_duplicates_get_numbered_suffixes_left_to_right() -> None:
    assert deduplicate(["pct", "goals", "pct", "pct"]) == ["pct", "goals", "pct_2", "pct_3"]


def test_deduplicate_skips_suffixes_a_column_already_has() -> None:
    # "goals_2" is a real column, so the second "goals" must become something else, and all
    # names stay unique; the first occurrence of every name keeps its name.
    names = deduplicate(["goals", "goals", "goals_2"])
    assert names == ["goals", "goals_3", "goals_2"]


def test_deduplicate_is_deterministic() -> None:
    names = ["a", "a", "b", "a", "b"]
    assert deduplicate(names) == deduplicate(list(names)) == ["a", "a_2", "b", "a_3", "b_2"]


def test_duplicate_header_texts_in_a_table() -> None:
    html = "<table><thead><tr><th>Pct<th>Pct<th>Pct</thead><tbody><tr><td>1<td>2<td>3</table>"
    assert names_of(html) == ["pct", "pct_2", "pct_3"]


# --- renames -------------------------------------------------------------------------------------


def test_rename_map() -> None:
    assert rename_columns(["player", "gp"], [("gp", "games")]) == ["player", "games"]


def test_rename_of_unknown_column_lists_the_columns() -> None:
    with pytest.raises(ExtractError) as caught:
        rename_columns(["player", "gp"], [("goals", "g")], where="players.html: table 'p'")
    message = str(caught.value)
    assert "\n" not in message
    assert message.startswith("players.html: table 'p'")
    assert "goals" in message
    assert "player, gp" in message


def test_rename_that_makes_two_columns_equal_is_an_error() -> None:
    with pytest.raises(ExtractError, match="player"):
        rename_columns(["player", "name"], [("name", "player")])


# --- header detection ----------------------------------------------------------------------------


def test_header_rows_come_from_thead() -> None:
    assert header_row_indices(grid_of(SHOOTING)) == [0, 1]


def test_header_rows_are_the_leading_th_rows_without_thead() -> None:
    html = "<table><tr><th>A<th>B<tr><th>C<th>D<tr><td>1<td>2</table>"
    assert header_row_indices(grid_of(html)) == [0, 1]


def test_a_row_with_data_cells_is_not_a_header_row() -> None:
    # HTML §4.9.12.2 (auto state): a th whose row holds data cells is a row header, so a row
    # "th td" starts the body.
    html = "<table><tr><th>Club<th>Pts<tr><th>Ostra<td>3</table>"
    assert header_row_indices(grid_of(html)) == [0]


def test_header_detection_stops_at_a_full_width_group_label() -> None:
    html = "<table><tr><th>Rank<th>Club</tr><tr><th colspan=2>North</tr><tr><td>1<td>Ostra</table>"
    grid = grid_of(html)
    assert header_row_indices(grid) == [0]
    assert is_group_label_row(grid, 1) is True
    assert is_group_label_row(grid, 0) is False
    assert is_group_label_row(grid, 2) is False


def test_when_every_row_is_th_only_the_first_is_the_header() -> None:
    html = "<table><tr><th>a<th>b<tr><th>c<th>d</table>"
    assert header_row_indices(grid_of(html)) == [0]


def test_header_rows_override() -> None:
    # The rule's header_rows = N takes the first N rows, whatever they hold (REFERENCES §6.3).
    grid = grid_of(SHOOTING)  # 3 rows: two thead rows and one body row
    assert header_row_indices(grid, 0) == []
    assert header_row_indices(grid, 1) == [0]
    assert header_row_indices(grid, 3) == [0, 1, 2]
    assert header_row_indices(grid, 9) == [0, 1, 2]
    assert collapse_headers(grid, header_row_indices(grid, 1)) == ["player", "shooting", "shooting"]


# --- header and row-drop behaviour of extract_table ----------------------------------------------

STANDINGS = (
    "<table id='s'><thead><tr><th>Rank<th>Club<th>Pts</thead><tbody>"
    "<tr class='group'><th colspan='3'>North</th></tr>"
    "<tr><td>1<td>Ostra<td>9"
    "<tr><td>2<td>Vellmark<td>4"
    "<tr><th>Rank<th>Club<th>Pts"
    "<tr><td><td><td>"
    "<tr class='group'><th colspan='3'>South</th></tr>"
    "<tr><td>1<td>Brisk<td>7"
    "<tr><td>Total<td><td>20"
    "</tbody></table>"
)


def test_extract_drops_repeated_headers_group_labels_and_empty_rows() -> None:
    # Grid rows (worked by hand): 0 header, 1 North, 2 Ostra, 3 Vellmark, 4 repeated header,
    # 5 empty, 6 South, 7 Brisk, 8 Total.
    result = extract_table(STANDINGS, TableRule(select="#s"))
    assert result.table.column_names == ["rank", "club", "pts"]
    assert result.table.column("club").to_pylist() == ["Ostra", "Vellmark", "Brisk", None]
    assert result.source_rows == (2, 3, 7, 8)


def test_extract_group_rows_as_a_column() -> None:
    result = extract_table(STANDINGS, TableRule(select="#s", group_rows="column"))
    assert result.table.column_names == ["group", "rank", "club", "pts"]
    assert result.table.column("group").to_pylist() == ["North", "North", "South", "South"]


def test_extract_group_rows_kept() -> None:
    result = extract_table(STANDINGS, TableRule(select="#s", group_rows="keep"))
    assert result.source_rows == (1, 2, 3, 6, 7, 8)


def test_extract_keeps_repeated_headers_and_empty_rows_when_asked() -> None:
    rule = TableRule(select="#s", drop_repeated_headers=False, drop_empty_rows=False)
    result = extract_table(STANDINGS, rule)
    assert result.source_rows == (2, 3, 4, 5, 7, 8)


def test_extract_drop_rows_pattern_must_match_the_whole_cell() -> None:
    rule = TableRule(select="#s", drop_rows=(RowDrop("rank", "Total"), RowDrop("club", "Vell")))
    result = extract_table(STANDINGS, rule)
    # "Vell" does not fully match "Vellmark", so that row stays (re.fullmatch).
    assert result.source_rows == (2, 3, 7)


def test_extract_drop_rows_unknown_column_is_an_error() -> None:
    rule = TableRule(select="#s", drop_rows=(RowDrop("team", "x"),))
    with pytest.raises(ExtractError) as caught:
        extract_table(STANDINGS, rule, source="standings.html")
    message = str(caught.value)
    assert "'team'" in message
    assert "rank, club, pts" in message


def test_extract_renames_and_header_rows() -> None:
    rule = TableRule(select="#s", rename=(("pts", "points"),))
    assert extract_table(STANDINGS, rule).table.column_names == ["rank", "club", "points"]
    with pytest.raises(ExtractError, match="rank, club, pts"):
        extract_table(STANDINGS, TableRule(select="#s", rename=(("team", "club_name"),)))


def test_extract_two_row_header() -> None:
    result = extract_table(SHOOTING)
    assert result.table.column_names == ["player", "shooting_goals", "shooting_shots"]
    assert result.table.column("player").to_pylist() == ["Vell"]


def test_extract_hidden_drop_rule() -> None:
    html = (
        "<table><thead><tr><th>Player<th style='display:none'>Id<th>Club</thead>"
        "<tbody><tr><td>Vell<td style='display:none'>p1<td>Ostra</table>"
    )
    assert extract_table(html).table.column_names == ["player", "id", "club"]
    dropped = extract_table(html, TableRule(hidden="drop"))
    assert dropped.table.column_names == ["player", "club"]
    assert dropped.table.column("club").to_pylist() == ["Ostra"]
