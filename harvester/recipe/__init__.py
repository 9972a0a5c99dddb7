"""Recipes: TOML files saying what to harvest, checked key by key, and the plan of pages.

``model`` holds what a recipe is, ``load`` reads one, ``schema`` and ``readers`` check keys,
``parameters`` and ``templates`` handle the values that fill page addresses.
"""

from __future__ import annotations

from harvester.recipe.load import load_recipe
from harvester.recipe.model import (
    FetchSettings,
    Parameter,
    PlannedPage,
    Recipe,
    RecipeTable,
    StoreSettings,
    choose_table_rule,
)
from harvester.recipe.templates import expand_template

__all__ = [
    "FetchSettings",
    "Parameter",
    "PlannedPage",
    "Recipe",
    "RecipeTable",
    "StoreSettings",
    "choose_table_rule",
    "expand_template",
    "load_recipe",
]
