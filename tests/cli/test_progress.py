"""A run's progress: live rows in a real pseudo-terminal, plain lines elsewhere, none when quiet."""

from __future__ import annotations

import io
import math
import os
import termios
import threading
from collections.abc import Callable
from typing import TextIO

import pytest

from harvester.cli.progress import RunProgress


@pytest.fixture(autouse=True)
def a_capable_terminal(monkeypatch: pytest.MonkeyPatch) -> None:
    """Every test's terminal can move its cursor, wherever the tests run (CI often says dumb)."""
    monkeypatch.setenv("TERM", "xterm-256color")


SITE = "http://127.0.0.1:8650"
OTHER = "http://127.0.0.1:8651"
ARCHIVE = "http://127.0.0.1:8652"
PAGES = [f"{SITE}/players/{season}" for season in range(2015, 2025)]  # ten pages, one host


class FakeClock:
    """A clock the test moves by hand."""

    def __init__(self) -> None:
        self.now = 0.0

    def __call__(self) -> float:
        return self.now


def on_a_terminal(drive: Callable[[TextIO], None]) -> str:
    """Everything ``drive`` made appear on a real pseudo-terminal, as the terminal got it."""
    master, slave = os.openpty()
    termios.tcsetwinsize(slave, (24, 120))
    received: list[bytes] = []

    def read() -> None:
        while True:
            try:
                data = os.read(master, 4096)
            except OSError:  # EIO: the terminal's other side is closed, all is read
                return
            if not data:
                return
            received.append(data)

    reader = threading.Thread(target=read)
    reader.start()
    try:
        with open(slave, "w", encoding="utf-8") as stream:
            drive(stream)
    finally:
        reader.join(timeout=10)
        os.close(master)
    assert not reader.is_alive()
    return b"".join(received).decode("utf-8")


# Lines a careless printer would mangle: markup, an emoji code, numbers to highlight, a long one.
RESULT_LINES = [
    "league-players/players season=2015: 20 rows [stored] :x:",
    "league-players/players season=2016: failed, 404 Not Found at " + SITE + "/players/2016",
    "league-players/players season=2017: "
    + "a very long outcome line that is wider than the terminal " * 3,
]


def test_a_terminal_shows_each_host_its_counts_its_wait_and_the_lines_whole() -> None:
    clock = FakeClock()

    def drive(stream: TextIO) -> None:
        with RunProgress([*PAGES, f"{OTHER}/teams"], stream=stream, clock=clock) as progress:
            clock.now = 15.0
            for page in PAGES[:3]:
                progress.host_used(page)
                progress.page_done(page)
            progress.host_used(f"{ARCHIVE}/timemap/link/{SITE}/players/2018")
            progress.waiting(SITE, 0.4, "pace")
            progress.waiting(ARCHIVE, 30, "Retry-After")
            for text in RESULT_LINES:
                progress.line(text)
            progress.page_done(PAGES[3])
            progress.line("the fourth page")

    shown = on_a_terminal(drive)
    # The display drawn under a line is as things are then, not as at the last refresh.
    under_the_last_table_line = shown.split(f"{RESULT_LINES[-1]}\r\n")[1]
    assert "3/10" in under_the_last_table_line.split("the fourth page")[0]
    assert "\x1b[" in shown  # drawn as a live display, not as plain text
    assert SITE in shown and OTHER in shown and ARCHIVE in shown
    assert "3/10" in shown and "0/1" in shown and "3/11 pages" in shown
    assert "next request in 0.4 s" in shown
    assert "Retry-After: 30 s" in shown
    assert "about 35 s" in shown  # 3 pages in 15 s, so 7 more take about 35 s
    assert "–" in shown  # no page of the other host is done: no estimate yet
    for text in RESULT_LINES:
        # The whole line, ended right there: no part of the display was drawn into it.
        assert f"{text}\r\n" in shown


def test_a_non_terminal_stream_gets_exactly_the_lines() -> None:
    stream = io.StringIO()
    with RunProgress(PAGES, stream=stream, clock=FakeClock()) as progress:
        progress.host_used(PAGES[0])
        progress.waiting(PAGES[0], 0.4, "pace")
        progress.line("first [bold]line[/bold] :x:")
        progress.page_done(PAGES[0])
        progress.line("second line")
    assert stream.getvalue() == "first [bold]line[/bold] :x:\nsecond line\n"


def test_plain_progress_lines_come_at_most_every_few_seconds() -> None:
    clock = FakeClock()
    stream = io.StringIO()
    pages = [f"{SITE}/a", f"{SITE}/b", f"{SITE}/c", f"{SITE}/d", f"{OTHER}/e"]
    with RunProgress(pages, stream=stream, clock=clock, plain_every=10) as progress:
        clock.now = 5.0
        progress.page_done(pages[0])
        progress.line("a done")
        clock.now = 10.0
        progress.page_done(pages[1])  # due: ten seconds since the start
        clock.now = 12.0
        progress.host_used(f"{ARCHIVE}/timemap/e")
        progress.waiting(ARCHIVE, 30, "Retry-After")
        progress.line("b done")
        clock.now = 20.0
        progress.waiting(SITE, 0.4, "pace")  # due again, ten seconds after the last
    assert stream.getvalue() == (
        "a done\n"
        "progress: 2/5 pages; http://127.0.0.1:8650 2/4, about 10 s left; "
        "http://127.0.0.1:8651 0/1\n"
        "b done\n"
        "progress: 2/5 pages; http://127.0.0.1:8650 2/4, next request in 0.4 s, about 20 s left; "
        "http://127.0.0.1:8651 0/1; http://127.0.0.1:8652 1 request, Retry-After: 22 s\n"
    )
    assert "\x1b" not in stream.getvalue()


