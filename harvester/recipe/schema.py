"""Which keys each recipe section allows, and the readers of tables, columns and row drops.

``harvester.recipe.load`` drives the load; this module knows what each key may hold and where a
key belongs when it was written in the wrong section ("did you mean", "belongs under").
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

from harvester.extract.rules import COLUMN_TYPES, ColumnRule, RowDrop, TableRule
from harvester.fetch.identity import CONTACT_HINT, check_contact
from harvester.fetch.limits import MAX_WAIT_LIMIT
from harvester.recipe.readers import (
    Reader,
    Where,
    boolean,
    choice,
    integer,
    literal_options,
    number,
    regex,
    selector,
    show,
    suggest,
    text,
    text_list,
)
from harvester.store.contract import DATASET_NAME, TABLE_NAME

__all__ = [
    "COLUMN_READERS",
    "FETCH_READERS",
    "RECIPE_READERS",
    "STORE_READERS",
    "TABLE_READERS",
    "home_hint",
    "read_section",
    "read_table",
    "table_value",
]


def table_value(value: object, where: Where, example: str) -> dict[str, Any]:
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
    data = table_value(value, where, example)
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
    data = table_value(value, where, '{ shooting_goals = "goals" }')
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
    data = table_value(value, where, '{ minutes = { type = "duration" } }')
    for name in data:
        if not name:
            where.at(name).fail("a column name may not be empty", 'write "Goals per 60" = { ... }')
    return tuple(_column(name, spec, where.at(name)) for name, spec in data.items())


def dataset_name(value: object, where: Where) -> str:
    """A dataset name: a-z, 0-9, ``_`` and ``-``, starting with a letter or digit."""
    name: str = text('"league-players"', required=True)(value, where)
    if not DATASET_NAME.fullmatch(name):  # the archive's name rule
        better = re.sub(r"[^a-z0-9_-]+", "-", name.lower()).strip("-_") or "my-dataset"
        where.expected("a-z, 0-9, _ and - only", name, f'"{better}"')
    return name


def contact_address(value: object, where: Where) -> str:
    """An e-mail address or an http(s) page where the site's operators can reach you."""
    contact: str = text('"mailto:analyst@example.org"', required=True)(value, where)
    checked, problem = check_contact(contact)
    if checked is None:
        where.fail(problem, CONTACT_HINT)
    return checked


RECIPE_READERS: dict[str, Reader] = {
    "name": dataset_name,
    "site": text('"https://stats.example.org"', required=True),  # recipe.py checks the URL
    "contact": contact_address,
    "description": text('"Player statistics per season"'),
}
FETCH_READERS: dict[str, Reader] = {
    "url": text('"{site}/seasons/{season}/players.html"', required=True),
    "delay": number("2.0", maximum=MAX_WAIT_LIMIT),
    "max_wait": number("600", maximum=MAX_WAIT_LIMIT, positive=True),
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
    "group_rows": choice(literal_options(TableRule, "group_rows")),
    "group_column": text('"conference"', required=True),
    "drop_rows": _drop_rows,
    "drop_empty_rows": boolean,
    "hidden": choice(literal_options(TableRule, "hidden")),
    "markers": text('"*†‡+#§¶‖"'),
    "nulls": text_list('["", "—", "N/A"]'),
    "decimal_mark": choice(literal_options(TableRule, "decimal_mark")),
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
    "codes": text('"clubs.csv"', required=True),
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
    if not TABLE_NAME.fullmatch(name):  # the archive's name rule
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
