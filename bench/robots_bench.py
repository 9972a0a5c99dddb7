"""robots.txt on hostile input: times that tests must not assert, printed as ratios.

(a) a 40-wildcard pattern against a 20,000-character path, against (b) a plain prefix rule on
the same path; (c) parsing a 10 MiB file (only the first 512,000 octets count, RFC 9309 §2.5),
against (d) urllib.robotparser reading the same 512,000 octets — a reference measured here.

Run: .venv/bin/python bench/robots_bench.py
"""

from __future__ import annotations

import statistics
import time
import urllib.robotparser
from collections.abc import Callable

from harvester.fetch.limits import ROBOTS_PARSE_LIMIT
from harvester.fetch.robots import RobotsTxt


def median_seconds(action: Callable[[], object], repeats: int = 5) -> float:
    """The median wall time of ``action`` over ``repeats`` runs."""
    times = []
    for _ in range(repeats):
        started = time.perf_counter()
        action()
        times.append(time.perf_counter() - started)
    return statistics.median(times)


def main() -> None:
    path = "/" + "a" * 20_000 + "c"
    hostile = RobotsTxt.parse("User-agent: *\nDisallow: /" + "*a" * 40 + "*b$\n")
    plain = RobotsTxt.parse("User-agent: *\nDisallow: /private/\n")
    wildcard = median_seconds(lambda: hostile.check(path, "harvester"))
    prefix = median_seconds(lambda: plain.check(path, "harvester"))
    print(f"(a) 40-wildcard rule, 20,000-char path {wildcard * 1000:9.3f} ms")
    print(f"(b) plain prefix rule, same path       {prefix * 1000:9.3f} ms")
    print(f"a/b = {wildcard / prefix:.1f}   (a backtracking matcher would not finish)")

    data = b"User-agent: *\n" + b"Disallow: /0123456789/abcdefghij\n" * (10 * 2**20 // 33)
    ours = median_seconds(lambda: RobotsTxt.parse(data), 3)
    lines = data[:ROBOTS_PARSE_LIMIT].decode("ascii").splitlines()

    def stdlib() -> None:
        parser = urllib.robotparser.RobotFileParser()
        parser.parse(lines)

    reference = median_seconds(stdlib, 3)
    print(f"(c) ours, 10 MiB file                  {ours * 1000:9.1f} ms")
    print(f"(d) urllib.robotparser, first 512,000  {reference * 1000:9.1f} ms")
    print(f"c/d = {ours / reference:.2f}")


if __name__ == "__main__":
    main()
