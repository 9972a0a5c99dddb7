"""Turn one column of cell texts into a typed pyarrow array, declared or inferred.

Per cell: surrounding whitespace is stripped, then a trailing run of footnote markers
(``TableRule.markers``; ``markers = ""`` in a recipe turns this off), then texts in
``TableRule.nulls`` become null. What is left is parsed as the column's type. A declared type
that does not parse raises :class:`~harvester.errors.ValueParseError`; an inferred type is one
that every non-null cell parses as (tried in :data:`INFER_ORDER`), else ``"text"``.

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
from itertools import compress, repeat
from typing import Any, cast

import pyarrow as pa

from harvester.errors import ValueParseError
from harvester.extract.rules import ColumnRule, ColumnType, TableRule

__all__ = [
    "DEFAULT_TRUE_VALUES",
    "INFER_ORDER",
    "MINUS_SIGNS",
    "TypedColumn",
    "convert_column",
    "infer_type",
    "parse_boolean",
    "parse_currency",
    "parse_date",
    "parse_decimal",
    "parse_duration",
    "parse_integer",
    "parse_percent",
    "split_markers",
]

# Texts a boolean ("marker") column shows for true (common practice, no published source).
DEFAULT_TRUE_VALUES = ("✓", "✔", "x", "X", "yes", "Yes", "Y", "y", "true", "True", "*")
# Hyphen-minus, U+2212 MINUS SIGN, figure dash, en dash, small and fullwidth hyphen-minus.
MINUS_SIGNS = "-\u2212\u2012\u2013\ufe63\uff0d"
_Kinds = tuple[ColumnType, ...]
INFER_ORDER: _Kinds = ("integer", "decimal", "percent", "currency", "duration", "date")

_GROUP_SPACES = " \u00a0\u202f\u2009"  # space, no-break, narrow no-break, thin
_SIGNS = "+" + MINUS_SIGNS
_NUMERIC = ("integer", "decimal", "percent", "currency")
_MULTIPLIERS = {"k": 10**3, "K": 10**3, "m": 10**6, "M": 10**6, "bn": 10**9, "B": 10**9}
_LEADING_ZERO = re.compile("\x000[0-9]")  # a NUL-joined cell starting "0" then a digit
_ISO_DATE = re.compile(r"[0-9]{4}-[0-9]{2}-[0-9]{2}")
_ISO_COLUMN = re.compile(r"[0-9]{4}-[0-9]{2}-[0-9]{2}(?:\0[0-9]{4}-[0-9]{2}-[0-9]{2})*")
_MM_SS_COLUMN = re.compile(r"[0-9]+:[0-5][0-9](?:\0[0-9]+:[0-5][0-9])*")
# Seconds always < 60; minutes may run past 59 only when there is no hour part.
_DURATION = re.compile(
    r"(?:(?P<h>[0-9]+):(?P<hm>[0-5][0-9])|(?P<m>[0-9]+)):(?P<s>[0-5][0-9])"
    r"(?:(?P<dm>[.,])(?P<frac>[0-9]+))?"
)
_FLOAT, _INT = pa.float64(), pa.int64()
_ARROW_TYPES = dict(text=pa.string(), integer=_INT, decimal=_FLOAT, currency=_FLOAT)
_ARROW_TYPES.update(percent=_FLOAT, date=pa.date32(), duration=_INT, boolean=pa.bool_())


def _forms(mark: str, infer: bool, n: str) -> dict[str, str]:
    """Regex source per numeric kind; ``n`` names the separator group so copies can coexist."""
    seps = re.escape(("," if mark == "." else ".") + _GROUP_SPACES)
    sign, dm, bare = f"[+{re.escape(MINUS_SIGNS)}]", "\\" + mark, "" if infer else "?"
    # Grouped digits come in threes with one separator throughout, so "1,25" is no integer;
    # inference refuses leading zeros, as "007" is an identifier, not seven (both: common
    # practice, no published source).
    grouped = rf"(?:(?P<{n}>[{seps}])[0-9]{{3}}(?:(?P={n})[0-9]{{3}})*|[0-9]*)"
    digits = rf"(?:0|[1-9][0-9]{{0,2}}{grouped})" if infer else rf"[0-9]{{1,3}}{grouped}"
    unsigned = rf"(?:{digits}(?:{dm}[0-9]+)?|{dm}[0-9]+)"
    # A declared percent or currency column also takes bare numbers ("0" for no money).
    symbol = rf"(?:[$€£¥][{_GROUP_SPACES}]?|[A-Z]{{3}}[ \u00a0]){bare}"
    return {
        "integer": rf"{sign}?{digits}",
        "decimal": rf"{sign}?{unsigned}",
        "percent": rf"{sign}?{unsigned}(?:[{_GROUP_SPACES}]?%){bare}",
        "currency": rf"(?:{sign}{symbol}(?!{sign})|{symbol}{sign}?){unsigned}",
        "multiplied": rf"(?P<pre>{sign})?{symbol}(?P<num>{sign}?{unsigned})(?P<mult>bn|[kKmMB])?",
    }


@cache
def _pattern(mark: str, kind: str, infer: bool) -> re.Pattern[str]:
    """One pattern matching a whole column joined by NUL: one C-level call checks every cell."""
    if kind == "multiplied":
        return re.compile(_forms(mark, infer, "a")[kind])
    # Atomic groups that must end at a cell boundary: once a cell has matched, a later cell's
    # failure cannot send the engine back through every way of splitting earlier digits.
    first, rest = _forms(mark, infer, "a")[kind], _forms(mark, infer, "b")[kind]
    return re.compile(rf"(?>{first}(?=\0|\Z))(?:\0(?>{rest}(?=\0|\Z)))*")


def _replacements(mark: str) -> tuple[tuple[str, str], ...]:
    """What turns matched texts into what int() and float() read: signs, separators, symbols."""
    drop = ("," if mark == "." else ".") + _GROUP_SPACES + "+%$€£¥ABCDEFGHIJKLMNOPQRSTUVWXYZ"
    minus = tuple((c, "-") for c in MINUS_SIGNS[1:])
    return (*((c, "") for c in drop), *minus, (mark, "."))


_REPLACEMENTS = {".": _replacements("."), ",": _replacements(",")}


def _plain(text: str, mark: str) -> str:
    # A few str.replace calls beat str.translate, which is slow once the text is not ASCII.
    for old, new in _REPLACEMENTS[mark]:
        if old in text:
            text = text.replace(old, new)
    return text


@dataclass(frozen=True)
class _Context:
    mark: str
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


def _fits_int64(values: list[int]) -> bool:
    return not values or (min(values) >= -(2**63) and max(values) < 2**63)


def _numbers(kind: str, cells: list[str], ctx: _Context) -> _Result:
    if not cells:
        return [], -1
    joined = "\0".join(cells)
    if kind == "integer" and _plain_digits(cells, joined, ctx.infer):
        return list(map(int, cells)), -1
    pattern = _pattern(ctx.mark, kind, ctx.infer)
    if pattern.fullmatch(joined) is None:
        if kind == "currency":  # multipliers need a look at each cell
            multiplied = _pattern(ctx.mark, "multiplied", ctx.infer)
            return _each(cells, lambda c: _currency(c, multiplied, ctx.mark))
        if ctx.infer:  # inference only needs to know that some cell failed
            return None, -1
        return None, next(i for i, c in enumerate(cells) if not pattern.fullmatch(c))
    convert: Callable[[str], Any] = int if kind == "integer" else float
    return list(map(convert, _plain(joined, ctx.mark).split("\0"))), -1


def _currency(text: str, pattern: re.Pattern[str], mark: str) -> float | None:
    m = pattern.fullmatch(text)
    if m is None or (m["pre"] and m["num"][0] in _SIGNS):
        return None
    number, mult = _plain(m["num"], mark), m["mult"]
    # Decimal keeps "1.2m" exactly 1,200,000 rather than 1.2 * 1e6 in binary.
    value = float(Decimal(number) * _MULTIPLIERS[mult]) if mult else float(number)
    return -value if m["pre"] and m["pre"] != "+" else value


def _duration(text: str, mark: str) -> int | float | None:
    m = _DURATION.fullmatch(text)
    if m is None or (m["frac"] and m["dm"] != mark):
        return None
    hours, minutes = (int(m["h"]), int(m["hm"])) if m["h"] is not None else (0, int(m["m"]))
    whole = hours * 3600 + minutes * 60 + int(m["s"])
    return whole if m["frac"] is None else float(f"{whole}.{m['frac']}")


def _durations(cells: list[str], ctx: _Context) -> _Result:
    joined = "\0".join(cells)
    if cells and _MM_SS_COLUMN.fullmatch(joined):
        parts = joined.replace(":", "\0").split("\0")
        return [
            m * 60 + s for m, s in zip(map(int, parts[::2]), map(int, parts[1::2]), strict=True)
        ], -1
    return _each(cells, lambda c: _duration(c, ctx.mark))


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


def _dates(cells: list[str], ctx: _Context) -> _Result:
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


_Parser = Callable[[list[str], _Context], _Result]
_PARSERS: dict[str, _Parser] = {k: partial(_numbers, k) for k in _NUMERIC}
_PARSERS.update(duration=_durations, date=_dates)


def _one(kind: str, text: str, decimal_mark: str = ".", formats: Sequence[str] = ()) -> Any:
    """One cell parsed as a declared column would parse it; ValueError if it does not."""
    if decimal_mark not in _REPLACEMENTS:
        raise ValueError(f"decimal_mark must be '.' or ',', not {decimal_mark!r}")
    ctx = _Context(decimal_mark, infer=False, formats=tuple(formats))
    values, _ = _PARSERS[kind]([text.strip()], ctx)
    if values is None:
        raise ValueError(f"{text!r} is not a valid {kind}")
    return values[0]


def parse_integer(text: str, decimal_mark: str = ".") -> int:
    """The integer a cell writes, e.g. ``"−1,250"`` → ``-1250``; ValueError if none."""
    return int(_one("integer", text, decimal_mark))


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


def split_markers(text: str, markers: str) -> tuple[str, str]:
    """Split a trailing run of footnote markers off a stripped text: ``("Lea Varn", "*")``."""
    text = text.strip()
    if not markers or not text or text[-1] not in markers:
        return text, ""
    end = len(text)
    # Whitespace may sit before or between the markers ("12 *†"); only trailing runs count,
    # so a leading "+" as in "+7" is never taken for a marker.
    while end and (text[end - 1] in markers or text[end - 1].isspace()):
        end -= 1
    return text[:end], "".join(text[end:].split())


@dataclass(frozen=True)
class TypedColumn:
    """One converted column: its values, the type used, and its markers when asked for."""

    name: str
    values: pa.Array
    type: ColumnType  # the type used (declared or inferred)
    markers: pa.Array | None  # string array when rule.markers_to was set, else None


def _prepare(texts: Sequence[str], markers: str) -> tuple[list[str], list[str | None] | None]:
    """Stripped cell texts with trailing markers removed, and the markers per cell if any."""
    cores = list(map(str.strip, texts))
    joined = "\0".join(cores) + "\0"
    # Parsers join a column with NUL, so a NUL inside a cell becomes U+FFFD REPLACEMENT CHARACTER.
    if joined.count("\0") != len(cores):
        cores = [c.replace("\0", "\ufffd") for c in cores]
        joined = "\0".join(cores) + "\0"
    # Whole-column checks in C first: most columns have no cell ending in a marker at all.
    if not any(m + "\0" in joined for m in markers):
        return cores, None
    hits = list(compress(range(len(cores)), map(str.endswith, cores, repeat(tuple(markers)))))
    marks: list[str | None] = [None] * len(cores)
    for i in hits:
        cores[i], marks[i] = split_markers(cores[i], markers)
    return cores, marks


def _infer(cells: list[str], mark: str) -> tuple[ColumnType, list[Any]]:
    if cells:
        ctx = _Context(mark, infer=True)
        for kind in INFER_ORDER:
            values, _ = _PARSERS[kind](cells, ctx)
            if values is not None:
                # Integers past 64 bits are identifiers; a float would silently round them.
                if kind == "integer" and not _fits_int64(values):
                    break
                return kind, values
    return "text", cells


def infer_type(texts: Sequence[str], table: TableRule) -> ColumnType:
    """The first of :data:`INFER_ORDER` every non-null cell parses as, else ``"text"``."""
    cores, _ = _prepare(texts, table.markers)
    nulls = frozenset(table.nulls)
    return _infer([c for c in cores if c not in nulls], table.decimal_mark)[0]


def _strings(values: list[Any]) -> pa.Array:
    # from_pandas=True takes pyarrow's faster conversion path for str lists (~8x here);
    # it only changes how float NaN is read, and these lists hold str and None only.
    return pa.array(values, type=pa.string(), from_pandas=True)


def _fail(name: str, text: str, kind: str, row: int, hint: str = "") -> ValueParseError:
    return ValueParseError(
        f"column {name!r}, body row {row}: cannot read {text!r} as declared type {kind!r}",
        hint=hint or 'declare type = "text" or add the text to nulls',
    )


def _booleans(
    name: str, texts: Sequence[str], rule: ColumnRule, table: TableRule, rows: Sequence[int]
) -> tuple[list[bool | None], list[str | None]]:
    true_values = frozenset(rule.true_values or DEFAULT_TRUE_VALUES)
    nulls = frozenset(table.nulls)
    values: list[bool | None] = []
    marks: list[str | None] = []
    for i, raw in enumerate(texts):
        text = raw.strip()
        # Checked before marker stripping: "*" is both a default marker and a default true.
        if text in true_values or not text:
            values.append(bool(text))
            marks.append(None)
            continue
        core, mark = split_markers(text, table.markers)
        if core in true_values or core in nulls:
            values.append(True if core in true_values else None)
            marks.append(mark or None)
            continue
        hint = 'add it to true_values, declare type = "text" or add the text to nulls'
        raise _fail(name, raw, "boolean", rows[i], hint)
    return values, marks


def convert_column(
    name: str,
    texts: Sequence[str],
    rule: ColumnRule | None,
    table: TableRule,
    row_numbers: Sequence[int] | None = None,
) -> TypedColumn:
    """Convert one column's cell texts to a typed array, by its rule or by inference.

    ``row_numbers`` gives the 1-based body row of each cell for error messages (default
    1, 2, 3, ...). Raises ValueParseError when a cell does not parse as a declared type.
    """
    rows = row_numbers if row_numbers is not None else range(1, len(texts) + 1)
    if len(rows) != len(texts):
        raise ValueError(f"column {name!r}: {len(texts)} cells but {len(rows)} row numbers")
    declared = rule.type if rule is not None else None
    want_marks = rule is not None and rule.markers_to is not None
    mark = table.decimal_mark

    if declared == "boolean":
        assert rule is not None
        flags, bool_marks = _booleans(name, texts, rule, table, rows)
        marks_array = _strings(bool_marks) if want_marks else None
        return TypedColumn(name, pa.array(flags, type=pa.bool_()), "boolean", marks_array)

    cores, marks = _prepare(texts, table.markers)
    marks_array = None
    if want_marks:
        marks_array = _strings(marks or [None] * len(cores))
    nulls = frozenset(table.nulls)
    positions: list[int] | None = None
    cells = cores
    if not nulls.isdisjoint(cores):
        positions = [i for i, c in enumerate(cores) if c not in nulls]
        cells = [cores[i] for i in positions]

    kind: ColumnType
    if declared is None and table.infer_types:
        kind, values = _infer(cells, mark)
    elif declared is None or declared == "text":
        kind, values = "text", cells
    else:
        kind = declared
        formats = rule.formats if rule is not None else ()
        parsed, bad = _PARSERS[kind](cells, _Context(mark, infer=False, formats=formats))
        hint = ""
        if parsed is not None and kind == "integer" and not _fits_int64(parsed):
            bad = next(i for i, v in enumerate(parsed) if not _fits_int64([v]))
            parsed, hint = None, 'it is past 64 bits; declare type = "decimal" or "text"'
        if parsed is None:
            at = positions[bad] if positions is not None else bad
            if kind == "date":
                hint = 'add its format to formats, declare type = "text" or add the text to nulls'
            raise _fail(name, texts[at], kind, rows[at], hint)
        values = parsed

    arrow_type = _ARROW_TYPES[kind]
    if kind == "duration" and any(type(v) is float for v in values):
        arrow_type = pa.float64()
        values = [float(v) for v in values]
    if positions is not None:
        full: list[Any] = [None] * len(cores)
        for at, value in zip(positions, values, strict=True):
            full[at] = value
        values = full
    array = _strings(values) if kind == "text" else pa.array(values, type=arrow_type)
    return TypedColumn(name, array, kind, marks_array)
