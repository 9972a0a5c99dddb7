"""Whole-column parsing of integer, decimal and percent columns with pyarrow.compute.

``parsers.py`` is the reference: Python's ``re``, ``int()`` and ``float()`` over the column.
:func:`bulk_column` reads a column in a few Arrow calls (one RE2 match over the cells joined by
NUL, the parsers' own replacements, a split, a cast) when the result is provably the same, and
returns None otherwise, so that the caller parses the column cell by cell as before. It never
raises for bad input: whatever would be an error goes back to the parsers, which name the cell.

Why the results agree:

- Each form here is the parsers' form for the same kind and mode (declared or inferred), with
  the one backreference (the same group separator throughout a number) spelled out as one
  alternative per separator, since RE2 has no backreferences. Every non-ASCII character is
  written ``\\x{…}`` and digits are ``[0-9]``: no ``\\d`` or ``\\s``, whose meanings differ
  between RE2 and Python. So a text matches here only if it matches there.
- A matched text becomes ``-?[0-9]+`` (integers) or ``-?[0-9]*.?[0-9]+`` (the others) through
  the parsers' ``plain_number``, and Arrow's cast reads those as ``int()`` and ``float()`` do:
  an integer exactly, or an error past 64 bits (the column then goes to the parsers, which
  refuse it with their own message), and a float correctly rounded, as both are.
- Inference takes the first of integer, decimal and percent that every cell matches, as
  ``INFER_ORDER`` does; but decimal only when some cell holds the decimal mark, which no integer
  holds, and percent only when some cell holds "%", which no integer or decimal holds. So the
  parsers would also have refused the kinds before it, even for a text the forms here refuse.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from functools import cache

import pyarrow as pa

from harvester.extract.arrays import one_text, split_joined
from harvester.extract.parsers import GROUP_SPACES, MINUS_SIGNS, plain_number
from harvester.extract.rules import ColumnType

__all__ = ["BULK_KINDS", "bulk_column", "column_pattern", "per_cell_only"]

BULK_KINDS: tuple[ColumnType, ...] = ("integer", "decimal", "percent")
_ARROW_TYPES = {"integer": pa.int64(), "decimal": pa.float64(), "percent": pa.float64()}
_enabled = True  # switched off by per_cell_only()


def _one_of(characters: str) -> str:
    """An RE2 character class naming each code point, so that none needs escaping."""
    return "[" + "".join(f"\\x{{{ord(c):x}}}" for c in characters) + "]"


def _cell_form(kind: str, decimal_mark: str, infer: bool) -> str:
    """One cell of ``kind`` in RE2 syntax, as ``parsers._forms`` writes it for Python's ``re``."""
    separators = ("," if decimal_mark == "." else ".") + GROUP_SPACES
    groups = "|".join(f"(?:{_one_of(s)}[0-9]{{3}})+" for s in separators)
    grouped = f"(?:{groups}|[0-9]*)"
    # Inference refuses leading zeros ("007" is an identifier), as the parsers do.
    digits = f"(?:0|[1-9][0-9]{{0,2}}{grouped})" if infer else f"[0-9]{{1,3}}{grouped}"
    sign, mark = _one_of("+" + MINUS_SIGNS) + "?", _one_of(decimal_mark)
    unsigned = f"(?:{digits}(?:{mark}[0-9]+)?|{mark}[0-9]+)"
    if kind == "integer":
        return sign + digits
    if kind == "decimal":
        return sign + unsigned
    # A declared percent column also takes bare numbers.
    return f"{sign}{unsigned}(?:{_one_of(GROUP_SPACES)}?%){'' if infer else '?'}"


@cache
def column_pattern(kind: str, decimal_mark: str, infer: bool) -> str:
    """An RE2 pattern for a whole column of ``kind`` joined by NUL (``$`` is the text's end)."""
    cell = _cell_form(kind, decimal_mark, infer)
    return f"^(?:{cell})(?:\\x00(?:{cell}))*$"


@contextmanager
def per_cell_only() -> Iterator[None]:
    """Parse every column cell by cell inside the block (not thread-aware: tests, benchmarks)."""
    global _enabled
    before, _enabled = _enabled, False
    try:
        yield
    finally:
        _enabled = before


def bulk_column(
    declared: ColumnType | None, cells: Sequence[str], decimal_mark: str
) -> tuple[ColumnType, pa.Array] | None:
    """Non-null cells parsed as ``declared`` (None: inferred), or None to parse them per cell.

    ``cells`` are stripped, without markers and null texts, as ``values.convert_column`` passes
    them to the parsers; none holds NUL.
    """
    if not _enabled or not cells or (declared is not None and declared not in BULK_KINDS):
        return None
    joined = "\0".join(cells)
    whole = one_text(joined)
    if whole is None:
        return None
    if declared is not None:
        if not _matches(whole, declared, decimal_mark, infer=False):
            return None
        return _typed(declared, joined, len(cells), decimal_mark)
    if _matches(whole, "integer", decimal_mark, infer=True):
        return _typed("integer", joined, len(cells), decimal_mark)
    later: tuple[tuple[ColumnType, str], ...] = (("decimal", decimal_mark), ("percent", "%"))
    for kind, proof in later:
        if proof in joined and _matches(whole, kind, decimal_mark, infer=True):
            return _typed(kind, joined, len(cells), decimal_mark)
    return None


def _matches(whole: pa.Array, kind: str, decimal_mark: str, *, infer: bool) -> bool:
    import pyarrow.compute as pc

    pattern = column_pattern(kind, decimal_mark, infer)
    return bool(pc.match_substring_regex(whole, pattern)[0].as_py())


def _typed(
    kind: ColumnType, joined: str, count: int, decimal_mark: str
) -> tuple[ColumnType, pa.Array] | None:
    """The matched column cast to its Arrow type; None if Arrow refuses (past 64 bits)."""
    import pyarrow.compute as pc

    texts = split_joined(plain_number(joined, decimal_mark), count)
    try:
        return kind, pc.cast(texts, _ARROW_TYPES[kind])
    except pa.ArrowInvalid:
        return None
