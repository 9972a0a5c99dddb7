"""The collector pause (harvester/extract/collector.py) around whole extractions.

Each test looks at the one switch Python has, ``gc.isenabled()``: inside an extraction (through
a wrapper around the grid step, which every extraction passes), and after nested, concurrent and
raising ones.
"""

from __future__ import annotations

import gc
import threading
from collections.abc import Callable, Iterator
from typing import Any

import pytest

import harvester.extract.table as table_module
from harvester import ColumnRule, TableNotFoundError, TableRule, ValueParseError, extract_table
from harvester.extract.collector import EXTRACTION_PAUSE
from harvester.extract.grid import Grid
from harvester.extract.table import extract_grid

PAGE = """
<table>
<tr><th>Player</th><th>Goals</th></tr>
<tr><td>Lea Varn</td><td>4</td></tr>
<tr><td>Osk Belund</td><td>x</td></tr>
</table>
"""
GOALS_AS_INTEGERS = TableRule(columns=(ColumnRule("goals", type="integer"),))


@pytest.fixture(autouse=True)
def collector_on() -> Iterator[None]:
    """Every test starts with the collector on, and leaves it on whatever happened."""
    gc.enable()
    yield
    gc.enable()


@pytest.fixture
def seen_inside(monkeypatch: pytest.MonkeyPatch) -> list[bool]:
    """The collector's state each time an extraction reaches its grid step."""
    seen: list[bool] = []

    grid_step = table_module._grid  # the fast path or the DOM path, whichever reads the table

    def watched(*args: Any) -> Grid:
        seen.append(gc.isenabled())
        return grid_step(*args)

    monkeypatch.setattr(table_module, "_grid", watched)
    return seen


def test_extract_table_pauses_the_collector_and_switches_it_back_on(
    seen_inside: list[bool],
) -> None:
    result = extract_table(PAGE)
    assert result.table.column("goals").to_pylist() == ["4", "x"]
    assert seen_inside == [False]
    assert gc.isenabled()


def test_extract_grid_pauses_the_collector_and_switches_it_back_on(
    seen_inside: list[bool],
) -> None:
    assert extract_grid(PAGE)[2] == ["Osk Belund", "x"]
    assert seen_inside == [False]
    assert gc.isenabled()


def test_a_raising_extraction_switches_the_collector_back_on(seen_inside: list[bool]) -> None:
    with pytest.raises(ValueParseError):
        extract_table(PAGE, GOALS_AS_INTEGERS)  # "x" is no integer
    assert seen_inside == [False]
    assert gc.isenabled()
    with pytest.raises(TableNotFoundError):
        extract_table(PAGE, TableRule(select="table#missing"))  # fails before the grid step
    assert gc.isenabled()


def test_a_collector_the_caller_switched_off_stays_off() -> None:
    gc.disable()
    extract_table(PAGE)
    assert not gc.isenabled()
    with pytest.raises(ValueParseError):
        extract_table(PAGE, GOALS_AS_INTEGERS)
    assert not gc.isenabled()


def test_a_nested_extraction_leaves_the_collector_off_for_the_outer_one() -> None:
    with EXTRACTION_PAUSE:
        assert not gc.isenabled()
        extract_table(PAGE)
        assert not gc.isenabled()  # the outer block is still running
        with pytest.raises(ValueParseError):
            extract_table(PAGE, GOALS_AS_INTEGERS)
        assert not gc.isenabled()
    assert gc.isenabled()


def test_the_pause_lets_exceptions_through() -> None:
    with pytest.raises(RuntimeError, match="inside"), EXTRACTION_PAUSE:
        raise RuntimeError("inside")
    assert gc.isenabled()


def _in_thread(body: Callable[[], None]) -> threading.Thread:
    thread = threading.Thread(target=body, daemon=True)
    thread.start()
    return thread


def test_an_extraction_ending_does_not_switch_the_collector_on_under_another_thread() -> None:
    entered, release = threading.Event(), threading.Event()

    def other_extraction() -> None:
        with EXTRACTION_PAUSE:
            entered.set()
            release.wait(timeout=10)

    other = _in_thread(other_extraction)
    assert entered.wait(timeout=10)
    extract_table(PAGE)  # starts and ends while the other thread's extraction runs
    assert not gc.isenabled()
    release.set()
    other.join(timeout=10)
    assert not other.is_alive()
    assert gc.isenabled()


def test_another_thread_finishing_first_does_not_switch_the_collector_on_under_this_one(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    entered, release = threading.Event(), threading.Event()

    def other_extraction() -> None:
        with EXTRACTION_PAUSE:
            entered.set()
            release.wait(timeout=10)

    other = _in_thread(other_extraction)
    assert entered.wait(timeout=10)
    seen: list[bool] = []

    reading = table_module._grid

    def grid_step(*args: Any) -> Grid:
        release.set()  # the other extraction ends while this one is at its grid step
        other.join(timeout=10)
        seen.append(gc.isenabled())
        return reading(*args)

    monkeypatch.setattr(table_module, "_grid", grid_step)
    extract_table(PAGE)
    assert not other.is_alive()
    assert seen == [False]
    assert gc.isenabled()


def test_many_concurrent_extractions_all_run_paused_and_leave_the_collector_on(
    seen_inside: list[bool],
) -> None:
    threads, rounds = 4, 25
    start = threading.Barrier(threads)
    failures: list[BaseException] = []

    def worker() -> None:
        start.wait(timeout=10)
        for round_number in range(rounds):
            try:
                if round_number % 5 == 4:
                    with pytest.raises(ValueParseError):
                        extract_table(PAGE, GOALS_AS_INTEGERS)
                else:
                    extract_table(PAGE)
            except BaseException as exc:  # reported below, in the test's own thread
                failures.append(exc)

    workers = [_in_thread(worker) for _ in range(threads)]
    for thread in workers:
        thread.join(timeout=60)
    assert not any(thread.is_alive() for thread in workers)
    assert failures == []
    assert seen_inside == [False] * (threads * rounds)
    assert gc.isenabled()
