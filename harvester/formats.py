"""Values written for other programs, in one place: cells as JSON, and tab-separated fields.

``json_value`` is what every JSON and CSV output of a table writes. RFC 8259 §6 has no number
for NaN or the infinities, so they become ``null`` everywhere (a cell that is not a number says
nothing more than a missing one). Dates and times are ISO 8601 text (datetimes with an offset as
RFC 3339 in UTC), durations seconds, Decimal exact text, bytes base64, lists and mappings element
by element. ``tsv_field`` escapes what would split a tab-separated line.
"""

from __future__ import annotations

import base64
import datetime as dt
import math
from collections.abc import Mapping
from decimal import Decimal

from harvester.timestamps import rfc3339

__all__ = ["json_value", "tsv_field"]


def json_value(value: object) -> object:
    """A cell (as pyarrow's ``to_pylist`` gives it) as a plain JSON value."""
    if value is None or isinstance(value, bool | int | str):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dt.datetime):
        return rfc3339(value) if value.utcoffset() is not None else value.isoformat()
    if isinstance(value, dt.date | dt.time):
        return value.isoformat()
    if isinstance(value, dt.timedelta):
        return value.total_seconds()
    if isinstance(value, Decimal):
        return str(value) if value.is_finite() else None
    if isinstance(value, bytes):
        return base64.b64encode(value).decode("ascii")
    if isinstance(value, Mapping):
        return {str(k): json_value(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [json_value(item) for item in value]
    return str(value)


_ESCAPES = {"\t": "\\t", "\n": "\\n", "\r": "\\r", "\\": "\\\\"}


def tsv_field(text: object) -> str:
    """``text`` as one field of a tab-separated line: no tab or line break can split the line.

    Tab, line feed, carriage return and backslash are written as ``\\t``, ``\\n``, ``\\r`` and
    ``\\\\``; other control characters (C0, DEL, C1) as ``\\xNN``, so a value from a site or a
    command line can never forge a line of output. IANA's text/tab-separated-values registration
    only forbids tabs inside fields; these escapes are common practice, no published source.
    """
    shown = str(text)
    if shown.isprintable() and "\\" not in shown:
        return shown
    parts = []
    for char in shown:
        if char in _ESCAPES:
            parts.append(_ESCAPES[char])
        elif ord(char) < 0x20 or 0x7F <= ord(char) <= 0x9F:
            parts.append(f"\\x{ord(char):02x}")
        else:
            parts.append(char)
    return "".join(parts)
