"""The recipe model: choosing a table rule for a one-off extraction, and the plan as data."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from harvester.errors import RecipeError
from harvester.extract.rules import TableRule
from harvester.recipe import choose_table_rule, load_recipe

RECIPES = Path(__file__).resolve().parents[2] / "recipes"


def test_a_recipe_with_one_table_needs_no_table_name() -> None:
    recipe = load_recipe(RECIPES / "league-standings.toml")
    assert choose_table_rule(recipe).select == "table#standings"


def test_several_tables_need_a_name_and_the_error_lists_them() -> None:
    recipe = load_recipe(RECIPES / "league-players.toml")
    with pytest.raises(RecipeError, match=r"several tables \(players, advanced\)") as caught:
        choose_table_rule(recipe)
    assert "--table NAME" in caught.value.hint
    assert choose_table_rule(recipe, "advanced").select == "table#advanced"


def test_overrides_replace_only_what_is_given() -> None:
    recipe = load_recipe(RECIPES / "league-players.toml")
    rule = choose_table_rule(recipe, "players", header_rows=1, drop_hidden=True)
    assert (rule.select, rule.header_rows, rule.hidden) == ("table#players", 1, "drop")
    assert rule.key == ("player_id",)  # the recipe's own settings stay


def test_without_a_recipe_the_default_rule_is_overridden() -> None:
    rule = choose_table_rule(None, select="#t", index=2)
    assert rule == TableRule(select="#t", index=2)
    with pytest.raises(RecipeError, match="without a recipe"):
        choose_table_rule(None, "players")


def test_the_plan_record_is_plain_json() -> None:
    recipe = load_recipe(RECIPES / "league-standings.toml", {"season": "2025"})
    record = recipe.plan_record(recipe.plan())
    assert json.loads(json.dumps(record)) == {
        "recipe": "league-standings",
        "sha256": recipe.sha256,
        "pages": [
            {
                "url": "http://127.0.0.1:8650/seasons/2025/standings.html",
                "parameters": {"season": 2025},
                "tables": ["standings"],
            }
        ],
    }
