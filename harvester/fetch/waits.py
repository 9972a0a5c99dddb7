"""Long waits made visible, and the one cap on any single wait.

Every wait before a request (Crawl-delay, Retry-After, back-off, the previous run's pace) is at
most ``FetchLimits.max_wait`` seconds; a site that asks for more is skipped for the run with a
message that says how to accept it. A wait longer than ``ANNOUNCE_AFTER`` seconds is announced
once through a ``WaitAnnouncer`` callback; the default one logs a warning on the
``harvester.fetch`` logger, which reaches stderr even when nothing configured logging.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Callable
from dataclasses import dataclass

__all__ = [
    "ANNOUNCE_AFTER",
    "WaitAnnouncer",
    "WaitNotice",
    "cap_hint",
    "log_wait",
    "seconds_text",
]

ANNOUNCE_AFTER = 5.0  # seconds; shorter waits are the ordinary pace and stay quiet

_log = logging.getLogger("harvester.fetch")


@dataclass(frozen=True)
class WaitNotice:
    """One long wait before a request: the host (a URL origin), how long, and why."""

    host: str
    seconds: float
    reason: str

    def line(self) -> str:
        """The notice as one line, e.g. ``waiting 30 s for http://host: Retry-After ...``."""
        return f"waiting {self.seconds:.0f} s for {self.host}: {self.reason}"


WaitAnnouncer = Callable[[WaitNotice], None]


def log_wait(notice: WaitNotice) -> None:
    """The default announcer: one warning line on the ``harvester.fetch`` logger."""
    _log.warning("%s", notice.line())


def seconds_text(seconds: float) -> str:
    """A wait in words for messages: ``86400 s``, or ``endless`` for infinity."""
    if math.isinf(seconds):
        return "an endless wait"
    return f"{int(seconds)} s" if float(seconds).is_integer() else f"{seconds:g} s"


def cap_hint(seconds: float) -> str:
    """How to accept a wait over the cap: raise ``max_wait`` to it (impossible when endless)."""
    if math.isinf(seconds):
        return "no cap accepts an endless wait; leave this site out of the recipe"
    return f"to accept it, raise the wait cap (max_wait) to at least {math.ceil(seconds)} s"
