"""Time as harvester writes it: RFC 3339 in UTC with a ``Z`` and microseconds, in one place.

Provenance columns, Parquet footers, run reports, lock files and every JSON output use
``rfc3339``; HTTP dates (RFC 9110 §5.6.7) are converted at the fetcher's edge, not here.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Literal

__all__ = ["now_rfc3339", "parse_rfc3339", "rfc3339"]


def rfc3339(
    moment: datetime, *, timespec: Literal["microseconds", "seconds"] = "microseconds"
) -> str:
    """An aware datetime as RFC 3339 UTC with a ``Z`` and microseconds (RFC 3339 §5.6).

    ``timespec="seconds"`` drops the fraction, for times that have none (a Memento-Datetime
    is an HTTP-date, to the second). A naive datetime is refused: guessing its zone would
    shift the instant silently.
    """
    if moment.utcoffset() is None:
        raise ValueError(f"{moment.isoformat()} has no time zone; pass an aware datetime")
    text = moment.astimezone(UTC).isoformat(timespec=timespec)
    return text.replace("+00:00", "Z")


def now_rfc3339() -> str:
    """The current time as ``rfc3339`` text."""
    return rfc3339(datetime.now(UTC))


def parse_rfc3339(text: str) -> datetime:
    """An aware UTC datetime from RFC 3339 text; ValueError when it is not one with an offset.

    Lowercase ``t`` and ``z`` are accepted, as RFC 3339 §5.6 allows (Python 3.11's
    ``fromisoformat`` alone refuses them).
    """
    moment = datetime.fromisoformat(text.upper())
    if moment.utcoffset() is None:
        raise ValueError("it has no UTC offset")
    return moment.astimezone(UTC)
