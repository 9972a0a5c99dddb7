"""Whether a ``.open`` WARC file still has its writer: an advisory lock held while it writes.

The writer holds an exclusive ``flock`` on its open file (POSIX flock(2); the kernel drops it
when the process dies, SIGKILL included), so a file nobody holds was left by a crash and may be
salvaged. Where ``fcntl`` is missing (not POSIX), every ``.open`` file counts as held: nothing
is salvaged automatically there.
"""

from __future__ import annotations

from pathlib import Path
from typing import IO

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX
    fcntl = None  # type: ignore[assignment]

__all__ = ["hold", "is_held"]


def hold(out: IO[bytes]) -> None:
    """Mark ``out`` (a file being written) as having a live writer, until it is closed."""
    if fcntl is not None:
        fcntl.flock(out.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)


def is_held(path: Path) -> bool:
    """Whether a live writer still holds the ``.open`` file at ``path``."""
    if fcntl is None:  # pragma: no cover - not POSIX
        return True
    try:
        with open(path, "rb") as probe:
            try:
                fcntl.flock(probe.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                return True
            fcntl.flock(probe.fileno(), fcntl.LOCK_UN)
            return False
    except FileNotFoundError:
        return False
