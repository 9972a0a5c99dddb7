"""One pace per host across processes: a per-user state file, read and updated under a file lock.

Every harvest on the machine, whatever its recipe or archive, keeps in one JSON file per host
(scheme, host and port, as RFC 9309 §2.3 keys robots.txt) when its last request started and
finished, the interval in force and any hold (Retry-After, back-off). Before a request a
process takes the file's lock; if the host has a request in flight, or its interval since the
last finish (or a hold) has not passed, it lets the lock go, sleeps and looks again; otherwise
it records its own start and lets the lock go. After the answer it records the finish. So two
processes never start requests to one host closer than its interval, and at most one request
per host is in flight on the machine.

Everything stays bounded. A lock not taken within ``max_wait`` is a FetchError. A start older
than ``stale_after`` (the whole-request timeout) counts as finished then: its process was killed
mid-request. A damaged file is moved aside and started afresh with one warning, as the cache
is: it only saves waiting, nothing in it is the user's data.

The file: ``{"format": 1, "hosts": {"http://127.0.0.1:8650": {"started": null, "owner": "",
"finished": 1767225600.5, "by": "812-5f0c", "interval": 0.3, "hold_until": 0.0}}}``, times in
Unix seconds; "owner" names the request in flight, "by" the fetcher that finished last.
"""

from __future__ import annotations

import asyncio
import json
import logging
import math
import os
import secrets
import time
from collections.abc import Awaitable, Callable
from pathlib import Path
from typing import Any

import platformdirs
from filelock import FileLock, Timeout

from harvester.errors import FetchError
from harvester.fetch.pacing import HostKey, describe
from harvester.fetch.waits import ANNOUNCE_AFTER, WaitAnnouncer, WaitNotice, seconds_text

__all__ = ["STATE_DIR_VARIABLE", "STATE_FILE", "SharedPace", "state_dir"]

STATE_DIR_VARIABLE = "HARVESTER_STATE_DIR"
STATE_FILE = "host-pace.json"
FORMAT = 1
POLL = 0.02  # seconds between looks while a zero-interval host has a request in flight

_log = logging.getLogger("harvester.fetch")
Record = dict[str, Any]
_FIELDS: dict[str, tuple[type, ...]] = {
    "started": (float, int, type(None)),
    "owner": (str,),
    "finished": (float, int, type(None)),
    "by": (str,),
    "interval": (float, int),
    "hold_until": (float, int),
}


def state_dir(folder: str | Path | None = None) -> Path:
    """The shared pace's folder: ``folder``, else ``$HARVESTER_STATE_DIR``, else the user's."""
    if folder is not None:
        return Path(folder)
    named = os.environ.get(STATE_DIR_VARIABLE, "").strip()
    return Path(named) if named else Path(platformdirs.user_state_dir("harvester"))


def _key(host: HostKey) -> str:
    scheme, name, port = host
    return f"{scheme}://[{name}]:{port}" if ":" in name else f"{scheme}://{name}:{port}"


def _valid(data: Any) -> bool:
    """Whether parsed JSON has the file's shape: every host a record of the known fields."""
    if not isinstance(data, dict) or data.get("format") != FORMAT:
        return False
    hosts = data.get("hosts")
    if not isinstance(hosts, dict):
        return False
    return all(
        isinstance(record, dict)
        and record.keys() == _FIELDS.keys()
        and all(isinstance(record[name], kinds) for name, kinds in _FIELDS.items())
        for record in hosts.values()
    )


