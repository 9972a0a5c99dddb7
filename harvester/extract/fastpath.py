"""Which path reads a table: the compiled fast path for plain tables, or the DOM path.

The DOM path (``grid.py`` over lexbor's tree) is the reference and reads every table. The fast
path is a C extension, ``harvester.extract._plaintable``, built by ``pip install`` where a C
compiler is found; it reads only tables it can read exactly and hands every other one back to
the DOM path, so the choice never shows in results.

``HARVESTER_EXTRACT_PATH=dom`` in the environment turns the fast path off for a process (CI runs
the suite both ways); :func:`forced_path` does the same inside a ``with`` block, for tests and
benchmarks. :func:`path_status` says, in one line, which path is in use and why.
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from contextlib import contextmanager
from types import ModuleType

__all__ = ["PATH_ENV", "fast_module", "forced_path", "path_status"]

PATH_ENV = "HARVESTER_EXTRACT_PATH"  # "dom" turns the fast path off; "auto" (default) uses it
_forced: str | None = None  # set by forced_path()


def _load() -> tuple[ModuleType | None, str]:
    """The extension module if it imports and passes its self-check, else None and why not."""
    try:
        from harvester.extract import _plaintable  # type: ignore[attr-defined]
    except ImportError as error:
        return None, f"the extension was not built ({error})"
    # The reader collapses white space as str.split() does: its code points must be Python's
    # (every white-space code point is at most U+3000, in every Unicode version so far).
    python_spaces = {c for c in range(0x3001) if chr(c).isspace()}
    if set(_plaintable.space_code_points()) != python_spaces:
        return None, "the extension's white space differs from this Python's (rebuild it)"
    return _plaintable, ""


_MODULE, _WHY_NOT = _load()


def _choice() -> str:
    return _forced or os.environ.get(PATH_ENV, "auto").strip().lower() or "auto"


def fast_module() -> ModuleType | None:
    """The extension to use for this extraction, or None for the DOM path."""
    return None if _choice() == "dom" else _MODULE


def path_status() -> str:
    """One line: which extraction path is in use, and why."""
    choice = _choice()
    if choice == "dom":
        return f"DOM path only ({PATH_ENV}=dom)"
    note = "" if choice == "auto" else f" ({PATH_ENV}={choice!r} is neither 'auto' nor 'dom')"
    if _MODULE is None:
        return f"DOM path only: {_WHY_NOT}{note}"
    return f"compiled fast path for plain tables, DOM path for the rest{note}"


@contextmanager
def forced_path(path: str) -> Iterator[None]:
    """Use only ``path`` ("dom" or "auto") inside the block (not thread-aware: for tests)."""
    global _forced
    if path not in ("dom", "auto"):
        raise ValueError(f"path must be 'dom' or 'auto', not {path!r}")
    before, _forced = _forced, path
    try:
        yield
    finally:
        _forced = before
