"""A run's progress while it runs: one row per host, with result lines kept whole above it.

A command opens a ``RunProgress`` around a run and feeds it events: ``page_done`` when a
planned page is finished (whatever its outcome), ``host_used`` when a request goes to a host,
``waiting`` when a wait is in force on a host, and ``line`` for each result line it prints.

Three ways of showing it, chosen once in the constructor:

- **On a terminal**, a live display (rich) redrawn at most four times a second, transient so
  it leaves nothing behind when the run ends. One row per host, its origin (scheme://host[:port],
  default ports dropped): pages done of planned, requests sent, the wait in force
  ("next request in 0.4 s", "Retry-After: 30 s", counting down) and the time left for that
  host, estimated as the run's elapsed time per page done times the pages still to do ("–"
  until one is done). A host with no planned pages, such as a web archive, gets a row counting
  its requests. Result lines are printed through the display, so they appear above it, whole:
  no markup, highlighting or emoji codes are read into them and they are never wrapped by us.
- **Elsewhere** (a pipe, a file, a cron log, a terminal whose TERM is ``dumb``), plain text
  with no control characters at all: each result line as given, plus at most one progress
  line every ``plain_every`` seconds (10 by default; None for none), e.g.
  ``progress: 12/40 pages; http://127.0.0.1:8650 12/40, next request in 0.4 s``. There is no
  timer thread here: a progress line is written with the next event once the time has come,
  so a log never gains lines while the run is silent.
- **Quiet**: the result lines given to ``line`` and nothing else.
"""

from __future__ import annotations

import math
import os
import sys
import threading
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from types import TracebackType
from typing import TextIO
from urllib.parse import urlsplit

from rich.console import Console, ConsoleRenderable, Group, RenderableType
from rich.live import Live
from rich.table import Table
from rich.text import Text

from harvester.fetch.urls import DEFAULT_PORTS

__all__ = ["RunProgress"]

REFRESHES_PER_SECOND = 4  # often enough to watch a countdown, rare enough to cost nothing
PACE = "pace"  # the reason for the ordinary wait between two requests to a host
NO_ESTIMATE = "–"


@dataclass
class _Host:
    """What is known of one host during the run."""

    origin: str
    planned: int = 0
    done: int = 0
    requests: int = 0
    wait_seconds: float = 0.0
    wait_reason: str = ""
    wait_since: float = 0.0

    def clear_wait(self) -> None:
        self.wait_seconds, self.wait_reason = 0.0, ""


class _CurrentLive(Live):
    """A live display drawn as it is now under every printed line, not as at the last refresh."""

    def process_renderables(self, renderables: list[ConsoleRenderable]) -> list[ConsoleRenderable]:
        with self._lock:
            self._live_render.set_renderable(self.renderable)
        return super().process_renderables(renderables)


def _dumb(environment: Mapping[str, str]) -> bool:
    """Whether the terminal says it cannot move the cursor, which a live display needs."""
    return environment.get("TERM", "").lower() in ("dumb", "unknown")


def _origin(url: str) -> str:
    """A URL's origin, scheme://host[:port], lower-cased, with the scheme's default port dropped."""
    parts = urlsplit(url)
    scheme = parts.scheme.lower()
    name = (parts.hostname or "").lower()
    if ":" in name:  # an IPv6 address keeps its brackets in a URL
        name = f"[{name}]"
    port = parts.port
    if port is None or port == DEFAULT_PORTS.get(scheme):
        return f"{scheme}://{name}"
    return f"{scheme}://{name}:{port}"


def _seconds(seconds: float) -> str:
    """A duration for a glance: ``0.4 s``, ``12 s``, ``3 min 05 s``, ``2 h 10 min``, ``endless``."""
    if math.isinf(seconds):
        return "endless"
    if seconds < 10:
        return f"{seconds:.1f} s"
    whole = round(seconds)
    if whole < 60:
        return f"{whole} s"
    if whole < 3600:
        return f"{whole // 60} min {whole % 60:02d} s"
    return f"{whole // 3600} h {whole % 3600 // 60:02d} min"


def _terminal_width(stream: TextIO) -> int | None:
    """The width of the terminal behind this stream; rich would measure the standard streams."""
    try:
        columns = os.get_terminal_size(stream.fileno()).columns
    except (AttributeError, ValueError, OSError):
        return None
    return columns or None  # a fresh pseudo-terminal reports 0 columns


