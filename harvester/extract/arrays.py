"""Arrow arrays from Python values, built from buffers so that pyarrow never imports pandas.

``pa.array(values)`` asks pyarrow's pandas shim whether ``values`` is a pandas object, and the
first such question imports pandas (0.2–0.3 s) even for a plain list; so does ``pa.scalar``.
:func:`from_values` gives the array ``pa.array(values, type=...)`` gives for the types typed
columns use — string, int64, float64, bool and date32, with None for null — from
``array.array`` buffers and pyarrow.compute kernels, which do not ask (as long as no Python
value is passed to a kernel: that goes through ``pa.scalar``).
"""

from __future__ import annotations

from array import array
from collections.abc import Callable, Sequence
from datetime import date
from itertools import repeat
from operator import sub
from typing import Any

import pyarrow as pa

__all__ = ["from_values", "one_text", "split_joined", "spread", "string_array"]

_EPOCH_ORDINAL = date(1970, 1, 1).toordinal()  # date32 counts days from the UNIX epoch
_MAX_OFFSET = 2**31 - 1  # a string array's int32 offsets


def one_text(text: str) -> pa.Array | None:
    """A string array holding ``text`` alone, or None past 2 GiB (its offsets are 32 bits)."""
    data = text.encode("utf-8")
    if len(data) > _MAX_OFFSET:
        return None
    offsets = pa.py_buffer(array("i", [0, len(data)]))
    return pa.Array.from_buffers(pa.string(), 1, [None, offsets, pa.py_buffer(data)])


def split_joined(joined: str, count: int) -> pa.Array:
    """The string array of ``count`` texts joined by NUL (which no text may hold)."""
    import pyarrow.compute as pc

    if count == 0:
        return pa.nulls(0, pa.string())
    whole = one_text(joined)
    if whole is None:  # one array cannot hold so much text; pyarrow would chunk it
        return pa.array(joined.split("\0"), type=pa.string())
    parts: pa.Array = pc.split_pattern(whole, "\0").flatten()
    return parts


def string_array(values: Sequence[str]) -> pa.Array:
    """``pa.array(values, type=pa.string())`` for texts; one holding NUL costs a pandas import."""
    joined = "\0".join(values)
    if joined.count("\0") != max(len(values) - 1, 0):
        return pa.array(values, type=pa.string())  # NUL inside a text: split cannot tell
    return split_joined(joined, len(values))


def _numbers(code: str, arrow_type: pa.DataType) -> Callable[[Sequence[Any]], pa.Array]:
    def build(values: Sequence[Any]) -> pa.Array:
        buffer = pa.py_buffer(array(code, values))
        return pa.Array.from_buffers(arrow_type, len(values), [None, buffer])

    return build


_int64, _float64 = _numbers("q", pa.int64()), _numbers("d", pa.float64())


def _bool(values: Sequence[int]) -> pa.Array:
    """Booleans from 0/1 (or False/True) values, one byte each."""
    import pyarrow.compute as pc

    ones = pa.Array.from_buffers(pa.uint8(), len(values), [None, pa.py_buffer(bytes(values))])
    return pc.cast(ones, pa.bool_())


def _date32(values: Sequence[date]) -> pa.Array:
    # A Python number handed to a pyarrow.compute kernel becomes pa.scalar, so the days are
    # counted here.
    days = array("i", map(sub, map(date.toordinal, values), repeat(_EPOCH_ORDINAL)))
    return pa.Array.from_buffers(pa.date32(), len(values), [None, pa.py_buffer(days)])


_BUILDERS: dict[pa.DataType, tuple[Callable[[Sequence[Any]], pa.Array], Any]] = {
    pa.string(): (string_array, ""),
    pa.int64(): (_int64, 0),
    pa.float64(): (_float64, 0.0),
    pa.bool_(): (_bool, False),
    pa.date32(): (_date32, date(1970, 1, 1)),
}


def from_values(values: Sequence[Any], arrow_type: pa.DataType) -> pa.Array:
    """``pa.array(values, type=arrow_type)`` for str, int, float, bool or date values and None.

    Raises OverflowError for an int past 64 bits, as pyarrow does.
    """
    import pyarrow.compute as pc

    build, filler = _BUILDERS[arrow_type]
    if None not in values:
        return build(values)
    present = [value is not None for value in values]
    dense = build([filler if value is None else value for value in values])
    return pc.if_else(_bool(present), dense, pa.nulls(len(values), arrow_type))


def spread(dense: pa.Array, positions: Sequence[int], length: int) -> pa.Array:
    """An array of ``length``: ``dense``'s values at ``positions`` (ascending), null elsewhere."""
    import pyarrow.compute as pc

    present = bytearray(length)
    for at in positions:
        present[at] = 1
    mask = _bool(present)
    return pc.replace_with_mask(pa.nulls(length, dense.type), mask, dense)
