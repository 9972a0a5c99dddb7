"""Cell parsers for each column type, checked a whole column at a time where possible.

Each column is joined with NUL and checked with one compiled pattern (one C-level call for
thousands of cells); only a column that fails is walked cell by cell, to name the bad cell.
Beyond the plain grammar: currency amounts may end in a multiplier (k/K thousand, m/M million,
bn/B billion), and a *declared* currency or percent column also accepts a bare number.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from datetime import date, datetime
from decimal import Decimal
from functools import cache, partial
from typing import Any, cast

import pyarrow as pa

from harvester.extract.rules import ColumnType

__all__ = [
    "ARROW_TYPES",
    "DEFAULT_TRUE_VALUES",
    "GROUP_SPACES",
    "INFER_ORDER",
    "MINUS_SIGNS",
    "PARSERS",
    "ParseContext",
    "fits_int64",
    "parse_boolean",
    "parse_currency",
    "parse_date",
    "parse_decimal",
    "parse_duration",
    "parse_integer",
    "parse_percent",
    "plain_number",
]

# Texts a boolean ("marker") column shows for true (common practice, no published source).
DEFAULT_TRUE_VALUES = ("✓", "✔", "x", "X", "yes", "Yes", "Y", "y", "true", "True", "*")
# Hyphen-minus, U+2212 MINUS SIGN, figure dash, en dash, small and fullwidth hyphen-minus.
MINUS_SIGNS = "-\u2212\u2012\u2013\ufe63\uff0d"
_Kinds = tuple[ColumnType, ...]
INFER_ORDER: _Kinds = ("integer", "decimal", "percent", "currency", "duration", "date")

GROUP_SPACES = " \u00a0\u202f\u2009"  # space, no-break, narrow no-break, thin
_SIGNS = "+" + MINUS_SIGNS
_NUMERIC = ("integer", "decimal", "percent", "currency")
_MULTIPLIERS = {"k": 10**3, "K": 10**3, "m": 10**6, "M": 10**6, "bn": 10**9, "B": 10**9}
_LEADING_ZERO = re.compile("\x000[0-9]")  # a NUL-joined cell starting "0" then a digit
_ISO_DATE = re.compile(r"[0-9]{4}-[0-9]{2}-[0-9]{2}")
_ISO_COLUMN = re.compile(r"[0-9]{4}-[0-9]{2}-[0-9]{2}(?:\0[0-9]{4}-[0-9]{2}-[0-9]{2})*")
_MM_SS_COLUMN = re.compile(r"[0-9]+:[0-5][0-9](?:\0[0-9]+:[0-5][0-9])*")
# Seconds always < 60; minutes may run past 59 only when there is no hour part.
_DURATION = re.compile(
    r"(?:(?P<hours>[0-9]+):(?P<minutes_past>[0-5][0-9])|(?P<minutes>[0-9]+))"
    r":(?P<seconds>[0-5][0-9])(?:(?P<decimal_mark>[.,])(?P<fraction>[0-9]+))?"
)
_FLOAT, _INT = pa.float64(), pa.int64()
ARROW_TYPES = dict(text=pa.string(), integer=_INT, decimal=_FLOAT, currency=_FLOAT)
ARROW_TYPES.update(percent=_FLOAT, date=pa.date32(), duration=_INT, boolean=pa.bool_())


def _forms(decimal_mark: str, infer: bool, group: str) -> dict[str, str]:
    """Regex source per numeric kind; ``group`` names the separator group so copies coexist."""
    seps = re.escape(("," if decimal_mark == "." else ".") + GROUP_SPACES)
    sign, decimal, bare = f"[+{re.escape(MINUS_SIGNS)}]", "\\" + decimal_mark, "" if infer else "?"
    # Grouped digits come in threes with one separator throughout, so "1,25" is no integer;
    # inference refuses leading zeros, as "007" is an identifier, not seven (both: common
    # practice, no published source).
    grouped = rf"(?:(?P<{group}>[{seps}])[0-9]{{3}}(?:(?P={group})[0-9]{{3}})*|[0-9]*)"
    digits = rf"(?:0|[1-9][0-9]{{0,2}}{grouped})" if infer else rf"[0-9]{{1,3}}{grouped}"
    unsigned = rf"(?:{digits}(?:{decimal}[0-9]+)?|{decimal}[0-9]+)"
    # A declared percent or currency column also takes bare numbers ("0" for no money).
    symbol = rf"(?:[$€£¥][{GROUP_SPACES}]?|[A-Z]{{3}}[ \u00a0]){bare}"
    return {
        "integer": rf"{sign}?{digits}",
        "decimal": rf"{sign}?{unsigned}",
        "percent": rf"{sign}?{unsigned}(?:[{GROUP_SPACES}]?%){bare}",
        "currency": rf"(?:{sign}{symbol}(?!{sign})|{symbol}{sign}?){unsigned}",
        "multiplied": rf"(?P<pre>{sign})?{symbol}(?P<num>{sign}?{unsigned})(?P<mult>bn|[kKmMB])?",
    }


@cache
def _pattern(decimal_mark: str, kind: str, infer: bool) -> re.Pattern[str]:
    """One pattern matching a whole column joined by NUL: one C-level call checks every cell."""
    if kind == "multiplied":
        return re.compile(_forms(decimal_mark, infer, "a")[kind])
    # Atomic groups that must end at a cell boundary: once a cell has matched, a later cell's
    # failure cannot send the engine back through every way of splitting earlier digits.
    first, rest = _forms(decimal_mark, infer, "a")[kind], _forms(decimal_mark, infer, "b")[kind]
    return re.compile(rf"(?>{first}(?=\0|\Z))(?:\0(?>{rest}(?=\0|\Z)))*")


def _replacements(decimal_mark: str) -> tuple[tuple[str, str], ...]:
    """What turns matched texts into what int() and float() read: signs, separators, symbols."""
    group_separator = "," if decimal_mark == "." else "."
    drop = group_separator + GROUP_SPACES + "+%$€£¥ABCDEFGHIJKLMNOPQRSTUVWXYZ"
    minus = tuple((c, "-") for c in MINUS_SIGNS[1:])
    return (*((c, "") for c in drop), *minus, (decimal_mark, "."))


_REPLACEMENTS = {".": _replacements("."), ",": _replacements(",")}


def plain_number(text: str, decimal_mark: str) -> str:
    """A matched number as int() and float() read it: ASCII minus, no separators or symbols."""
    # A few str.replace calls beat str.translate, which is slow once the text is not ASCII.
    for old, new in _REPLACEMENTS[decimal_mark]:
        if old in text:
            text = text.replace(old, new)
    return text


@dataclass(frozen=True)
class ParseContext:
    """How to parse: the decimal mark, inference or declared, date formats."""

    decimal_mark: str
    infer: bool
    formats: tuple[str, ...] = ()


_Result = tuple[list[Any] | None, int]  # parsed values, or None and the first failing index


def _each(cells: Sequence[str], parse: Callable[[str], Any]) -> _Result:
    out: list[Any] = []
    for i, cell in enumerate(cells):
        value = parse(cell)
        if value is None:
            return None, i
        out.append(value)
    return out, -1


def _plain_digits(cells: list[str], joined: str, infer: bool) -> bool:
    """Whether every cell is ASCII digits: the usual integer column, which needs no regex."""
    digits = joined.replace("\0", "")
    if not (all(cells) and digits.isascii() and digits.isdigit()):
        return False
    return not (infer and _LEADING_ZERO.search("\0" + joined))


# What a matched integer of over 4,300 significant digits stands as: int() refuses such strings
# (Python's int_max_str_digits), and one that long is past 64 bits whatever its digits, which
# is all a column asks of it. No string of 4,300 digits parses to it.
_TOO_LONG = 10**4300


def _int(text: str) -> int:
    """``int(text)`` for a matched integer, or ±_TOO_LONG past 4,300 significant digits."""
    if len(text) > 4300 and len(text.lstrip("+-").lstrip("0")) > 4300:
        return -_TOO_LONG if text.startswith("-") else _TOO_LONG
    return int(text)


def fits_int64(values: list[int]) -> bool:
    return not values or (min(values) >= -(2**63) and max(values) < 2**63)


def _numbers(kind: str, cells: list[str], ctx: ParseContext) -> _Result:
    if not cells:
        return [], -1
    joined = "\0".join(cells)
    if kind == "integer" and _plain_digits(cells, joined, ctx.infer):
        return list(map(_int, cells)), -1
    pattern = _pattern(ctx.decimal_mark, kind, ctx.infer)
    if pattern.fullmatch(joined) is None:
        if kind == "currency":  # multipliers need a look at each cell
            multiplied = _pattern(ctx.decimal_mark, "multiplied", ctx.infer)
            return _each(cells, lambda c: _currency(c, multiplied, ctx.decimal_mark))
        if ctx.infer:  # inference only needs to know that some cell failed
            return None, -1
        return None, next(i for i, c in enumerate(cells) if not pattern.fullmatch(c))
    convert: Callable[[str], Any] = _int if kind == "integer" else float
    return list(map(convert, plain_number(joined, ctx.decimal_mark).split("\0"))), -1


def _currency(text: str, pattern: re.Pattern[str], decimal_mark: str) -> float | None:
    match = pattern.fullmatch(text)
    if match is None or (match["pre"] and match["num"][0] in _SIGNS):
        return None
    number, multiplier = plain_number(match["num"], decimal_mark), match["mult"]
    # Decimal keeps "1.2m" exactly 1,200,000 rather than 1.2 * 1e6 in binary.
    value = float(Decimal(number) * _MULTIPLIERS[multiplier]) if multiplier else float(number)
    return -value if match["pre"] and match["pre"] != "+" else value


def _duration(text: str, decimal_mark: str) -> int | float | None:
    match = _DURATION.fullmatch(text)
    if match is None or (match["fraction"] and match["decimal_mark"] != decimal_mark):
        return None
    if match["hours"] is not None:
        hours, minutes = _int(match["hours"]), int(match["minutes_past"])
    else:
        hours, minutes = 0, _int(match["minutes"])
    whole = hours * 3600 + minutes * 60 + int(match["seconds"])
    return whole if match["fraction"] is None else float(f"{whole}.{match['fraction']}")


def _durations(cells: list[str], ctx: ParseContext) -> _Result:
    joined = "\0".join(cells)
    if cells and _MM_SS_COLUMN.fullmatch(joined):
        parts = joined.replace(":", "\0").split("\0")
        minutes, seconds = map(int, parts[::2]), map(int, parts[1::2])
        return [minute * 60 + second for minute, second in zip(minutes, seconds, strict=True)], -1
    return _each(cells, lambda c: _duration(c, ctx.decimal_mark))


def _date(text: str, formats: Sequence[str]) -> date | None:
    if not formats:
        if _ISO_DATE.fullmatch(text) is None:
            return None
        formats = ("%Y-%m-%d",)
    for fmt in formats:
        try:
            return datetime.strptime(text, fmt).date()
        except ValueError:
            continue
    return None


def _dates(cells: list[str], ctx: ParseContext) -> _Result:
    if cells and not ctx.formats and _ISO_COLUMN.fullmatch("\0".join(cells)):
        try:
            return list(map(date.fromisoformat, cells)), -1
        except ValueError:
            pass  # an impossible day such as 2023-02-30; the slow path finds which cell
    # strptime is slow, and match dates repeat, so each distinct text is parsed once.
    seen: dict[str, date | None] = {}
    formats = ctx.formats

    def one(c: str) -> date | None:
        if c not in seen:
            seen[c] = _date(c, formats)
        return seen[c]

    return _each(cells, one)


_Parser = Callable[[list[str], ParseContext], _Result]
PARSERS: dict[str, _Parser] = {k: partial(_numbers, k) for k in _NUMERIC}
PARSERS.update(duration=_durations, date=_dates)


def _one(kind: str, text: str, decimal_mark: str = ".", formats: Sequence[str] = ()) -> Any:
    """One cell parsed as a declared column would parse it; ValueError if it does not."""
    if decimal_mark not in _REPLACEMENTS:
        raise ValueError(f"decimal_mark must be '.' or ',', not {decimal_mark!r}")
    ctx = ParseContext(decimal_mark, infer=False, formats=tuple(formats))
    values, _ = PARSERS[kind]([text.strip()], ctx)
    if values is None:
        raise ValueError(f"{text!r} is not a valid {kind}")
    return values[0]


def parse_integer(text: str, decimal_mark: str = ".") -> int:
    """The integer a cell writes, e.g. ``"−1,250"`` → ``-1250``; ValueError if none."""
    value: int = _one("integer", text, decimal_mark)
    if abs(value) == _TOO_LONG:
        raise ValueError(f"{text[:20]!r}… has over 4,300 digits")
    return value


def parse_decimal(text: str, decimal_mark: str = ".") -> float:
    """The number a cell writes, e.g. ``".500"`` → ``0.5``; ValueError if none."""
    return float(_one("decimal", text, decimal_mark))


def parse_percent(text: str, decimal_mark: str = ".") -> float:
    """The number before the ``%`` (``"12.5%"`` → ``12.5``); a bare number is taken too."""
    return float(_one("percent", text, decimal_mark))


def parse_currency(text: str, decimal_mark: str = ".") -> float:
    """An amount after a currency symbol or code (``"€1.2m"`` → ``1200000.0``), or bare."""
    return float(_one("currency", text, decimal_mark))


def parse_duration(text: str, decimal_mark: str = ".") -> int | float:
    """Seconds in ``mm:ss`` or ``h:mm:ss`` (float when written with fractional seconds)."""
    return cast(int | float, _one("duration", text, decimal_mark))


def parse_date(text: str, formats: Sequence[str] = ()) -> date:
    """The date a cell writes in one of ``formats`` (strptime), ISO ``%Y-%m-%d`` if none given."""
    return cast(date, _one("date", text, formats=formats))


def parse_boolean(text: str, true_values: Sequence[str] = DEFAULT_TRUE_VALUES) -> bool:
    """True for a text in ``true_values``, False for an empty cell; ValueError otherwise."""
    text = text.strip()
    if text in true_values:
        return True
    if not text:
        return False
    raise ValueError(f"{text!r} is not a valid boolean marker")
