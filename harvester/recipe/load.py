"""Loads a recipe (a TOML file saying what to harvest) and checks every key of it.

``load_recipe`` stops at the first problem with a one-line RecipeError naming the file, the
dotted key and what to write instead. It reads the file, then each section in turn: the keys of a
section are in ``schema``, parameters in ``parameters``, page templates in ``templates``; what
comes out is the ``model``'s ``Recipe``.
"""

from __future__ import annotations

import dataclasses
import hashlib
import re
import tomllib
from collections.abc import Mapping, Sequence
from datetime import datetime
from pathlib import Path
from typing import Any

from harvester.config import config_path, config_table
from harvester.fetch.web_archive import WebArchive
from harvester.recipe.captures import read_captures
from harvester.recipe.lookups import ALIASES_FILE, read_aliases, read_codes
from harvester.recipe.model import FetchSettings, Parameter, Recipe, RecipeTable, StoreSettings
from harvester.recipe.parameters import read_parameters, set_parameter
from harvester.recipe.readers import Where, suggest
from harvester.recipe.schema import (
    FETCH_READERS,
    RECIPE_READERS,
    STORE_READERS,
    read_section,
    read_table,
)
from harvester.recipe.templates import expand_template, site_url, template_names, template_reader

__all__ = ["MAX_RECIPE_BYTES", "load_recipe"]

MAX_RECIPE_BYTES = 1_048_576  # 1 MiB; the demo recipes are under 3 KB (common practice, no source)

SECTIONS = ("recipe", "parameters", "fetch", "captures", "tables", "store")
_REQUIRED = {"name": 'name = "league-players"', "site": 'site = "http://127.0.0.1:8650"'}


def load_recipe(
    path: str | Path, overrides: Mapping[str, str] | None = None, *, lenient: bool = False
) -> Recipe:
    """Read and check the recipe at ``path``; ``overrides`` come from ``--param NAME=VALUE``.

    ``site`` replaces the recipe's site; a parameter's name sets its current value, or with a
    range ``A..B`` or list ``A,B`` the values every plan covers. ``lenient`` ignores overrides
    naming a parameter the recipe does not have (one ``--param`` for several recipes).
    """
    where = Where(str(path))
    data, digest = _read_toml(Path(path), where)
    read_section(data, where, {name: _keep for name in SECTIONS}, home="the top level")
    if "recipe" not in data:
        where.at("recipe").fail("missing", 'start the file with [recipe], name = "…", site = "…"')
    recipe_readers = {**RECIPE_READERS, "site": site_url}
    about = read_section(
        data["recipe"], where.at("recipe"), recipe_readers, home="[recipe]", required=_REQUIRED
    )
    parameters, singles = read_parameters(data.get("parameters", {}), where.at("parameters"))
    names = [parameter.name for parameter in parameters]
    fetch_readers = {
        **FETCH_READERS,
        "url": template_reader(["site", *names], url=True),
        "capture_near": template_reader(names, url=False),
    }
    fetch_found = read_section(
        data.get("fetch", {}), where.at("fetch"), fetch_readers, home="[fetch]"
    )
    fetch = FetchSettings(**fetch_found)
    if fetch.delay is not None and fetch.delay > fetch.max_wait:
        where.at("fetch").at("delay").fail(
            f"is {fetch.delay:g} s, longer than max_wait ({fetch.max_wait:g} s), the longest wait",
            "lower delay, or raise max_wait under [fetch] if the site really asks for that",
        )
    tables = _read_tables(data.get("tables"), where.at("tables"), fetch.url, names)
    tables = _with_lookups(tables, Path(path), where)
    store = _read_store(data.get("store", {}), where.at("store"), names, tables, fetch.url)
    site, parameters = _apply_overrides(
        overrides or {}, about["site"], parameters, singles, where, lenient=lenient
    )
    _check_capture_near(fetch, parameters, tables, where)  # after --param: it uses current values
    captures = _read_archive(data.get("captures"), where.at("captures"), fetch, where)
    return Recipe(
        name=about["name"],
        path=Path(path),
        sha256=digest,
        site=site,
        contact=about.get("contact"),
        description=about.get("description", ""),
        parameters=parameters,
        fetch=fetch,
        tables=tables,
        store=store,
        captures=captures,
    )


def _keep(value: object, where: Where) -> object:
    """Accept a top-level section as it is; its own reader checks it later."""
    return value


