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
    """The extension module if it imports, else None and why not."""
    try:
        from harvester.extract import _plaintable  # type: ignore[attr-defined]
    except ImportError as error:
        return None, f"the extension was not built ({error})"
    return _plaintable, ""


_MODULE, _WHY_NOT = _load()


def fast_module() -> ModuleType | None:
    """The extension to use for this extraction, or None for the DOM path."""
    choice = _forced or os.environ.get(PATH_ENV, "auto")
    if choice == "dom":
        return None
    return _MODULE


def path_status() -> str:
    """One line: which extraction path is in use, and why."""
    choice = _forced or os.environ.get(PATH_ENV, "auto")
    if choice == "dom":
        return f"DOM path only ({PATH_ENV}=dom)"
    if _MODULE is None:
        return f"DOM path only: {_WHY_NOT}"
    return "compiled fast path for plain tables, DOM path for the rest"


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
