"""`--param NAME=A..B` and `NAME=A,B,C`: the values a plan covers (issue 11's RANGE forms).

Ranges are inclusive at both ends, as issue 11 defines `A..B`; expected plans are written out
by hand from the demo recipe (seasons 2012-2026).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from harvester.errors import RecipeError
from harvester.recipe import load_recipe

RECIPES = Path(__file__).resolve().parents[2] / "recipes"
PLAYERS = RECIPES / "league-players.toml"


def seasons(value: str) -> list[int | str]:
    recipe = load_recipe(PLAYERS, {"season": value})
    return [page.parameters["season"] for page in recipe.plan()]


def test_a_range_plans_both_ends_and_everything_between() -> None:
    assert seasons("2019..2021") == [2019, 2020, 2021]
    assert seasons("2026..2026") == [2026]


def test_a_list_plans_its_values_in_the_order_given_each_once() -> None:
    assert seasons("2019,2012,2019") == [2019, 2012]


def test_one_value_is_still_the_current_one() -> None:
    assert seasons("2019") == [2019]
    recipe = load_recipe(PLAYERS, {"season": "2019"})
    assert len(recipe.plan(every_value=True)) == 15  # --all still means every declared value


@pytest.mark.parametrize(
    ("value", "words"),
    [
        ("2021..2019", "runs downwards"),
        ("2010..2013", "must be one of 2012–2026"),
        ("2019,2031", "got 2031"),
        ("x..2019", "takes an integer"),
        ("2019..", "takes an integer"),
    ],
)
def test_a_bad_range_or_list_is_one_line_naming_the_option(value: str, words: str) -> None:
    with pytest.raises(RecipeError) as caught:
        load_recipe(PLAYERS, {"season": value})
    assert caught.value.key == "--param season"
    assert words in str(caught.value) and "\n" not in str(caught.value)


def test_text_ranges_follow_the_declared_order(tmp_path: Path) -> None:
    recipe = tmp_path / "r.toml"
    recipe.write_text(
        '[recipe]\nname = "r"\nsite = "http://127.0.0.1:8650"\n'
        '[parameters]\nleague = ["north", "east", "south", "west"]\n'
        '[fetch]\nurl = "{site}/{league}.html"\n[tables.t]\nselect = "table"\n',
        encoding="utf-8",
    )
    plan = load_recipe(recipe, {"league": "east..west"}).plan()
    assert [page.parameters["league"] for page in plan] == ["east", "south", "west"]
    with pytest.raises(RecipeError, match="against the declared order"):
        load_recipe(recipe, {"league": "west..east"})