class RunProgress:
    """Shows how far a run is, per host, on a terminal or as plain lines; a context manager."""

    def __init__(
        self,
        pages: Sequence[str],
        *,
        stream: TextIO,
        quiet: bool = False,
        terminal: bool | None = None,
        clock: Callable[[], float] = time.monotonic,
        plain_every: float | None = 10.0,
    ) -> None:
        self._stream = stream
        self._quiet = quiet
        self._clock = clock
        self._plain_every = plain_every
        self._lock = threading.Lock()  # the display refreshes from its own thread
        self._hosts: dict[str, _Host] = {}
        self._planned = len(pages)
        for page in pages:
            self._host(page).planned += 1
        self._started = self._last_plain = clock()
        is_terminal = stream.isatty() if terminal is None else terminal
        self._console: Console | None = None
        self._live: Live | None = None
        if is_terminal and not quiet and not _dumb(os.environ):
            self._console = Console(
                file=stream,
                force_terminal=True,
                width=_terminal_width(stream),
                markup=False,
                emoji=False,
                highlight=False,
            )
            self._live = _CurrentLive(
                console=self._console,
                get_renderable=self._render,
                refresh_per_second=REFRESHES_PER_SECOND,
                transient=True,
                # Only the stream we draw on may be taken over: sending stdout's writes to
                # stderr (or back) would break a pipe the caller set up.
                redirect_stdout=stream is sys.stdout,
                redirect_stderr=stream is sys.stderr,
            )

    @property
    def live(self) -> bool:
        """Whether a live display is drawn (a terminal, not quiet): waits show there."""
        return self._live is not None

    def __enter__(self) -> RunProgress:
        self._started = self._last_plain = self._clock()
        if self._live is not None:
            self._live.start(refresh=True)
        return self

    def __exit__(
        self,
        kind: type[BaseException] | None,
        error: BaseException | None,
        trace: TracebackType | None,
    ) -> None:
        if self._live is not None:
            self._live.stop()

    def line(self, text: str) -> None:
        """Print one result line: above the live display on a terminal, as is elsewhere."""
        if self._console is not None:
            self._console.print(text, soft_wrap=True)
        else:
            self._stream.write(text + "\n")
            self._stream.flush()
        self._maybe_plain()

    def page_done(self, url: str) -> None:
        """Count one planned page as finished, whatever its outcome; its host's wait is over."""
        with self._lock:
            host = self._host(url)
            host.done += 1
            host.clear_wait()
        self._maybe_plain()

    def host_used(self, url: str) -> None:
        """Count one request to this URL's host; the wait that was in force on it is over."""
        with self._lock:
            host = self._host(url)
            host.requests += 1
            host.clear_wait()
        self._maybe_plain()

    def waiting(self, url_or_host: str, seconds: float, reason: str) -> None:
        """Show the wait now in force on a host: reason ``"pace"``, or e.g. ``"Retry-After"``.

        ``url_or_host`` is a URL, an origin, or a bare ``host[:port]`` of a host already shown.
        """
        with self._lock:
            host = self._host(url_or_host)
            host.wait_seconds, host.wait_reason = seconds, reason
            host.wait_since = self._clock()
        self._maybe_plain()

    def _host(self, url_or_host: str) -> _Host:
        """The row for a URL's origin, made on first sight."""
        if "://" in url_or_host:
            key = _origin(url_or_host)
        else:
            found = [origin for origin in self._hosts if origin.split("://", 1)[1] == url_or_host]
            key = found[0] if found else url_or_host.lower()
        if key not in self._hosts:
            self._hosts[key] = _Host(key)
        return self._hosts[key]

    def _wait_text(self, host: _Host, now: float) -> str:
        left = host.wait_seconds - (now - host.wait_since)
        if not host.wait_reason or left <= 0:
            return ""
        if host.wait_reason == PACE:
            return f"next request in {_seconds(left)}"
        return f"{host.wait_reason}: {_seconds(left)}"

    def _time_left(self, host: _Host, now: float) -> str:
        if not host.planned:
            return ""
        if not host.done:
            return NO_ESTIMATE
        if host.done >= host.planned:
            return "done"
        per_page = (now - self._started) / host.done
        return f"about {_seconds(per_page * (host.planned - host.done))}"

    def _pages_done(self) -> int:
        return sum(min(host.done, host.planned) for host in self._hosts.values())

    def _render(self) -> RenderableType:
        """The live display: a summary line and one row per host."""
        now = self._clock()
        table = Table(box=None, padding=(0, 2, 0, 0), header_style="bold")
        for name in ("host", "pages", "requests", "wait", "time left"):
            table.add_column(name, no_wrap=True, overflow="ellipsis")
        with self._lock:
            summary = f"{self._pages_done()}/{self._planned} pages"
            for host in self._hosts.values():
                table.add_row(
                    Text(host.origin),
                    Text(f"{host.done}/{host.planned}" if host.planned else ""),
                    Text(str(host.requests)),
                    Text(self._wait_text(host, now)),
                    Text(self._time_left(host, now)),
                )
        return Group(Text(summary, style="bold"), table)

    def _maybe_plain(self) -> None:
        """Write a plain progress line when one is due (never on a terminal or when quiet)."""
        if self._console is not None or self._quiet or self._plain_every is None:
            return
        now = self._clock()
        if now - self._last_plain < self._plain_every:
            return
        self._last_plain = now
        self._stream.write(self._plain_line(now) + "\n")
        self._stream.flush()

    def _plain_line(self, now: float) -> str:
        """``progress: 12/40 pages; http://host 12/40, next request in 0.4 s, about 1 min left``."""
        with self._lock:
            parts = [f"progress: {self._pages_done()}/{self._planned} pages"]
            for host in self._hosts.values():
                if host.planned:
                    pieces = [f"{host.origin} {host.done}/{host.planned}"]
                else:
                    plural = "" if host.requests == 1 else "s"
                    pieces = [f"{host.origin} {host.requests} request{plural}"]
                wait = self._wait_text(host, now)
                if wait:
                    pieces.append(wait)
                left = self._time_left(host, now)
                if left.startswith("about"):
                    pieces.append(f"{left} left")
                parts.append(", ".join(pieces))
        return "; ".join(parts)
