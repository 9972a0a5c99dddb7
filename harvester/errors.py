"""One exception tree for everything harvester reports to a user.

    HarvesterError                      every error a user can act on; ``str()`` is one line
    ├── RecipeError(ValueError)         a recipe file is unreadable or invalid (file + key path)
    ├── ExtractError(ValueError)        a table cannot be located or read from a page
    │   └── TableNotFoundError(LookupError)  a selector matched no table, or several
    ├── ValueParseError(ValueError)     a cell does not parse as its column's declared type
    ├── FetchError                      a page could not be fetched
    │   ├── RobotsDisallowedError       robots.txt disallows the URL for our agent (names the rule)
    │   ├── HostPausedError             the host's circuit breaker is open for the rest of the run
    │   ├── FetchLimitError             a hard limit was hit (size, decompression, redirects, type)
    │   ├── HttpStatusError             the final answer was not a 2xx (carries the status)
    │   └── NotCachedError              --offline and the cache has no copy
    ├── JoinInputError(ValueError)      a join check asked for a table, column, value or rate it
    │                                   cannot use (bad usage, exit 2)
    ├── StoreError                      the archive could not be read or written
    │   └── ArchiveUnwritableError      the archive cannot be written at all: the run stops
    └── RunInterrupted                  SIGINT or SIGTERM stopped a run at a safe point

Each error carries a ``hint`` saying what to do; the CLI prints ``message`` then the hint on the
same line and exits non-zero, with no traceback.
"""

from __future__ import annotations

__all__ = [
    "ArchiveUnwritableError",
    "ExtractError",
    "FetchError",
    "FetchLimitError",
    "HarvesterError",
    "HostPausedError",
    "HttpStatusError",
    "JoinInputError",
    "NotCachedError",
    "RecipeError",
    "RobotsDisallowedError",
    "RunInterrupted",
    "StoreError",
    "TableNotFoundError",
    "ValueParseError",
]


class HarvesterError(Exception):
    """An error a user can act on: what went wrong, where, and what to do."""

    exit_code = 1

    def __init__(self, message: str, *, hint: str = "") -> None:
        super().__init__(message)
        self.message = message
        self.hint = hint

    def __str__(self) -> str:
        if self.hint:
            return f"{self.message} — {self.hint}"
        return self.message


class RecipeError(HarvesterError, ValueError):
    """A recipe file cannot be read, or a key in it is invalid."""

    exit_code = 2

    def __init__(self, message: str, *, path: str = "", key: str = "", hint: str = "") -> None:
        where = ": ".join(part for part in (path, key) if part)
        super().__init__(f"{where}: {message}" if where else message, hint=hint)
        self.path = path
        self.key = key


class ExtractError(HarvesterError, ValueError):
    """A table cannot be read from a page as its rule asks."""

    exit_code = 3


class TableNotFoundError(ExtractError, LookupError):
    """A selector matched no table, or several when one was expected."""


class ValueParseError(HarvesterError, ValueError):
    """A cell does not parse as the type its column declares."""

    exit_code = 3


class FetchError(HarvesterError):
    """A page could not be fetched."""

    exit_code = 4

    def __init__(self, message: str, *, url: str = "", hint: str = "") -> None:
        super().__init__(f"{url}: {message}" if url else message, hint=hint)
        self.url = url


class RobotsDisallowedError(FetchError):
    """robots.txt disallows the URL for our agent; the message names the matching rule."""


class HostPausedError(FetchError):
    """Too many consecutive failures on one host: it is paused for the rest of the run."""


class FetchLimitError(FetchError):
    """A hard limit was hit: body size, decompressed size, redirects, scheme or content type."""


class HttpStatusError(FetchError):
    """The final response was not a success; ``status`` says which."""

    def __init__(self, message: str, *, url: str = "", status: int = 0, hint: str = "") -> None:
        super().__init__(message, url=url, hint=hint)
        self.status = status


class JoinInputError(HarvesterError, ValueError):
    """A join check was asked for a table, column, value or rate it cannot use (bad usage)."""

    exit_code = 2


class NotCachedError(FetchError):
    """Offline mode was asked for and the cache holds no copy of the URL."""


class StoreError(HarvesterError):
    """The archive could not be read or written."""

    exit_code = 5


class ArchiveUnwritableError(StoreError):
    """The archive cannot be written at all (permissions, no space, a file in the way).

    Unlike a StoreError about one table, this stops the whole run: every later table would
    fail the same way.
    """


class RunInterrupted(HarvesterError):
    """A signal stopped a run at a safe point; ``report`` is what was done, already kept."""

    def __init__(self, message: str, *, signal_name: str, report: object, hint: str = "") -> None:
        super().__init__(message, hint=hint)
        self.signal_name = signal_name
        self.report = report
        # The shell's convention: 128 + the signal number (SIGINT 2 → 130, SIGTERM 15 → 143).
        self.exit_code = 143 if signal_name == "SIGTERM" else 130
