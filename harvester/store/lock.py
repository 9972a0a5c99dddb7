"""The single-writer lock of an archive: ``<root>/.lock``, created exclusively, naming its holder.

The file holds JSON ``{"pid": …, "host": …, "started": …}``. On the local disk it is created with
``O_CREAT | O_EXCL`` (POSIX open(): fails if the file exists), so two writers cannot both take it.
A lock whose pid no longer runs on this host is stale (its writer was killed) and is taken over;
any other lock is an error naming its holder. A lock file with no readable JSON that is older
than ``WRITE_GRACE_S`` is stale too: its creator died between creating and filling it.

Taking over renames the stale file aside first (POSIX rename() is atomic, so of two writers
racing for one stale lock only one moves it), checks it moved the file it judged, then creates
the lock afresh with O_EXCL. On other filesystems (object stores) there is no exclusive create:
the lock is checked and written through pyarrow.fs, which keeps honest runs apart but cannot stop
two writers starting in the same instant.
"""

from __future__ import annotations

import contextlib
import json
import os
import socket
import time
from dataclasses import dataclass

import pyarrow.fs as pafs

from harvester.errors import StoreError
from harvester.store.contract import LOCK_FILE
from harvester.store.layout import join, local_path
from harvester.timestamps import now_rfc3339

__all__ = ["WRITE_GRACE_S", "ArchiveLock", "LockHolder", "pid_alive"]

WRITE_GRACE_S = 2.0
"""A lock file still without JSON this many seconds after it was made has lost its writer."""

_ATTEMPTS = 100


def pid_alive(pid: int) -> bool:
    """Whether process ``pid`` runs on this host (an exited, unreaped zombie does not count)."""
    try:
        os.kill(pid, 0)  # signal 0: existence check only (POSIX kill())
    except ProcessLookupError:
        return False
    except PermissionError:
        return True  # it exists, under another user
    except (OverflowError, ValueError):
        return False  # no such pid can exist
    try:
        with open(f"/proc/{pid}/stat", encoding="ascii", errors="replace") as stat:
            fields = stat.read().rsplit(")", 1)[1].split()
    except (OSError, IndexError):
        return True
    return not fields or fields[0] != "Z"  # proc(5): field 3 "state", Z = zombie


@dataclass(frozen=True)
class LockHolder:
    """Who holds a lock, as its file says."""

    pid: int
    host: str
    started: str

    def describe(self) -> str:
        """``pid N on host H since T``."""
        return f"pid {self.pid} on host {self.host} since {self.started}"

    def text(self) -> bytes:
        """The lock file's contents."""
        body = {"pid": self.pid, "host": self.host, "started": self.started}
        return (json.dumps(body) + "\n").encode()

    @staticmethod
    def parse(data: bytes) -> LockHolder | None:
        """The holder named by a lock file's contents, or None if they are not a whole lock."""
        try:
            body = json.loads(data)
            pid, host, started = body["pid"], body["host"], body["started"]
        except (ValueError, TypeError, KeyError):
            return None
        if type(pid) is not int or pid <= 0 or not isinstance(host, str):
            return None  # pid 0 or negative would make kill() signal a process group
        return LockHolder(pid, host, str(started))


class ArchiveLock:
    """Take and give back the lock of one archive (``shown_root``: the root as the user gave it)."""

    def __init__(self, filesystem: pafs.FileSystem, base: str, shown_root: str) -> None:
        self._fs = filesystem
        self._path = join(base, LOCK_FILE)
        self._local = local_path(filesystem, self._path)
        self._base = base
        self._shown = shown_root.rstrip("/") or shown_root
        self._mine: LockHolder | None = None

    def acquire(self) -> str | None:
        """Take the lock; return a note when a stale lock was taken over, else None."""
        self._fs.create_dir(self._base, recursive=True)
        me = LockHolder(os.getpid(), socket.gethostname(), now_rfc3339())
        note: str | None = None
        for _ in range(_ATTEMPTS):
            taken = self._try_create(me)
            if taken:
                self._mine = me
                return note
            data, age = self._read()
            if data is None:
                continue  # released between our create and our read: try again
            holder = LockHolder.parse(data)
            if holder is None and age < WRITE_GRACE_S:
                time.sleep(0.05)  # its creator is writing the JSON right now
                continue
            if holder is not None and (holder.host != me.host or pid_alive(holder.pid)):
                raise StoreError(
                    f"archive {self._shown} is locked by {holder.describe()}",
                    hint="wait for that run to finish, or remove"
                    f" {self._shown}/{LOCK_FILE} if no harvester is running",
                )
            if self._remove_stale(data):
                note = (
                    f"took over the stale lock of {holder.describe()}: that process is gone"
                    if holder is not None
                    else "took over an unreadable lock file left by a writer that died taking it"
                )
        raise StoreError(
            f"archive {self._shown}: could not take {LOCK_FILE} after {_ATTEMPTS} attempts",
            hint="another writer keeps taking it; wait for it to finish",
        )

    def release(self) -> None:
        """Give the lock back, if the file is still ours."""
        mine, self._mine = self._mine, None
        if mine is None:
            return
        data, _ = self._read()
        if data != mine.text():
            return  # someone removed or replaced it: not ours to delete
        if self._local is not None:
            os.unlink(self._local)
        else:
            self._fs.delete_file(self._path)

    def _try_create(self, me: LockHolder) -> bool:
        if self._local is None:
            if self._fs.get_file_info(self._path).type != pafs.FileType.NotFound:
                return False
            with self._fs.open_output_stream(self._path) as out:
                out.write(me.text())
            return True
        try:
            fd = os.open(self._local, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
        except FileExistsError:
            return False
        try:
            os.write(fd, me.text())  # one small write: the JSON appears whole
            os.fsync(fd)
        finally:
            os.close(fd)
        return True

    def _read(self) -> tuple[bytes | None, float]:
        """The lock file's bytes and age in seconds, or (None, 0) when there is none."""
        if self._local is not None:
            try:
                with open(self._local, "rb") as f:
                    return f.read(), time.time() - os.fstat(f.fileno()).st_mtime
            except FileNotFoundError:
                return None, 0.0
        info = self._fs.get_file_info(self._path)
        if info.type == pafs.FileType.NotFound:
            return None, 0.0
        with self._fs.open_input_stream(self._path) as stream:
            data = stream.read()
        age = 0.0 if info.mtime is None else time.time() - info.mtime.timestamp()
        return bytes(data), age

    def _remove_stale(self, judged: bytes) -> bool:
        """Remove the stale lock whose contents were ``judged``; False if it changed meanwhile."""
        if self._local is None:
            self._fs.delete_file(self._path)
            return True
        aside = f"{self._local}.stale-{os.getpid()}"
        try:
            os.rename(self._local, aside)  # atomic: of two racing writers only one moves it
        except FileNotFoundError:
            return False
        with open(aside, "rb") as f:
            moved = f.read()
        if moved != judged:
            # A fresh lock was taken between our read and our rename: put it back.
            with contextlib.suppress(FileExistsError):
                os.link(aside, self._local)
            os.unlink(aside)
            return False
        os.unlink(aside)
        return True