# tomllib's messages, and what to do about each (tomllib names no fix itself).
_SYNTAX_HINTS = {
    "Invalid value": 'text needs double quotes, as in select = "table#players"; true is lowercase',
    "Invalid statement": "each line is key = value, or a [section] header",
    "Expected '=' after a key": 'write key = value; a key with spaces needs quotes: "Goals per 60"',
    "Cannot declare": "each [section] may appear once; merge the two",
    "Cannot overwrite a value": "each key may be set once per section; remove the repeat",
    "Illegal character": 'close each quoted string on the line it starts (or use """…""")',
    "Unterminated string": "close the string with the quote it opened with (\" or ')",
}


def _read_toml(file: Path, where: Where) -> tuple[dict[str, Any], str]:
    """The parsed TOML and the SHA-256 of the file's bytes."""
    try:
        with file.open("rb") as handle:
            raw = handle.read(MAX_RECIPE_BYTES + 1)  # never more: the path may be /dev/zero
    except FileNotFoundError:
        where.fail("recipe file not found", "check the path; recipes usually live in recipes/")
    except OSError as exc:
        where.fail(f"cannot read the recipe file: {exc.strerror}", "check the path and permissions")
    if len(raw) > MAX_RECIPE_BYTES:
        where.fail(
            f"is larger than {MAX_RECIPE_BYTES:,} bytes; a recipe is a few kilobytes of TOML",
            "check the path: this is not a recipe file",
        )
    try:
        source = raw.decode("utf-8").removeprefix("\ufeff")  # tolerate a byte-order mark
    except UnicodeDecodeError as exc:  # TOML v1.0.0: "A TOML file must be ... UTF-8"
        where.fail(f"is not UTF-8 text (bad byte at offset {exc.start})", "save it as UTF-8")
    try:
        data = tomllib.loads(source)
    except tomllib.TOMLDecodeError as exc:
        found = re.fullmatch(r"(.*) \(at (?:line (\d+), column (\d+)|end of document)\)", str(exc))
        problem, line, column = found.groups() if found else (str(exc), None, None)
        last_line = source.count("\n") + 1
        place = f"line {line}, column {column}" if line else f"end of file (line {last_line})"
        hint = next(
            (fix for start, fix in _SYNTAX_HINTS.items() if problem.startswith(start)),
            "fix the TOML there; the format is in docs/recipes.md",
        )
        where.fail(f"invalid TOML at {place}: {problem}", hint)
    return data, hashlib.sha256(raw).hexdigest()


def _with_lookups(
    tables: tuple[RecipeTable, ...], recipe: Path, where: Where
) -> tuple[RecipeTable, ...]:
    """The tables with their code files read and the recipe's aliases.csv, when it exists."""
    folder = recipe.parent
    aliases_path = folder / ALIASES_FILE
    aliases = read_aliases(aliases_path) if aliases_path.is_file() else ()
    done = []
    for table in tables:
        columns = []
        for column in table.rule.columns:
            if column.codes is not None:
                key = f"tables.{table.rule.name}.columns.{column.name}.codes"
                if Path(column.codes).is_absolute() or ".." in Path(column.codes).parts:
                    where.fail(
                        f"{key}: {column.codes!r} must be a file name beside the recipe",
                        'e.g. codes = "clubs.csv"',
                    )
                pairs = read_codes(folder / column.codes, key)
                column = dataclasses.replace(column, code_names=pairs)
            columns.append(column)
        rule = dataclasses.replace(table.rule, columns=tuple(columns), aliases=aliases)
        done.append(RecipeTable(rule, table.url))
    return tuple(done)


def _read_tables(
    value: object, where: Where, shared_url: str | None, names: Sequence[str]
) -> tuple[RecipeTable, ...]:
    """The ``[tables.NAME]`` sections; a table without a url of its own takes ``[fetch]`` url."""
    if not value:
        where.fail(
            "missing: a recipe needs at least one table",
            'add [tables.players] with select = "table#players"',
        )
    if not isinstance(value, dict):
        where.fail("must be a table of tables", "write [tables.players] on a line of its own")
    url = template_reader(["site", *names], url=True)
    tables: list[RecipeTable] = []
    for name, spec in value.items():
        rule, own_url = read_table(name, spec, where.at(name), url)
        page = own_url or shared_url
        if page is None:
            where.at(name).at("url").fail(
                "missing: this table has no url and [fetch] has none",
                'add url = "{site}/…" here, or one url under [fetch] for every table',
            )
        tables.append(RecipeTable(rule, page))
    return tuple(tables)