class SharedPace:
    """The machine-wide turn-taking per host; ``begin`` before a request, ``finish`` after."""

    def __init__(
        self,
        folder: str | Path | None = None,
        *,
        max_wait: float,
        stale_after: float,
        on_wait: WaitAnnouncer | None = None,
        clock: Callable[[], float] = time.time,  # wall clock: other processes read the times
        sleep: Callable[[float], Awaitable[None]] = asyncio.sleep,
    ) -> None:
        self.folder = state_dir(folder)
        self.path = self.folder / STATE_FILE
        self.max_wait = max_wait
        self.stale_after = stale_after
        self.on_wait = on_wait
        self._clock = clock
        self._sleep = sleep
        self._announced: set[tuple[HostKey, str]] = set()
        # Who we are in the file's "by": our own last finish is paced by our own pacer alone,
        # which already knows the Crawl-delay the robots.txt request (paced at 1 s) could not.
        self._name = f"{os.getpid()}-{secrets.token_hex(4)}"

    async def begin(self, host: HostKey, interval: float) -> str:
        """Wait for the host's turn on this machine and record our start; return its token.

        ``interval`` is ours; the wait honours the larger of it and the one recorded, counted
        from the last finish, and any hold. Raises FetchError when the lock or the turn does
        not come within the cap (an in-flight request may add up to ``stale_after``).
        """
        token = f"{os.getpid()}-{secrets.token_hex(4)}"
        deadline = self._clock() + self.max_wait + self.stale_after
        while True:
            wait, reason = await asyncio.to_thread(self._try_start, host, interval, token)
            if wait <= 0:
                return token
            if self._clock() + wait > deadline:
                raise FetchError(
                    f"waited over {seconds_text(self.max_wait + self.stale_after)} for our turn"
                    f" at {describe(host)}: {reason}",
                    url=describe(host),
                    hint="other harvests on this machine keep the host busy; run them one"
                    " after another, or raise max_wait",
                )
            self._announce(host, wait, reason)
            await self._sleep(wait)

    async def finish(self, host: HostKey, token: str) -> None:
        """Record that our request (``token`` from ``begin``) to the host has finished."""
        await asyncio.to_thread(self._update, host, self._finished, token)

    async def hold(self, host: HostKey, seconds: float) -> None:
        """Start nothing on the host, in any process, for ``seconds`` from now."""
        await asyncio.to_thread(self._update, host, self._held, seconds)

    # -- steps under the lock ------------------------------------------------------------

    def _try_start(self, host: HostKey, interval: float, token: str) -> tuple[float, str]:
        """Under the lock: record our start and return (0, ""), or (seconds to wait, why)."""
        with self._locked(host) as hosts:
            now = self._clock()
            record = hosts.get(_key(host)) or self._empty()
            ours = record["by"] == self._name
            pace = interval if ours else max(interval, float(record["interval"]))
            # A time ahead of now means the wall clock stepped back: count it as now.
            finished = None if record["finished"] is None else min(record["finished"], now)
            if record["started"] is not None:
                started = min(record["started"], now)
                if now - started < self.stale_after:
                    # Its finish is still to come, so our start is at least ``pace`` away.
                    left = started + self.stale_after - now
                    return min(max(pace, POLL), left), "another harvest's request is in flight"
                # Killed mid-request: the timeout ended that request by this time at the latest.
                finished = max(finished or -math.inf, started + self.stale_after)
            earliest = record["hold_until"] if finished is None else finished + pace
            earliest = min(max(earliest, record["hold_until"]), now + self.max_wait)
            if earliest > now:
                if earliest == record["hold_until"]:
                    return earliest - now, "a hold after a 429, 503 or failure"
                return earliest - now, f"an interval of {pace:g} s after the last request"
            record.update(started=now, owner=token, finished=finished, interval=interval)
            hosts[_key(host)] = record
            return 0.0, ""

    def _finished(self, record: Record, token: str) -> None:
        now = self._clock()
        if record["owner"] == token:
            record.update(started=None, owner="")
        # Else another process took over after our start went stale: its start stays.
        record["finished"] = max(record["finished"] or -math.inf, now)
        record["by"] = self._name

    def _held(self, record: Record, seconds: float) -> None:
        record["hold_until"] = max(record["hold_until"], self._clock() + max(0.0, seconds))

    def _update(self, host: HostKey, change: Callable[[Record, Any], None], value: Any) -> None:
        with self._locked(host) as hosts:
            record = hosts.get(_key(host)) or self._empty()
            change(record, value)
            hosts[_key(host)] = record

    @staticmethod
    def _empty() -> Record:
        return {
            "started": None,
            "owner": "",
            "finished": None,
            "by": "",
            "interval": 0.0,
            "hold_until": 0.0,
        }

    def _locked(self, host: HostKey) -> _LockedState:
        return _LockedState(self, describe(host))

    # -- the file ------------------------------------------------------------------------

    def read(self) -> dict[str, Record]:
        """The hosts' records as the file holds them (a damaged file is moved aside first)."""
        try:
            text = self.path.read_text(encoding="utf-8")
        except FileNotFoundError:
            return {}
        try:
            data = json.loads(text)
        except ValueError as exc:
            problem = f"not JSON: {exc}"
        else:
            if _valid(data):
                hosts: dict[str, Record] = data["hosts"]
                return hosts
            problem = "not the shape this harvester writes"
        self._move_aside(problem)
        return {}

    def _move_aside(self, problem: str) -> None:
        stamp = time.strftime("%Y%m%dT%H%M%S")
        aside = self.path.with_name(f"{STATE_FILE}.damaged-{stamp}")
        number = 1
        while aside.exists():  # damaged twice within a second: keep both
            number += 1
            aside = self.path.with_name(f"{STATE_FILE}.damaged-{stamp}-{number}")
        self.path.rename(aside)
        _log.warning(
            "the shared host pace at %s was damaged (%s); moved it to %s and started an empty one",
            self.path,
            problem,
            aside,
        )

    def write(self, hosts: dict[str, Record]) -> None:
        """Replace the file whole (a reader never sees half of it)."""
        temporary = self.path.with_name(f"{STATE_FILE}.{os.getpid()}.tmp")
        temporary.write_text(json.dumps({"format": FORMAT, "hosts": hosts}), encoding="utf-8")
        os.replace(temporary, self.path)

    def lock(self) -> FileLock:
        """The file lock every reader and writer of the state file takes (a fresh object)."""
        # One object per use: filelock is reentrant per object, and two uses at once (two
        # hosts of one process, in worker threads) must exclude each other like processes.
        return FileLock(str(self.path.with_name(f"{STATE_FILE}.lock")))

    def _announce(self, host: HostKey, wait: float, reason: str) -> None:
        if self.on_wait is None or wait <= ANNOUNCE_AFTER or (host, reason) in self._announced:
            return
        self._announced.add((host, reason))
        self.on_wait(WaitNotice(describe(host), wait, reason))


