"""What a checked recipe is: its settings, its tables, and the plan of pages to fetch.

These are plain frozen dataclasses; ``harvester.recipe.load`` builds them from a TOML file and is
the only place that checks keys. ``Recipe.plan`` fills the URL templates with parameter values.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType
from typing import Literal

from harvester.errors import RecipeError
from harvester.extract.rules import TableRule
from harvester.fetch.limits import DEFAULT_MAX_WAIT
from harvester.fetch.source import PastMode
from harvester.fetch.web_archive import WebArchive
from harvester.recipe.readers import suggest
from harvester.recipe.templates import expand_template, template_names

__all__ = [
    "MAX_PLAN_PAGES",
    "FetchSettings",
    "Parameter",
    "PlannedPage",
    "Recipe",
    "RecipeTable",
    "StoreSettings",
    "choose_table_rule",
]

MAX_PLAN_PAGES = 100_000  # pages one plan may hold: at one a second, more than a day of fetching
DriftPolicy = Literal["refuse", "warn", "accept"]


@dataclass(frozen=True)
class Parameter:
    """A recipe variable such as ``season``: its values in order, and the one used by default."""

    name: str
    values: tuple[int | str, ...]
    current: int | str
    selected: bool = False  # values chosen by --param A..B or A,B: every plan covers them all


@dataclass(frozen=True)
class FetchSettings:
    """The ``[fetch]`` section: the shared page template and how politely to fetch."""

    url: str | None = None  # template; tables without a url of their own use it
    delay: float | None = None  # seconds between requests to one host; only ever raises the site's
    past: PastMode = "live"
    capture_near: str | None = None  # template of the date a web-archive capture should be near
    immutable_before: int | None = None  # parameter values below this never change
    max_wait: float = DEFAULT_MAX_WAIT  # seconds: the longest single wait (any reason)


@dataclass(frozen=True)
class StoreSettings:
    """The ``[store]`` section: how harvested tables are kept in the archive."""

    partition_by: tuple[str, ...] = ()
    drift: DriftPolicy = "refuse"
    min_rows: int | None = None
    max_rows: int | None = None


@dataclass(frozen=True)
class RecipeTable:
    """One ``[tables.NAME]`` section: how to read the table, and the template of its page."""

    rule: TableRule
    url: str


@dataclass(frozen=True)
class PlannedPage:
    """One page to fetch, the parameter values its address uses, and the tables read from it."""

    url: str
    parameters: Mapping[str, int | str]
    tables: tuple[str, ...]

    def to_dict(self) -> dict[str, object]:
        """The page as plain JSON values: url, parameters, tables."""
        return {"url": self.url, "parameters": dict(self.parameters), "tables": list(self.tables)}


@dataclass(frozen=True)
class Recipe:
    """A checked recipe: what to fetch, how politely, and which tables come out."""

    name: str
    path: Path
    sha256: str  # hex digest of the file's bytes (before any --param)
    site: str
    contact: str | None
    description: str
    parameters: tuple[Parameter, ...]
    fetch: FetchSettings
    tables: tuple[RecipeTable, ...]
    store: StoreSettings
    captures: WebArchive | None = None  # [captures], over the user config's; None: no archive

    @property
    def table_names(self) -> tuple[str, ...]:
        """The names of the recipe's tables, in file order."""
        return tuple(table.rule.name for table in self.tables)

    def table_rule(self, name: str | None = None) -> TableRule:
        """The rule of the table called ``name``; with no name, of the recipe's only table."""
        known = self.table_names
        if name is None:
            if len(known) == 1:
                return self.tables[0].rule
            raise RecipeError(
                f"the recipe has several tables ({', '.join(known)})",
                path=str(self.path),
                hint="name one of them (--table NAME on the command line)",
            )
        for table in self.tables:
            if table.rule.name == name:
                return table.rule
        hint = f"{suggest(name, known)} tables here: {', '.join(known)}".lstrip()
        raise RecipeError("no such table", path=str(self.path), key=f"tables.{name}", hint=hint)

    def plan(self, *, every_value: bool = False) -> list[PlannedPage]:
        """The pages to fetch: for the current parameter values, or for every combination.

        A parameter whose values were selected (``--param season=2019..2021``) always plans
        every selected value.

        Combinations run in declaration order, the first parameter slowest. Tables whose
        templates give the same address share one page (one fetch); an address met again in a
        later combination adds no page. A page carries only the parameters its address uses.
        """
        names = [parameter.name for parameter in self.parameters]
        choices = [p.values if every_value or p.selected else (p.current,) for p in self.parameters]
        self._check_plan_size(choices)
        uses = {table.rule.name: set(template_names(table.url)) for table in self.tables}
        pages: dict[str, tuple[dict[str, int | str], list[str]]] = {}
        for combination in itertools.product(*choices):
            values = dict(zip(names, combination, strict=True))
            for table in self.tables:
                url = expand_template(table.url, values, site=self.site)
                used, tables = pages.setdefault(url, ({}, []))
                used.update((name, values[name]) for name in names if name in uses[table.rule.name])
                if table.rule.name not in tables:
                    tables.append(table.rule.name)
        return [
            PlannedPage(url, MappingProxyType({n: used[n] for n in names if n in used}), tuple(t))
            for url, (used, t) in pages.items()
        ]

    def _check_plan_size(self, choices: Sequence[Sequence[int | str]]) -> None:
        """Refuse, before building anything, a plan of more than MAX_PLAN_PAGES combinations."""
        combinations = math.prod(len(values) for values in choices)
        if combinations <= MAX_PLAN_PAGES:
            return
        counts = " × ".join(
            f"{len(values):,} {parameter.name}"
            for parameter, values in zip(self.parameters, choices, strict=True)
        )
        raise RecipeError(
            f"plans {combinations:,} combinations ({counts}), more than {MAX_PLAN_PAGES:,}",
            path=str(self.path),
            hint="narrow a parameter's range or list, or plan one value of it with --param",
        )

    def plan_record(self, pages: Sequence[PlannedPage]) -> dict[str, object]:
        """A plan as plain JSON values: the recipe's name and SHA-256, and each page."""
        return {
            "recipe": self.name,
            "sha256": self.sha256,
            "pages": [page.to_dict() for page in pages],
        }


def choose_table_rule(
    recipe: Recipe | None,
    table: str | None = None,
    *,
    select: str | None = None,
    index: int | None = None,
    header_rows: int | None = None,
    drop_hidden: bool = False,
) -> TableRule:
    """The rule a one-off extraction uses, with the given settings overriding it.

    The recipe's table called ``table`` (or its only table), or with no recipe the default
    rule; ``None`` leaves a setting as the rule has it.
    """
    if recipe is None and table is not None:
        raise RecipeError(f"table {table!r} was named without a recipe", hint="give the recipe")
    rule = recipe.table_rule(table) if recipe is not None else TableRule()
    return dataclasses.replace(
        rule,
        select=rule.select if select is None else select,
        index=rule.index if index is None else index,
        header_rows=rule.header_rows if header_rows is None else header_rows,
        hidden="drop" if drop_hidden else rule.hidden,
    )
