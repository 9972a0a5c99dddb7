"""Reads the values that fill page addresses (site, ``[parameters]``) and checks the templates.

A parameter is a recipe variable such as ``season``: a from/to range, a list, or one value,
with a current value used by default. Templates are ``str.format``-style strings naming only
``{site}`` and parameters; every value but the site is percent-encoded when filled in.
"""

from __future__ import annotations

import re
import string
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from urllib.parse import quote, urlsplit

from harvester.recipe_schema import (
    Reader,
    Where,
    home_hint,
    integer,
    read_section,
    show,
    suggest,
    text,
)

__all__ = [
    "MAX_RANGE",
    "Parameter",
    "expand_template",
    "read_parameters",
    "set_parameter",
    "site_url",
    "template_names",
    "template_reader",
]

PARAMETER_NAME = re.compile(r"[a-z][a-z0-9_]*")
_Piece = tuple[str, str | None, str | None, str | None]  # string.Formatter().parse() items
MAX_RANGE = 10_000  # values one from/to range may hold, so a typo like to = 20266 stays cheap


@dataclass(frozen=True)
class Parameter:
    """A recipe variable such as ``season``: its values in order, and the one used by default."""

    name: str
    values: tuple[int | str, ...]
    current: int | str


# --- templates -----------------------------------------------------------------------------------


def template_names(template: str) -> tuple[str, ...]:
    """The placeholder names in a template the loader accepted, in order."""
    return tuple(field for _, field, _, _ in string.Formatter().parse(template) if field)


def expand_template(template: str, values: Mapping[str, int | str], *, site: str = "") -> str:
    """Fill a template's placeholders; every value but ``site`` is percent-encoded whole.

    Encoding with ``safe=""`` turns ``/ ? # @ :`` into ``%XX``, so a value cannot add a path
    segment, a query or another host (RFC 3986 §2.1, §3.2); "." and ".." are refused on load.
    """
    parts: list[str] = []
    for literal, field, _, _ in string.Formatter().parse(template):
        parts.append(literal)
        if field == "site":
            parts.append(site)
        elif field:
            parts.append(quote(str(values[field]), safe=""))
    return "".join(parts)


def template_reader(known: Sequence[str], *, url: bool) -> Reader:
    """A reader for a template naming only ``known``; URL templates must fix scheme and host."""
    listed = ", ".join("{" + name + "}" for name in known) or "none"

    def read(value: object, where: Where) -> str:
        if not isinstance(value, str) or not value:
            example = '"{site}/seasons/{season}/players.html"' if url else '"{season}-06-30"'
            where.expected("non-empty text in quotes", value, example)
        try:
            pieces = list(string.Formatter().parse(value))
        except ValueError as exc:
            where.fail(f"is not a valid template: {exc}", "write {{ or }} for a literal brace")
        for _, field, spec, conversion in pieces:
            if field is not None and (spec or conversion or not field):
                where.fail(
                    f"has a placeholder that is not a plain {{name}}: {show(value)}",
                    f"placeholders here: {listed}",
                )
            if field is not None and field not in known:
                hint = f"{suggest(field, known)} placeholders here: {listed}".lstrip()
                where.fail(f"names unknown placeholder {{{field}}}", hint)
        if url:
            _check_url_shape(value, pieces, where)
        return value

    return read


def _check_url_shape(template: str, pieces: list[_Piece], where: Where) -> None:
    """Refuse URL templates where a value could change the scheme, host or port."""
    example = 'write url = "{site}/seasons/{season}/players.html"'
    if any(char.isspace() for char in template):
        where.fail("contains a space or line break", "write %20 for a space inside a URL")
    fields = [field for _, field, _, _ in pieces]
    opens_with_site = pieces[0][0] == "" and fields[0] == "site"
    if "site" in fields[1 if opens_with_site else 0 :]:
        where.fail("may use {site} only at the very start", example)
    if opens_with_site:
        # "{site}.evil.example" or "{site}{port}" would move the request to another host.
        if len(pieces) > 1 and pieces[1][0][:1] not in ("/", "?", "#"):
            where.fail("needs a / right after {site}", example)
        return
    prefix = ""  # the text before the first placeholder must hold the whole scheme and host
    for literal, field, _, _ in pieces:
        prefix += literal
        if field is not None:
            break
    if not prefix.lower().startswith(("http://", "https://")):
        where.fail("must start with {site}/ or http:// or https://", example)
    if any(fields) and not any(mark in prefix.split("://", 1)[1] for mark in "/?#"):
        where.fail("has a placeholder in the host part", "put placeholders after the host's /")
    if not urlsplit(prefix).hostname:
        where.fail("has no host after ://", 'write url = "https://stats.example.org/{season}"')


def site_url(value: object, where: Where) -> str:
    """An http(s) URL with a host and no query, fragment or password; a final / is dropped."""
    example = '"https://stats.example.org"'
    site: str = text(example, required=True)(value, where)
    parts = urlsplit(site)
    try:
        parts.port  # noqa: B018 - reading .port is what checks it
        usable = parts.scheme in ("http", "https") and parts.hostname and not parts.username
    except ValueError:
        usable = False
    if not usable or parts.query or parts.fragment or any(c.isspace() for c in site):
        where.expected("an http:// or https:// address (no user, query or #)", site, example)
    return site.rstrip("/")


