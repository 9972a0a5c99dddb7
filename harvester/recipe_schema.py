"""Checks a recipe's TOML values key by key, turning each problem into a one-line RecipeError.

``harvester.recipe`` drives the load; this module knows what each key may hold. Readers take a
value and a ``Where`` (file + dotted key path) and return the value in the form the dataclasses
want (lists become tuples), or raise at the first problem.
"""

from __future__ import annotations

import difflib
import json
import math
import re
import typing
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from datetime import date, datetime, time
from typing import Any, NoReturn
from urllib.parse import urlsplit

from selectolax.lexbor import LexborHTMLParser, SelectolaxError

from harvester.errors import RecipeError
from harvester.extract.rules import COLUMN_TYPES, ColumnRule, RowDrop, TableRule

__all__ = [
    "COLUMN_READERS",
    "FETCH_READERS",
    "RECIPE_READERS",
    "STORE_READERS",
    "TABLE_READERS",
    "Reader",
    "Where",
    "home_hint",
    "integer",
    "read_section",
    "read_table",
    "show",
    "suggest",
    "text",
]

Reader = Callable[[object, "Where"], Any]

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")  # TOML v1.0.0 "Keys": bare keys need no quotes


@dataclass(frozen=True)
class Where:
    """A place in a recipe file: the file as the user named it and a dotted TOML key path."""

    path: str
    key: str = ""
    leaf: str = ""  # the last key name, for hints such as "write header_rows = 2"

    def at(self, name: str) -> Where:
        """The place of key ``name`` inside this table (quoted when TOML would need quotes)."""
        part = name if _BARE_KEY.fullmatch(name) else json.dumps(name, ensure_ascii=False)
        return Where(self.path, f"{self.key}.{part}" if self.key else part, name)

    def item(self, index: int) -> Where:
        """The place of element ``index`` of the list at this place."""
        return Where(self.path, f"{self.key}[{index}]", self.leaf)

    def fail(self, message: str, hint: str = "") -> NoReturn:
        """Raise the RecipeError for this place."""
        raise RecipeError(message, path=self.path, key=self.key, hint=hint)

    def expected(self, what: str, value: object, example: str) -> NoReturn:
        """Raise 'must be WHAT, got VALUE — write KEY = EXAMPLE' for this place."""
        self.fail(f"must be {what}, got {show(value)}", f"write {self.leaf} = {example}")


def show(value: object) -> str:
    """Render a TOML value the way the user wrote it, shortened to keep messages on one line."""
    if isinstance(value, bool):
        shown = "true" if value else "false"
    elif isinstance(value, str):
        shown = json.dumps(value, ensure_ascii=False)
    elif isinstance(value, list):
        shown = "[" + ", ".join(show(item) for item in value) + "]"
    elif isinstance(value, dict):
        shown = "{ " + ", ".join(f"{key} = {show(item)}" for key, item in value.items()) + " }"
    elif isinstance(value, datetime | date | time):
        shown = value.isoformat()  # a TOML date/time literal, written without quotes
    else:
        shown = repr(value)  # int and float; repr gives TOML's own inf and nan
    shown = " ".join(shown.split())
    return shown if len(shown) <= 60 else shown[:59] + "…"


def suggest(word: object, options: Sequence[str]) -> str:
    """A 'did you mean' hint for ``word`` among ``options``, or '' when nothing is close."""
    if not isinstance(word, str):
        return ""
    lowered = {option.lower(): option for option in options}
    close = difflib.get_close_matches(word.lower(), list(lowered), n=1)
    return f"did you mean {json.dumps(lowered[close[0]], ensure_ascii=False)}?" if close else ""


def _literal_options(owner: type, name: str) -> tuple[str, ...]:
    """The allowed strings of a Literal-typed dataclass field, so rules.py stays the one source."""
    hint = typing.get_type_hints(owner)[name]
    return tuple(arg for arg in typing.get_args(hint) if isinstance(arg, str))


