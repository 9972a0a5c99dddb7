"""Parse and format HTTP-dates (RFC 9110 §5.6.7) and turn Retry-After into a delay in seconds.

All three HTTP-date forms are accepted (IMF-fixdate, RFC 850, asctime) and always mean UTC; the
result is an aware UTC ``datetime``. Matching is case-insensitive, as RFC 9111 §4.2 asks of caches,
and only the zone ``GMT`` is accepted unless the caller asks for leniency.
"""

from __future__ import annotations

import email.utils
import logging
import math
import re
from datetime import UTC, datetime, timedelta

__all__ = [
    "format_http_date",
    "parse_http_date",
    "parse_retry_after",
]

_log = logging.getLogger(__name__)

_DAYS = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")
_LONG_DAYS = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")
_MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")

_DAY = "(?P<wd>" + "|".join(_LONG_DAYS + _DAYS) + ")"
_MON = "(?P<mon>" + "|".join(_MONTHS) + ")"
_TIME = r"(?P<h>\d\d):(?P<m>\d\d):(?P<s>\d\d)"
# RFC 9110 §5.6.7 grammar, with runs of spaces tolerated between tokens.
_IMF = re.compile(rf"{_DAY},\s+(?P<d>\d\d)\s+{_MON}\s+(?P<y>\d{{4}})\s+{_TIME}\s+GMT", re.I | re.A)
_RFC850 = re.compile(
    rf"{_DAY},\s+(?P<d>\d\d)-{_MON}-(?P<y>\d\d(?:\d\d)?)\s+{_TIME}\s+GMT", re.I | re.A
)
_ASCTIME = re.compile(
    rf"{_DAY}\s+{_MON}\s+(?P<d>\d{{1,2}})\s+{_TIME}\s+(?P<y>\d{{4}})", re.I | re.A
)
_DELAY_SECONDS = re.compile(r"[0-9]+", re.A)


def _as_utc(moment: datetime) -> datetime:
    """Return ``moment`` in UTC, reading a naive value as UTC (RFC 9111 §4.2: never local time)."""
    if moment.tzinfo is None:
        return moment.replace(tzinfo=UTC)
    return moment.astimezone(UTC)


def _full_year(match: re.Match[str], now: datetime) -> int:
    """Apply RFC 9110 §5.6.7: a two-digit year more than 50 years ahead is the latest past one."""
    month = _month_number(match["mon"])
    rest = (month, int(match["d"]), int(match["h"]), int(match["m"]), int(match["s"]))
    # Compare field tuples, not datetimes, so that 29 Feb in a shifted year cannot fail.
    limit = (now.year + 50, now.month, now.day, now.hour, now.minute, now.second)
    year = now.year - now.year % 100 + int(match["y"])
    if (year, *rest) > limit:
        year -= 100
    elif (year + 100, *rest) <= limit:
        year += 100
    return year


def _month_number(name: str) -> int:
    """Return 1-12 for a three-letter month name, matched case-insensitively."""
    return [m.lower() for m in _MONTHS].index(name.lower()) + 1


def _build(match: re.Match[str], year: int, *, check_weekday: bool) -> datetime | None:
    """Assemble the matched fields into an aware UTC datetime, or None when out of range."""
    month = _month_number(match["mon"])
    second = int(match["s"])
    # time-of-day allows a leap second (:60); datetime cannot hold it, so roll into the next minute.
    leap = second == 60
    try:
        moment = datetime(
            year,
            month,
            int(match["d"]),
            int(match["h"]),
            int(match["m"]),
            59 if leap else second,
            tzinfo=UTC,
        )
    except (ValueError, OverflowError):
        return None
    if check_weekday:
        named = match["wd"][:3].lower()
        if named != _DAYS[moment.weekday()].lower():
            # common practice, no published source: a wrong weekday hints at a sloppy server.
            _log.warning("HTTP-date %r names the wrong weekday; using the date", match[0])
    return moment + timedelta(seconds=1) if leap else moment


def parse_http_date(
    value: str, *, now: datetime | None = None, gmt_only: bool = True
) -> datetime | None:
    """Parse an HTTP-date in any of its three forms to an aware UTC datetime, or None if invalid.

    ``now`` anchors the RFC 9110 §5.6.7 fifty-year rule for two-digit years (default: the clock).
    With ``gmt_only=False`` dates in other zones (``+0100``, ``EST``) are also read and converted
    to UTC; the default rejects them, as RFC 9111 §4.2 asks for expiry calculations.
    """
    text = value.strip()
    anchor = _as_utc(now) if now is not None else datetime.now(UTC)
    if match := _IMF.fullmatch(text):
        return _build(match, int(match["y"]), check_weekday=True)
    if match := _RFC850.fullmatch(text):
        year = _full_year(match, anchor) if len(match["y"]) == 2 else int(match["y"])
        return _build(match, year, check_weekday=False)
    if match := _ASCTIME.fullmatch(text):
        return _build(match, int(match["y"]), check_weekday=False)
    if gmt_only:
        return None
    try:
        parsed = email.utils.parsedate_to_datetime(text)
    except (ValueError, OverflowError, TypeError, IndexError):
        # ValueError for garbage; OverflowError leaks from old releases for huge years.
        return None
    return _as_utc(parsed)


def format_http_date(moment: datetime) -> str:
    """Format an aware datetime as an IMF-fixdate, e.g. ``Sun, 06 Nov 1994 08:49:37 GMT``."""
    if moment.tzinfo is None:
        raise ValueError("format_http_date needs an aware datetime; a naive one has no zone")
    utc = moment.astimezone(UTC)
    return (
        f"{_DAYS[utc.weekday()]}, {utc.day:02d} {_MONTHS[utc.month - 1]} {utc.year:04d} "
        f"{utc.hour:02d}:{utc.minute:02d}:{utc.second:02d} GMT"
    )


def parse_retry_after(
    value: str, *, response_date: datetime | None, received_at: datetime, cap: float
) -> float | None:
    """Turn a Retry-After value into a delay in seconds, capped at ``cap``; None when invalid.

    ``delay-seconds`` is ``1*DIGIT`` (RFC 9110 §10.2.3), so ``1.5``, ``-1`` and an empty value are
    invalid. A date is measured from the response's Date (falling back to ``received_at``) so the
    local clock's skew does not matter; a date in the past means no wait.
    """
    text = value.strip()
    if _DELAY_SECONDS.fullmatch(text):
        seconds = int(text)
        if seconds >= cap:
            return float(cap)
        try:
            return float(seconds)
        except OverflowError:  # only reachable with an infinite cap
            return math.inf
    base = _as_utc(response_date if response_date is not None else received_at)
    retry_at = parse_http_date(text, now=base)
    if retry_at is None:
        return None
    delay = max(0.0, (retry_at - base).total_seconds())
    return min(delay, float(cap))
