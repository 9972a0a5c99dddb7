"""Helpers for the tests that replay the committed cassettes (fixtures in tests/conftest.py).

``CASSETTE_DIR`` is where they live (``tests/data/cassettes/``, written by
``tools/record_cassettes.py``). ``NetworkGuard.install`` replaces ``socket.socket.connect`` and
``connect_ex`` for one test: every address a connection is attempted to is noted and refused,
blocking and asyncio connections (httpx's too) alike, so a test can show that a replay asks
nothing of any host.
"""

from __future__ import annotations

import socket
from pathlib import Path

import pytest

__all__ = ["CASSETTE_DIR", "NetworkGuard"]

CASSETTE_DIR = Path(__file__).resolve().parent / "data" / "cassettes"


class NetworkGuard:
    """The connection attempts refused, as the addresses asked for."""

    def __init__(self) -> None:
        self.attempts: list[object] = []

    def install(self, monkeypatch: pytest.MonkeyPatch) -> None:
        """Refuse (and note) every socket connection until ``monkeypatch`` is undone."""

        def connect(sock: socket.socket, address: object) -> None:
            self.attempts.append(address)
            raise ConnectionRefusedError(f"test guard: no network here (asked {address!r})")

        def connect_ex(sock: socket.socket, address: object) -> int:
            connect(sock, address)
            return 1  # never reached: connect raises

        monkeypatch.setattr(socket.socket, "connect", connect)
        monkeypatch.setattr(socket.socket, "connect_ex", connect_ex)
