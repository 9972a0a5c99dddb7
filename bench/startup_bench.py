"""Start-up: ``harvester --help`` against a bare interpreter, both started fresh in the same run.

(a) ``python -c pass`` with the same interpreter, the reference; (b) ``harvester --help`` (the
console script beside the interpreter, else ``python -m harvester.cli``); (c) ``harvester
harvest --help``, a command whose run imports the most. They are timed turn about, after one
warm-up round, as wall time from start to exit; medians are printed with b − a and c − a, the
figure the aim is about (≤ 0.3 s over a bare interpreter).

Run: .venv/bin/python bench/startup_bench.py --repeats 21
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import time
from pathlib import Path

AIM_SECONDS = 0.3  # issue 13: start-up within 0.3 s of a bare interpreter


def harvester_command() -> list[str]:
    """The ``harvester`` console script installed beside this interpreter, or ``-m``."""
    script = Path(sys.executable).with_name("harvester")
    return [str(script)] if script.exists() else [sys.executable, "-m", "harvester.cli"]


def wall_seconds(command: list[str]) -> float:
    """Seconds from starting ``command`` to its exit (its output thrown away)."""
    started = time.perf_counter()
    subprocess.run(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True)
    return time.perf_counter() - started


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=21, help="Timed rounds (default 21).")
    options = parser.parse_args()
    harvester = harvester_command()
    commands = {
        "(a) python -c pass": [sys.executable, "-c", "pass"],
        "(b) harvester --help": [*harvester, "--help"],
        "(c) harvester harvest --help": [*harvester, "harvest", "--help"],
    }
    times: dict[str, list[float]] = {name: [] for name in commands}
    for round_number in range(options.repeats + 1):
        for name, command in commands.items():
            seconds = wall_seconds(command)
            if round_number:  # the first round warms the file cache
                times[name].append(seconds)
    medians = {name: statistics.median(found) for name, found in times.items()}
    print(f"{options.repeats} rounds, turn about; medians of wall time, start to exit")
    for name, seconds in medians.items():
        print(f"{name:<30} {seconds * 1000:8.1f} ms")
    bare = medians["(a) python -c pass"]
    for name in ("(b) harvester --help", "(c) harvester harvest --help"):
        over = medians[name] - bare
        verdict = "met" if over <= AIM_SECONDS else "not met"
        aim = f"aim ≤ {AIM_SECONDS * 1000:.0f} ms: {verdict}"
        print(f"{name[:3]} − (a) = {over * 1000:6.1f} ms   ({aim})")


if __name__ == "__main__":
    main()
