"""Pause Python's cyclic garbage collector while extractions run, safely across threads.

Why pause at all: extracting a large table makes tens of thousands of lists, tuples and element
handles that all stay alive until the extraction ends. The cyclic collector runs whenever enough
new objects have piled up, so it walks those live objects again and again (and a full
collection walks every object in the process) without finding garbage among them. That costs
about a fifth of the extraction's time, on the benchmark page and on one ten times its size;
the numbers and the command are in BENCHMARKS.md ("Extraction": the garbage collector).

Why a guard and not ``gc.disable()`` / ``gc.enable()`` around the work: the collector's switch
is one flag for the whole process. Two extractions in two threads that each switched it would
turn it back on while the other still runs, or turn it on when the caller had turned it off.
:class:`CollectorPause` counts the extractions inside it under a lock instead: the first to
enter notes whether the collector was on and switches it off; the last to leave switches it
back on, and only if it was on. Nested and concurrent extractions, and ones that raise, never
leave the collector off behind them, and none turns it on under another.

What it cannot help: while any extraction runs, the collector is paused for every thread in the
process, since that is the only switch Python has. Reference counting still frees everything
that is not part of a cycle, and cycles made in the meantime are collected once the collector
runs again. Code that itself calls ``gc.enable()`` or ``gc.disable()`` while an extraction runs
in another thread is not coordinated with.
"""

from __future__ import annotations

import gc
import threading
from types import TracebackType

__all__ = ["EXTRACTION_PAUSE", "CollectorPause"]


class CollectorPause:
    """A context manager that keeps the cyclic collector off while any of its blocks runs."""

    def __init__(self) -> None:
        self._lock = threading.Lock()
        self._running = 0  # blocks entered and not yet left, in all threads
        self._was_enabled = False  # the collector's state when the first block entered

    def __enter__(self) -> None:
        with self._lock:
            if self._running == 0:
                self._was_enabled = gc.isenabled()
                gc.disable()
            self._running += 1

    def __exit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        traceback: TracebackType | None,
    ) -> None:
        with self._lock:
            self._running -= 1
            if self._running == 0 and self._was_enabled:
                gc.enable()


# The one pause every extraction shares: two separate guards would each switch the same flag.
EXTRACTION_PAUSE = CollectorPause()
