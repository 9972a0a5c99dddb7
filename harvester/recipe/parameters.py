"""Reads ``[parameters]``: recipe variables such as ``season``, and ``--param`` values for them.

A parameter is a from/to range, a list, or one value, with a current value used by default.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import replace

from harvester.recipe.model import Parameter
from harvester.recipe.readers import Reader, Where, integer, show
from harvester.recipe.schema import home_hint, read_section
from harvester.store.contract import PARTITION_KEY

__all__ = [
    "MAX_DIGITS",
    "MAX_RANGE",
    "MAX_TEXT_VALUE",
    "PARAMETER_NAME",
    "read_parameters",
    "set_parameter",
]

# Parameters name partition folders, so they follow the archive's partition-key rule.
PARAMETER_NAME = PARTITION_KEY
MAX_RANGE = 10_000  # values one from/to range may hold, so a typo like to = 20266 stays cheap
MAX_TEXT_VALUE = 200  # characters in one text value: a path segment, not a document (no source)
MAX_DIGITS = 18  # digits of an integer value: every such number fits in 64 bits, signed


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
    if isinstance(value, str):
        try:
            value.encode("utf-8")
        except UnicodeEncodeError:  # a command-line argument that was not UTF-8 (surrogateescape)
            where.fail("is not UTF-8 text", "give the value as UTF-8 text")
        if len(value) > MAX_TEXT_VALUE:
            where.fail(
                f"is {len(value):,} characters long, more than {MAX_TEXT_VALUE}",
                "give a value a page address can hold: a word or a number",
            )
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
    """The ``[parameters]`` section, and the names given as one bare value (any ``--param``)."""
    if not isinstance(value, dict):
        where.fail(f"must be a table, got {show(value)}", "write [parameters] on a line of its own")
    parameters = tuple(_parameter(name, item, where.at(name)) for name, item in value.items())
    singles = frozenset(name for name, item in value.items() if not isinstance(item, list | dict))
    return parameters, singles


def set_parameter(parameter: Parameter, raw: str, *, single: bool, where: Where) -> Parameter:
    """``parameter`` after ``--param NAME=VALUE``: one value becomes the current one; a range
    ``A..B`` (inclusive) or a list ``A,B,C`` becomes the values every plan covers.

    A parameter written as one bare value takes any values; otherwise each must be one of its
    values (a range of text values is the declared values from A to B). Integer parameters
    take decimal integers only. A raw value that is itself a declared value is that value.
    """
    if _declared(parameter, raw):
        return _set_one(parameter, raw, single=single, where=where)
    found = _RANGE.fullmatch(raw)
    if found is not None:
        return _select(parameter, _range(parameter, found["a"], found["b"], single, where), where)
    if "," in raw:
        picked = [_one(parameter, item.strip(), where) for item in raw.split(",")]
        if not single:
            for value in picked:
                _check_declared(parameter, value, where)
        return _select(parameter, picked, where)
    return _set_one(parameter, raw, single=single, where=where)


_RANGE = re.compile(r"(?P<a>[^.]+(?:\.[^.]+)*)\.\.(?P<b>[^.]+(?:\.[^.]+)*)")


def _declared(parameter: Parameter, raw: str) -> bool:
    """Whether ``raw`` is exactly one of the parameter's declared values."""
    if isinstance(parameter.values[0], int):
        return re.fullmatch(r"[+-]?[0-9]{1,18}", raw) is not None and int(raw) in parameter.values
    return raw in parameter.values


def _one(parameter: Parameter, raw: str, where: Where) -> int | str:
    """One raw value read as the parameter's kind (an integer for integer parameters)."""
    name = parameter.name
    example = f"e.g. --param {name}={parameter.values[-1]}"
    value: int | str = raw
    if isinstance(parameter.values[0], int):
        if not re.fullmatch(r"[+-]?[0-9]+", raw):
            where.fail(f"{name} takes an integer, got {show(raw)}", example)
        if len(raw.lstrip("+-")) > MAX_DIGITS:
            where.fail(f"{name} takes an integer of at most {MAX_DIGITS} digits", example)
        value = int(raw)
    return _value(value, where)


def _check_declared(parameter: Parameter, value: int | str, where: Where) -> None:
    if value not in parameter.values:
        example = f"e.g. --param {parameter.name}={parameter.values[-1]}"
        where.fail(f"must be one of {_describe(parameter.values)}, got {show(value)}", example)


def _set_one(parameter: Parameter, raw: str, *, single: bool, where: Where) -> Parameter:
    value = _one(parameter, raw, where)
    if single:
        return Parameter(parameter.name, (value,), value)
    _check_declared(parameter, value, where)
    return replace(parameter, current=value, selected=False)


def _range(
    parameter: Parameter, first_raw: str, last_raw: str, single: bool, where: Where
) -> list[int | str]:
    """The values from A to B, both included: integers counted, text taken in declared order."""
    first, last = _one(parameter, first_raw, where), _one(parameter, last_raw, where)
    if isinstance(first, int) and isinstance(last, int):
        if last < first:
            where.fail(f"range {first}..{last} runs downwards", f"write {last}..{first}")
        if last - first >= MAX_RANGE:
            where.fail(f"range {first}..{last} holds more than {MAX_RANGE} values", "narrow it")
        values: list[int | str] = list(range(first, last + 1))
        if not single:
            for end_value in (first, last):
                _check_declared(parameter, end_value, where)
            values = [value for value in values if value in parameter.values]
        return values
    if single:
        where.fail("a range needs declared values or integers", "list the values: A,B,C")
    for end_text in (first, last):
        _check_declared(parameter, end_text, where)
    start, end = parameter.values.index(first), parameter.values.index(last)
    if end < start:
        where.fail(f"range {first}..{last} runs against the declared order", "swap the two")
    return list(parameter.values[start : end + 1])


def _select(parameter: Parameter, values: Sequence[int | str], where: Where) -> Parameter:
    """The parameter planning exactly ``values`` (in the order given, each once)."""
    unique = tuple(dict.fromkeys(values))
    if not unique:
        where.fail("selects no value", f"e.g. --param {parameter.name}={parameter.values[-1]}")
    return replace(parameter, values=unique, current=unique[-1], selected=True)