class _LockedState:
    """``with``: the hosts' records under the lock, written back on a clean exit."""

    def __init__(self, pace: SharedPace, where: str) -> None:
        self._pace, self._where = pace, where
        self._lock = pace.lock()
        self._hosts: dict[str, Record] = {}

    def __enter__(self) -> dict[str, Record]:
        pace = self._pace
        try:
            pace.folder.mkdir(parents=True, exist_ok=True)
            self._lock.acquire(timeout=pace.max_wait)
            try:
                self._hosts = pace.read()
            except BaseException:
                self._lock.release()
                raise
        except Timeout:
            raise FetchError(
                f"could not take the lock on the shared host pace ({self._lock.lock_file})"
                f" within {seconds_text(pace.max_wait)}",
                url=self._where,
                hint="another harvest on this machine holds it; try again when it is done,"
                " or raise max_wait",
            ) from None
        except OSError as exc:
            raise FetchError(
                f"cannot use the shared host pace folder {pace.folder}: {exc.strerror or exc}",
                url=self._where,
                hint=f"set {STATE_DIR_VARIABLE} to a folder you can write",
            ) from None
        return self._hosts

    def __exit__(self, kind: object, *rest: object) -> None:
        try:
            if kind is None:
                self._pace.write(self._hosts)
        finally:
            self._lock.release()