def test_a_wait_counts_down_and_ends_with_the_next_request() -> None:
    clock = FakeClock()
    stream = io.StringIO()
    with RunProgress([f"{SITE}/a"], stream=stream, clock=clock, plain_every=5) as progress:
        progress.waiting("127.0.0.1:8650", 30, "Retry-After")  # a bare host:port of a known row
        clock.now = 5.0
        progress.line("one")
        progress.host_used(f"{SITE}/a")
        clock.now = 10.0
        progress.line("two")
    assert stream.getvalue() == (
        "one\n"
        "progress: 0/1 pages; http://127.0.0.1:8650 0/1, Retry-After: 25 s\n"
        "two\n"
        "progress: 0/1 pages; http://127.0.0.1:8650 0/1\n"
    )


def test_hosts_are_origins_with_default_ports_dropped() -> None:
    clock = FakeClock()
    stream = io.StringIO()
    pages = [
        "HTTP://127.0.0.1:80/a",
        "http://127.0.0.1/b?x=1",
        "https://127.0.0.1:443/c",
        "http://[::1]:8650/d",
    ]
    with RunProgress(pages, stream=stream, clock=clock, plain_every=1) as progress:
        clock.now = 1.0
        progress.page_done("http://127.0.0.1/a")
    assert stream.getvalue() == (
        "progress: 1/4 pages; http://127.0.0.1 1/2, about 1.0 s left; "
        "https://127.0.0.1 0/1; http://[::1]:8650 0/1\n"
    )


def test_the_time_left_follows_the_pace_so_far_until_all_pages_are_done() -> None:
    clock = FakeClock()
    stream = io.StringIO()
    pages = [f"{SITE}/a", f"{SITE}/b", f"{SITE}/c"]
    with RunProgress(pages, stream=stream, clock=clock, plain_every=60) as progress:
        clock.now = 3725.0
        progress.page_done(pages[0])  # one page in 3725 s: two more take 7450 s
        clock.now = 3786.0
        progress.page_done(pages[1])  # two in 3786 s: one more takes 1893 s
        progress.page_done(pages[2])
        clock.now = 3846.0
        progress.line("all done")
    assert stream.getvalue() == (
        "progress: 1/3 pages; http://127.0.0.1:8650 1/3, about 2 h 04 min left\n"
        "progress: 2/3 pages; http://127.0.0.1:8650 2/3, about 31 min 33 s left\n"
        "all done\n"
        "progress: 3/3 pages; http://127.0.0.1:8650 3/3\n"
    )


def test_quiet_gives_only_the_lines_even_on_a_terminal() -> None:
    clock = FakeClock()

    def drive(stream: TextIO) -> None:
        with RunProgress(PAGES, stream=stream, quiet=True, clock=clock, plain_every=1) as progress:
            for page in PAGES[:4]:
                clock.now += 5
                progress.host_used(page)
                progress.waiting(page, 2, "pace")
                progress.page_done(page)
            progress.line("players season=2016: failed, 404")

    assert on_a_terminal(drive) == "players season=2016: failed, 404\r\n"
    stream = io.StringIO()
    drive(stream)
    assert stream.getvalue() == "players season=2016: failed, 404\n"


def test_plain_lines_can_be_left_out() -> None:
    clock = FakeClock()
    stream = io.StringIO()
    with RunProgress(PAGES, stream=stream, clock=clock, plain_every=None) as progress:
        clock.now = 1000.0
        progress.page_done(PAGES[0])
        progress.line("done")
    assert stream.getvalue() == "done\n"


def test_a_dumb_terminal_gets_plain_lines(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("TERM", "dumb")
    clock = FakeClock()

    def drive(stream: TextIO) -> None:
        with RunProgress(PAGES, stream=stream, clock=clock, plain_every=1) as progress:
            clock.now = 1.0
            progress.page_done(PAGES[0])
            progress.line("one")

    assert on_a_terminal(drive) == (
        "progress: 1/10 pages; http://127.0.0.1:8650 1/10, about 9.0 s left\r\none\r\n"
    )


def test_terminal_true_draws_on_any_stream() -> None:
    stream = io.StringIO()
    with RunProgress(PAGES, stream=stream, terminal=True, clock=FakeClock()) as progress:
        progress.page_done(PAGES[0])
        progress.line("kept")
    assert "\x1b[" in stream.getvalue()
    assert "1/10" in stream.getvalue()
    assert "kept\n" in stream.getvalue()


def test_an_endless_wait_is_shown_as_such() -> None:
    clock = FakeClock()
    stream = io.StringIO()
    with RunProgress([f"{SITE}/a"], stream=stream, clock=clock, plain_every=1) as progress:
        progress.waiting(SITE, math.inf, "Retry-After")
        clock.now = 1.0
        progress.line("still waiting")
    assert stream.getvalue() == (
        "still waiting\nprogress: 0/1 pages; http://127.0.0.1:8650 0/1, Retry-After: endless\n"
    )