def text(example: str, *, required: bool = False) -> Reader:
    """A string; ``required`` also refuses the empty string."""

    def read(value: object, where: Where) -> str:
        if not isinstance(value, str) or (required and not value):
            where.expected(f"{'non-empty ' if required else ''}text in quotes", value, example)
        return value

    return read


def integer(example: str, *, minimum: int | None = None) -> Reader:
    """A TOML integer (never a boolean or a float), at least ``minimum`` when given."""

    def read(value: object, where: Where) -> int:
        if (
            isinstance(value, bool)
            or not isinstance(value, int)
            or (minimum is not None and value < minimum)
        ):
            bound = "" if minimum is None else f" >= {minimum}"
            where.expected(f"an integer{bound}", value, example)
        return value

    return read


def number(example: str) -> Reader:
    """A finite integer or float >= 0, returned as a float."""

    def read(value: object, where: Where) -> float:
        if (
            isinstance(value, bool)
            or not isinstance(value, int | float)
            or not math.isfinite(value)
            or value < 0
        ):
            where.expected("a number >= 0", value, example)
        return float(value)

    return read


def boolean(value: object, where: Where) -> bool:
    """A TOML boolean, written true or false without quotes."""
    if not isinstance(value, bool):
        where.expected("true or false", value, "true")
    return value


def choice(options: Sequence[str]) -> Reader:
    """One of the strings ``options``."""

    def read(value: object, where: Where) -> str:
        if isinstance(value, str) and value in options:
            return value
        listed = ", ".join(json.dumps(option, ensure_ascii=False) for option in options)
        hint = suggest(value, options) or f"write {where.leaf} = {json.dumps(options[0])}"
        where.fail(f"must be one of {listed}, got {show(value)}", hint)

    return read


def text_list(example: str, *, required: bool = False, unique: bool = False) -> Reader:
    """A list of strings, returned as a tuple; ``required`` refuses empty strings in it."""
    item_reader = text(example, required=required)

    def read(value: object, where: Where) -> tuple[str, ...]:
        if not isinstance(value, list):
            where.expected("a list of text", value, example)
        items: list[str] = []
        for index, item in enumerate(value):
            items.append(item_reader(item, where.item(index)))
            if unique and items[-1] in items[:-1]:
                where.item(index).fail(f"repeats {show(item)}", "list each name once")
        return tuple(items)

    return read


def regex(example: str) -> Reader:
    """A Python regular expression that compiles."""
    read_text = text(example, required=True)

    def read(value: object, where: Where) -> str:
        pattern: str = read_text(value, where)
        try:
            re.compile(pattern)
        except re.error as exc:
            where.fail(
                f"is not a valid regular expression: {exc.msg} at position {exc.pos}",
                "check brackets and escapes; in '...' quotes a backslash needs no doubling",
            )
        return pattern

    return read


def selector(value: object, where: Where) -> str:
    """A CSS selector the HTML parser (lexbor, via selectolax) accepts."""
    css: str = text('"table#players"', required=True)(value, where)
    try:
        LexborHTMLParser("<p></p>").css(css)
    except SelectolaxError:
        where.fail(f"is not a CSS selector the parser can read: {show(css)}", "e.g. table#players")
    return css


def _table(value: object, where: Where, example: str) -> dict[str, Any]:
    """``value`` as a TOML table, or an error saying how to write one."""
    if not isinstance(value, dict):
        hint = home_hint(where.leaf, "")
        if "." not in where.key and not hint:  # a top-level section such as [fetch]
            hint = f"write [{where.key}] on a line of its own, with its keys below it"
        if hint:
            where.fail(f"must be a table, got {show(value)}", hint)
        where.expected("a table", value, example)
    return value


def read_section(
    value: object,
    where: Where,
    readers: Mapping[str, Reader],
    *,
    home: str,
    example: str = "{ ... }",
    required: Mapping[str, str] | None = None,
) -> dict[str, Any]:
    """Read a TOML table with one reader per allowed key, in file order; unknown keys are errors.

    ``home`` names the section in hints ("[fetch]"); ``required`` maps each required key to
    an example line for the hint. Only keys present in the file appear in the result.
    """
    data = _table(value, where, example)
    result: dict[str, Any] = {}
    for key, item in data.items():
        reader = readers.get(key)
        if reader is None:
            hint = (
                home_hint(key, home)  # a key known elsewhere beats a near miss here
                or suggest(key, list(readers))
                or f"allowed keys here: {', '.join(readers)}"
            )
            where.at(key).fail("unknown key", hint)
        result[key] = reader(item, where.at(key))
    for key, line in (required or {}).items():
        if key not in data:
            where.at(key).fail("missing", f"add {line} under {home}")
    return result


