"""Choose which Memento of a TimeMap to fetch for a target datetime, and read time windows.

RFC 7089 leaves selection to the server's "internal algorithm" (§3.1); when harvester picks from
a TimeMap itself it applies one of two rules (REFERENCES §4.5, a project rule):

- ``closest``: smallest distance to the target; on an exact tie the earlier Memento; equal
  datetimes in document order. A target before the first Memento gets the first, one after the
  last gets the last, as RFC 7089 §4.5.3 asks of TimeGates.
- ``before``: only Mementos at or before the target, latest first; equal datetimes in document
  order.

``rank_mementos`` returns every eligible Memento, best first, because the best may answer with a
redirect or an error and the caller then tries the next.

A window such as ``120d`` bounds how far from the target a Memento may be. Units are ``w``
(weeks), ``d`` (days) and ``h`` (hours). ``m`` is refused because it reads as minutes to some
people and months to others, and a month has no fixed length.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from datetime import datetime, timedelta
from typing import Literal

from harvester.fetch.timemap import Memento

__all__ = ["CHOICE_RULES", "ChoiceRule", "describe_window", "parse_window", "rank_mementos"]

ChoiceRule = Literal["closest", "before"]
CHOICE_RULES: tuple[str, ...] = ("closest", "before")

_UNITS = {"w": timedelta(weeks=1), "d": timedelta(days=1), "h": timedelta(hours=1)}
_WINDOW = re.compile(r"([0-9]+)([a-z]+)", re.ASCII)


def rank_mementos(
    mementos: Sequence[Memento],
    target: datetime,
    *,
    rule: ChoiceRule = "closest",
    within: timedelta | None = None,
) -> list[Memento]:
    """Order the Mementos to try for ``target``, best first, by ``rule``.

    ``within`` drops every Memento farther than it from the target; one exactly ``within`` away is
    kept. ``target`` must be aware. An unknown rule or a negative window raises ValueError.
    """
    if target.utcoffset() is None:
        raise ValueError("the target datetime has no time zone; pass an aware datetime")
    if rule not in CHOICE_RULES:
        raise ValueError(f"unknown choice rule {rule!r}; use one of {', '.join(CHOICE_RULES)}")
    if within is not None and within < timedelta(0):
        raise ValueError(f"the window {within} is negative; give a positive one")
    # The index breaks the last tie, so Mementos with equal positions keep the caller's order.
    candidates = [
        (memento, index)
        for index, memento in enumerate(mementos)
        if within is None or abs(memento.datetime - target) <= within
    ]
    if rule == "before":
        eligible = [(m, i) for m, i in candidates if m.datetime <= target]
        eligible.sort(key=lambda pair: (target - pair[0].datetime, pair[0].position, pair[1]))
    else:
        eligible = sorted(
            candidates,
            key=lambda pair: (
                abs(pair[0].datetime - target),
                pair[0].datetime,  # on an exact tie the earlier one (REFERENCES §4.5 step 3)
                pair[0].position,
                pair[1],
            ),
        )
    return [memento for memento, _ in eligible]


def parse_window(text: str) -> timedelta:
    """Read a window such as ``120d``, ``36h`` or ``2w`` (a whole number and one unit).

    Raises ValueError naming the accepted form for anything else, including zero and negatives.
    """
    written = text.strip().lower()
    match = _WINDOW.fullmatch(written)
    if written.startswith("-"):
        raise ValueError(f"window {text!r} is negative; give a positive length such as 120d")
    if match is None:
        raise ValueError(
            f"window {text!r} is not a whole number followed by w, d or h (e.g. 2w, 120d, 36h)"
        )
    count, unit = int(match[1]), match[2]
    if unit == "m":
        raise ValueError(
            f"window {text!r}: 'm' could mean minutes or months; write hours (h) or days (d)"
        )
    if unit not in _UNITS:
        raise ValueError(f"window {text!r} has unknown unit {unit!r}; use w, d or h")
    if count == 0:
        raise ValueError(f"window {text!r} is zero; give a positive length such as 120d")
    try:
        return count * _UNITS[unit]
    except OverflowError:
        raise ValueError(f"window {text!r} is too long to represent") from None


def describe_window(window: timedelta) -> str:
    """Write a window in the short form ``parse_window`` reads, using the largest exact unit.

    ``timedelta(days=14)`` gives ``2w``, ``timedelta(days=120)`` gives ``120d``. A window that
    is not positive, or not a whole number of hours, raises ValueError.
    """
    if window <= timedelta(0):
        raise ValueError(f"the window {window} is not positive")
    for unit, length in _UNITS.items():
        if window % length == timedelta(0):
            return f"{window // length}{unit}"
    raise ValueError(f"the window {window} is not a whole number of hours")
