"""Code lists and aliases beside a recipe (harvester.recipe.lookups), as extraction applies them.

CSV files are written by the stdlib csv module (RFC 4180 quoting); the expected names, keys and
notes are written out by hand. Name conventions are common practice, no published source.
"""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from harvester.errors import RecipeError
from harvester.extract.table import extract_table, read_page
from harvester.recipe import load_recipe

RECIPE = """
[recipe]
name = "league-contracts"
site = "http://127.0.0.1:8650"

[fetch]
url = "{site}/contracts.html"

[tables.contracts]
select = "table"

[tables.contracts.columns]
player = { type = "text", person_key = true }
club = { type = "text", codes = "clubs.csv" }
"""
PAGE = (
    "<table><tr><th>Player</th><th>Club</th></tr>"
    "<tr><td>Ødegård, Jörg</td><td>OSK</td></tr>"
    "<tr><td>Smith, Jonathan</td><td>VRE</td></tr>"
    "<tr><td>Venn, Oda</td><td>XYZ</td></tr>"
    "<tr><td>Kell, Ari</td><td>XYZ</td></tr>"
    "<tr><td>Bo Lund</td><td>—</td></tr></table>"
)


def write_csv(path: Path, rows: list[list[str]]) -> None:
    with path.open("w", newline="", encoding="utf-8") as handle:
        csv.writer(handle).writerows(rows)


def recipe_folder(tmp_path: Path, aliases: list[list[str]] | None = None) -> Path:
    (tmp_path / "contracts.toml").write_text(RECIPE, encoding="utf-8")
    write_csv(tmp_path / "clubs.csv", [["code", "name"], ["OSK", "Oskarby HK"], ["VRE", "Vreden"]])
    if aliases is not None:
        write_csv(tmp_path / "aliases.csv", [["alias", "key"], *aliases])
    return tmp_path / "contracts.toml"


def test_codes_and_aliases_apply_on_extraction(tmp_path: Path) -> None:
    path = recipe_folder(tmp_path, aliases=[["Jon Smith", "Smith, Jonathan"]])
    rule = load_recipe(path).table_rule()
    extracted = extract_table(read_page(PAGE), rule)
    table = extracted.table
    assert table.column_names == ["player", "player_key", "club", "club_name"]
    assert table.column("club_name").to_pylist() == ["Oskarby HK", "Vreden", None, None, None]
    # Never silently null: the unknown code is named, with its rows, in the table's notes.
    assert extracted.notes == (
        "column 'club': 1 code(s) not in clubs.csv: 'XYZ' (2 rows); their club_name is null"
        " — add them to clubs.csv",
    )
    assert table.column("player_key").to_pylist() == [
        "jorg odegard", "jonathan smith", "oda venn", "ari kell", "bo lund",
    ]  # fmt: skip


def test_an_alias_maps_a_variant_to_its_canonical_key(tmp_path: Path) -> None:
    # Both sides are normalized first: the alias may be written in any form of the name.
    path = recipe_folder(
        tmp_path, aliases=[["Smith, Jonathan", "Jon Smith"], ["ODA VENN", "Oda Venn-Kell"]]
    )
    table = extract_table(read_page(PAGE), load_recipe(path).table_rule()).table
    assert table.column("player_key").to_pylist()[1:3] == ["jon smith", "oda venn kell"]


@pytest.mark.parametrize(
    ("rows", "words"),
    [
        ([["code", "club"], ["OSK", "Oskarby"]], "line 1: the header must be code,name"),
        ([["code", "name"], ["OSK", "Oskarby"], ["OSK", "Other"]], "line 3: code 'OSK' is already"),
        ([["code", "name"], ["OSK"]], "line 2: expected two values"),
    ],
)
def test_a_bad_code_file_is_one_line_naming_file_and_line(
    tmp_path: Path, rows: list[list[str]], words: str
) -> None:
    path = recipe_folder(tmp_path)
    write_csv(tmp_path / "clubs.csv", rows)
    with pytest.raises(RecipeError) as caught:
        load_recipe(path)
    assert words in str(caught.value) and str(tmp_path / "clubs.csv") in str(caught.value)
    assert "\n" not in str(caught.value)


def test_a_missing_or_escaping_code_file_is_refused(tmp_path: Path) -> None:
    path = recipe_folder(tmp_path)
    (tmp_path / "clubs.csv").unlink()
    with pytest.raises(RecipeError, match=r"cannot read .*clubs\.csv"):
        load_recipe(path)
    path.write_text(RECIPE.replace('"clubs.csv"', '"../clubs.csv"'), encoding="utf-8")
    with pytest.raises(RecipeError, match="must be a file name beside the recipe"):
        load_recipe(path)


def test_an_alias_given_two_keys_is_refused(tmp_path: Path) -> None:
    path = recipe_folder(
        tmp_path, aliases=[["Jon Smith", "Jonathan Smith"], ["Smith, Jon", "J Smith"]]
    )
    with pytest.raises(RecipeError, match="line 3: 'Smith, Jon' is already an alias"):
        load_recipe(path)