def home_hint(key: str, home: str) -> str:
    """Where ``key`` belongs when it was written in the wrong section, or ''."""
    if key == "name" and home in (TABLE_HOME, COLUMN_HOME):
        return "a table's or column's name is its own key, as in [tables.players]"
    homes = [place for place, keys in _SECTION_KEYS.items() if key in keys and place != home]
    return f"{key} belongs under {' or '.join(homes)}" if homes else ""


TABLE_HOME = "[tables.NAME]"
COLUMN_HOME = "a column under [tables.NAME.columns]"


def _rename(value: object, where: Where) -> tuple[tuple[str, str], ...]:
    """``{ old = "new" }`` pairs in file order; two columns may not get one name."""
    data = _table(value, where, '{ shooting_goals = "goals" }')
    pairs: list[tuple[str, str]] = []
    for old, new in data.items():
        name: str = text('"goals"', required=True)(new, where.at(old))
        if any(name == taken for _, taken in pairs):
            where.at(old).fail(f"gives a second column the name {show(name)}", "pick another name")
        pairs.append((old, name))
    return tuple(pairs)


_DROP_READERS: dict[str, Reader] = {
    "column": text('"player"', required=True),
    "matches": regex('"League totals"'),
}


def _drop_rows(value: object, where: Where) -> tuple[RowDrop, ...]:
    """A list of ``{ column = ..., matches = ... }`` tables."""
    example = '{ column = "player", matches = "League totals" }'
    if not isinstance(value, list):
        where.expected("a list of tables", value, f"[{example}]")
    required = {"column": 'column = "player"', "matches": 'matches = "League totals"'}
    drops: list[RowDrop] = []
    for index, item in enumerate(value):
        at = where.item(index)
        found = read_section(
            item, at, _DROP_READERS, home=at.key, example=example, required=required
        )
        drops.append(RowDrop(**found))
    return tuple(drops)


def _column(name: str, value: object, where: Where) -> ColumnRule:
    """One entry of ``[tables.NAME.columns]``."""
    example = f'{{ type = "{value}" }}' if value in COLUMN_TYPES else '{ type = "text" }'
    found = read_section(value, where, COLUMN_READERS, home=COLUMN_HOME, example=example)
    for key, wanted in (("formats", "date"), ("true_values", "boolean")):
        if key in found and found.get("type") != wanted:
            setting = f'type = "{wanted}"'
            where.at(key).fail(f"only applies with {setting}", f"add {setting}, or remove {key}")
    if "pattern" in found and "link_of" not in found:
        where.at("pattern").fail("only applies with link_of", "add link_of, or remove pattern")
    if found.get("link_of") == name:
        where.at("link_of").fail("names the column itself", "name the column whose link to read")
    return ColumnRule(name=name, **found)


def _columns(value: object, where: Where) -> tuple[ColumnRule, ...]:
    """``[tables.NAME.columns]``: column name -> inline table of column settings."""
    data = _table(value, where, '{ minutes = { type = "duration" } }')
    for name in data:
        if not name:
            where.at(name).fail("a column name may not be empty", 'write "Goals per 60" = { ... }')
    return tuple(_column(name, spec, where.at(name)) for name, spec in data.items())


def dataset_name(value: object, where: Where) -> str:
    """A dataset name: a-z, 0-9, ``_`` and ``-``, starting with a letter or digit."""
    name: str = text('"league-players"', required=True)(value, where)
    if not re.fullmatch(r"[a-z0-9][a-z0-9_-]*", name):
        better = re.sub(r"[^a-z0-9_-]+", "-", name.lower()).strip("-_") or "my-dataset"
        where.expected("a-z, 0-9, _ and - only", name, f'"{better}"')
    return name