# --- parameters ----------------------------------------------------------------------------------


def _value(value: object, where: Where) -> int | str:
    """One parameter value: an integer, or text that is safe inside a URL path."""
    if isinstance(value, bool) or not isinstance(value, int | str):
        # A key that belongs elsewhere often lands here when a [section] line is missing.
        hint = home_hint(where.leaf, "") or 'e.g. 2026 or "north"'
        where.fail(f"must be an integer or text, got {show(value)}", hint)
    if isinstance(value, str) and value in ("", ".", ".."):
        # Dot-segments move up a folder however they are encoded (RFC 3986 §3.3, §5.2.4; the
        # WHATWG URL parser also reads %2e as a dot, from memory).
        where.fail(f"may not be {show(value)}", 'give a value a page address can hold: "north"')
    return value


def _values(value: object, where: Where) -> tuple[int | str, ...]:
    """A non-empty list of distinct values, all integers or all text."""
    if not isinstance(value, list) or not value:
        hint = f"write {where.leaf} = [2024, 2025]"
        where.fail(f"must be a non-empty list, got {show(value)}", hint)
    values = tuple(_value(item, where.item(index)) for index, item in enumerate(value))
    for index, item in enumerate(values):
        if type(item) is not type(values[0]):
            where.item(index).fail(f"mixes text and integers: {show(value)}", "use one kind")
        if item in values[:index]:
            where.item(index).fail(f"repeats {show(item)}", "list each value once")
    return values


def _describe(values: Sequence[int | str]) -> str:
    """A short account of a parameter's values: 2012–2026 for a long range, else the list."""
    first, last = values[0], values[-1]
    is_int_range = isinstance(first, int) and isinstance(last, int) and len(values) > 2
    if is_int_range and list(values) == list(range(int(first), int(last) + 1)):
        return f"{first}–{last}"
    return show(list(values))


_READERS: dict[str, Reader] = {
    "from": integer("2012"),
    "to": integer("2026"),
    "values": _values,
    "current": _value,
}


def _parameter(name: str, value: object, where: Where) -> Parameter:
    """One ``[parameters]`` entry: a range table, a values table, a list or one value."""
    if name == "site":
        where.fail("site is set in [recipe], not here", 'move it: [recipe] site = "https://…"')
    if not PARAMETER_NAME.fullmatch(name):
        where.fail("a parameter name may use only a-z, 0-9 and _", "start with a letter: season")
    if isinstance(value, list):
        values = _values(value, where)
        return Parameter(name, values, values[-1])
    if not isinstance(value, dict):
        single = _value(value, where)
        return Parameter(name, (single,), single)
    found = read_section(value, where, _READERS, home=f"parameters.{name}")
    is_range = "from" in found or "to" in found
    if is_range and "values" in found:
        where.at("values").fail(
            "cannot be given with from/to", "give either from and to, or values"
        )
    if is_range:
        for end in ("from", "to"):
            if end not in found:
                where.at(end).fail("missing", "a range needs both: { from = 2012, to = 2026 }")
        first, last = found["from"], found["to"]
        if last < first:
            where.at("to").fail(f"must be >= from ({first}), got {last}", "a range runs upwards")
        if last - first >= MAX_RANGE:
            where.at("to").fail(f"makes a range of more than {MAX_RANGE} values", "narrow it")
        values = tuple(range(first, last + 1))
    elif "values" in found:
        values = found["values"]
    else:
        where.fail("needs from and to, or values", f"write {name} = {{ from = 2012, to = 2026 }}")
    current = found.get("current", values[-1])
    if type(current) is not type(values[0]) or current not in values:
        where.at("current").fail(
            f"must be one of {_describe(values)}, got {show(current)}",
            f"write current = {show(values[-1])}",
        )
    return Parameter(name, values, current)


def read_parameters(value: object, where: Where) -> tuple[tuple[Parameter, ...], frozenset[str]]:
    """The ``[parameters]`` section, and the names given as one bare value (``--set`` replaces)."""
    if not isinstance(value, dict):
        where.fail(f"must be a table, got {show(value)}", "write [parameters] on a line of its own")
    parameters = tuple(_parameter(name, item, where.at(name)) for name, item in value.items())
    singles = frozenset(name for name, item in value.items() if not isinstance(item, list | dict))
    return parameters, singles


def set_parameter(parameter: Parameter, raw: str, *, single: bool, where: Where) -> Parameter:
    """``parameter`` with the current value ``raw`` from ``--set NAME=VALUE``.

    A parameter written as one bare value takes any value; otherwise ``raw`` must be one of
    its values. Integer parameters take decimal integers only.
    """
    name = parameter.name
    example = f"e.g. --set {name}={parameter.values[-1]}"
    value: int | str = raw
    if isinstance(parameter.values[0], int):
        if not re.fullmatch(r"[+-]?[0-9]+", raw):
            where.fail(f"{name} takes an integer, got {show(raw)}", example)
        value = int(raw)
    value = _value(value, where)
    if single:
        return Parameter(name, (value,), value)
    if value not in parameter.values:
        where.fail(f"must be one of {_describe(parameter.values)}, got {show(value)}", example)
    return replace(parameter, current=value)