def _read_store(
    value: object,
    where: Where,
    names: Sequence[str],
    tables: Sequence[RecipeTable],
    fetch_url: str | None,
) -> StoreSettings:
    """The ``[store]`` section; by default partitions by the parameters every page address uses."""
    found = read_section(value, where, STORE_READERS, home="[store]")
    for index, name in enumerate(found.get("partition_by", ())):
        at = where.at("partition_by").item(index)
        if name not in names:
            at.fail(f"names no parameter: {name!r}", f"parameters: {', '.join(names) or 'none'}")
        _require_in_every_url(name, tables, fetch_url, at)
    if "partition_by" not in found:
        found["partition_by"] = tuple(n for n in names if _page_without(n, tables) is None)
    low, high = found.get("min_rows"), found.get("max_rows")
    if low is not None and high is not None and high < low:
        where.at("max_rows").fail(f"must be >= min_rows ({low}), got {high}", "raise it")
    return StoreSettings(**found)


def _page_without(name: str, tables: Sequence[RecipeTable]) -> RecipeTable | None:
    """The first table whose page address does not use the parameter ``name``, if any."""
    return next((table for table in tables if name not in template_names(table.url)), None)


def _require_in_every_url(
    name: str, tables: Sequence[RecipeTable], fetch_url: str | None, where: Where
) -> None:
    """Refuse a setting naming a parameter that some table's page does not depend on."""
    table = _page_without(name, tables)
    if table is not None:
        own = table.url != fetch_url
        source = f"tables.{table.rule.name}.url" if own else "fetch.url"
        where.fail(
            f"uses {name}, but the page of table {table.rule.name!r} does not depend on it",
            f"add {{{name}}} to {source}, or leave {name} out here",
        )


def _check_capture_near(
    fetch: FetchSettings,
    parameters: Sequence[Parameter],
    tables: Sequence[RecipeTable],
    where: Where,
) -> None:
    """capture_near must depend only on what the pages do, and give an ISO 8601 date."""
    if fetch.capture_near is None:
        return
    at = where.at("fetch").at("capture_near")
    for name in template_names(fetch.capture_near):
        _require_in_every_url(name, tables, fetch.url, at)
    current = {parameter.name: parameter.current for parameter in parameters}
    target = expand_template(fetch.capture_near, current)
    try:
        datetime.fromisoformat(target)  # ISO 8601 date or date-time
    except ValueError:
        at.fail(f"gives {target!r} for the current values, not a date", 'e.g. "{season}-06-30"')


def _read_archive(
    value: object, at: Where, fetch: FetchSettings, where: Where
) -> WebArchive | None:
    """The recipe's web archive ([captures] over the user config's); one is needed unless
    ``past`` is "live"."""
    config = config_table("captures")
    defaults = (config, Where(str(config_path()), "captures")) if config is not None else None
    archive = read_captures(value, at, defaults)
    if archive is None and fetch.past != "live":
        where.at("fetch").at("past").fail(
            f"is {fetch.past!r}, but no web archive is configured to take captures from",
            'add [captures] with timemap = "https://archive.example.net/timemap/{url}" (or set'
            ' one in the user config), or write past = "live"',
        )
    return archive


def _apply_overrides(
    overrides: Mapping[str, str],
    site: str,
    parameters: tuple[Parameter, ...],
    singles: frozenset[str],
    where: Where,
    *,
    lenient: bool = False,
) -> tuple[str, tuple[Parameter, ...]]:
    """The site and parameters after ``--param NAME=VALUE`` overrides."""
    settable = ["site", *(parameter.name for parameter in parameters)]
    by_name = {parameter.name: parameter for parameter in parameters}
    for name, raw in overrides.items():
        at = Where(where.path, f"--param {name}", name)
        if name == "site":
            site = site_url(raw, at)
        elif name in by_name:
            by_name[name] = set_parameter(by_name[name], raw, single=name in singles, where=at)
        elif not lenient:
            hint = f"{suggest(name, settable)} you can set: {', '.join(settable)}".lstrip()
            at.fail("nothing by that name can be set", hint)
    return site, tuple(by_name.values())