def contact_address(value: object, where: Where) -> str:
    """A ``mailto:`` address or an http(s) page where the site's operators can reach you."""
    contact: str = text('"mailto:analyst@example.org"', required=True)(value, where)
    is_mail = re.fullmatch(r"mailto:[^@\s]+@[^@\s]+", contact)
    is_page = urlsplit(contact).scheme in ("http", "https") and urlsplit(contact).hostname
    if not (is_mail or is_page):
        where.expected("a mailto: address or an http(s) URL", contact, '"mailto:you@example.org"')
    return contact


RECIPE_READERS: dict[str, Reader] = {
    "name": dataset_name,
    "site": text('"https://stats.example.org"', required=True),  # recipe.py checks the URL
    "contact": contact_address,
    "description": text('"Player statistics per season"'),
}
FETCH_READERS: dict[str, Reader] = {
    "url": text('"{site}/seasons/{season}/players.html"', required=True),
    "delay": number("2.0"),
    "past": choice(("live", "capture", "live-then-capture")),
    "capture_near": text('"{season}-06-30"', required=True),
    "immutable_before": integer("2025"),
}
STORE_READERS: dict[str, Reader] = {
    "partition_by": text_list('["season"]', required=True, unique=True),
    "drift": choice(("refuse", "warn", "accept")),
    "min_rows": integer("1", minimum=0),
    "max_rows": integer("5000", minimum=0),
}
TABLE_READERS: dict[str, Reader] = {
    "url": text('"{site}/seasons/{season}/players.html"', required=True),
    "select": selector,
    "index": integer("0", minimum=0),
    "header_rows": integer("2", minimum=0),
    "header_separator": text('"_"'),
    "rename": _rename,
    "drop_repeated_headers": boolean,
    "group_rows": choice(_literal_options(TableRule, "group_rows")),
    "group_column": text('"conference"', required=True),
    "drop_rows": _drop_rows,
    "drop_empty_rows": boolean,
    "hidden": choice(_literal_options(TableRule, "hidden")),
    "markers": text('"*†‡+#"'),
    "nulls": text_list('["", "—", "N/A"]'),
    "decimal_mark": choice(_literal_options(TableRule, "decimal_mark")),
    "infer_types": boolean,
    "key": text_list('["player_id"]', required=True, unique=True),
    "columns": _columns,
}
COLUMN_READERS: dict[str, Reader] = {
    "type": choice(COLUMN_TYPES),
    "formats": text_list('["%d %b %Y"]', required=True),
    "markers_to": text('"player_flags"', required=True),
    "link_of": text('"player"', required=True),
    "pattern": regex('"/players/(\\\\w+)"'),
    "true_values": text_list('["C"]', required=True),
    "person_key": boolean,
}
_SECTION_KEYS: dict[str, Sequence[str]] = {
    "[recipe]": list(RECIPE_READERS),
    "[fetch]": list(FETCH_READERS),
    "[store]": list(STORE_READERS),
    TABLE_HOME: list(TABLE_READERS),
    COLUMN_HOME: list(COLUMN_READERS),
}


def read_table(name: str, value: object, where: Where, url: Reader) -> tuple[TableRule, str | None]:
    """One ``[tables.NAME]`` section: its rule, and its own URL template (read by ``url``)."""
    if not re.fullmatch(r"[a-z0-9_]+", name):
        better = re.sub(r"[^a-z0-9_]+", "_", name.lower()).strip("_") or "players"
        where.fail("a table name may use only a-z, 0-9 and _", f"rename it, e.g. [tables.{better}]")

    readers = {**TABLE_READERS, "url": url}
    found = read_section(value, where, readers, home=TABLE_HOME, example='{ select = "table" }')
    if "group_column" in found and found.get("group_rows") != "column":
        setting = 'group_rows = "column"'
        where.at("group_column").fail(
            f"only applies with {setting}", f"add {setting}, or remove it"
        )
    page = found.pop("url", None)
    return TableRule(name=name, **found), page
