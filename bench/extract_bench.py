"""Extraction benchmark: our extractor against pandas.read_html and bare lexbor parsing.

Builds one large page (5,000 body rows × 26 columns, a two-row header repeated every 20 body
rows, about 2 MB) and times, as the median of several repeats in this one run:
  (a) bare lexbor parse of the bytes (selectolax.lexbor.LexborHTMLParser),
  (b) our extraction of the same bytes to a typed Arrow table with collapsed headers, on the
      path in use (the compiled fast path where it is built: docs/extraction.md),
  (b') the same on the DOM path alone (HARVESTER_EXTRACT_PATH=dom),
  (c) pandas.read_html(flavor="lxml") on the same text.
It prints c/b (aim >= 8) and b/a (aim <= 2.5) for both paths, and the peak resident memory of
(b) and (b') measured in a fresh child process, as a multiple of the page size.

It also asks whether pausing the cyclic garbage collector is worth it: (d) the same extraction
without the pause extract_table takes (harvester.extract.collector), with the collector running
as it normally does, and (e) that again with the collector switched off. It prints d/e and the
collections that runs of (d) trigger. (a), (b), (d) and (e) are timed turn about; for (d) and
(e) it shows mean and median, since a full collection comes only every few runs.

With ``--hostile`` it instead reads pages built to hurt an extractor, each in a fresh child
process, and prints the wall time, the peak resident memory and the outcome (the one-line error,
or the table's size): colspan="1000000000" on 20,000 rows, rowspan="0" on 3,000 rows, one row
of 100,000 cells under 100,000 equal header cells, and a selector that misses on a page of
50,000 tables. The aim for each is well under 20 s and 1.5 GB, and no traceback.

Usage: .venv/bin/python bench/extract_bench.py [--rows 5000] [--repeats 5] [--hostile]
"""

from __future__ import annotations

import argparse
import gc
import io
import os
import random
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Sequence

GROUPS = (
    ("Shooting", ("Goals", "Shots", "Pct")),
    ("7m", ("Goals", "Shots", "Pct")),
    ("Wings", ("Goals", "Shots")),
    ("Back court", ("Goals", "Shots")),
    ("Pivot", ("Goals", "Shots")),
    ("Fast break", ("Goals", "Shots")),
    ("Defence", ("Blocks", "Steals", "Turnovers")),
    ("Discipline", ("Warnings", "Suspensions", "Red cards")),
)
SINGLE = ("Player", "Club", "Pos", "GP", "Min", "Ast")


def build_page(rows: int, seed: int = 11) -> str:
    """A deterministic page in the shape of the demo league's player table, but large."""
    rng = random.Random(seed)
    head1 = "".join(f'<th rowspan="2">{name}</th>' for name in SINGLE[:5])
    head1 += "".join(f'<th colspan="{len(subs)}">{group}</th>' for group, subs in GROUPS)
    head1 += f'<th rowspan="2">{SINGLE[5]}</th>'
    head2 = "".join(f"<th>{sub}</th>" for _, subs in GROUPS for sub in subs)
    header = f"<tr>{head1}</tr><tr>{head2}</tr>"
    repeat = f'<tr class="over-header">{head1}</tr><tr class="over-header">{head2}</tr>'
    body: list[str] = []
    for i in range(rows):
        if i and i % 20 == 0:
            body.append(repeat)
        marker = "*" if rng.random() < 0.08 else ""
        cells = [
            f'<td><a href="/players/p{i:05d}.html">Player {i}</a>{marker}</td>',
            f"<td>C{rng.randrange(10):02d}</td>",
            f"<td>{rng.choice(('GK', 'LW', 'RW', 'LB', 'CB', 'RB', 'PV'))}</td>",
            f"<td>{rng.randrange(1, 40)}</td>",
            f"<td>{rng.randrange(0, 2400)}:{rng.randrange(60):02d}</td>",
        ]
        for _, subs in GROUPS:
            for sub in subs:
                if sub == "Pct":
                    value = "—" if rng.random() < 0.05 else f"{rng.uniform(0, 100):.1f}%"
                else:
                    value = f"{rng.randrange(0, 3000):,}"
                cells.append(f"<td>{value}</td>")
        cells.append(f"<td>{rng.randrange(0, 200)}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    return (
        '<!DOCTYPE html><html><head><meta charset="utf-8"><title>bench</title></head><body>'
        f'<table id="players"><thead>{header}</thead><tbody>{"".join(body)}</tbody></table>'
        "</body></html>"
    )


def read_with_pandas(html: str) -> list[object]:
    """The reference: pandas.read_html with lxml, both header rows as a MultiIndex."""
    import pandas as pd

    frames: list[object] = pd.read_html(
        io.StringIO(html), flavor="lxml", attrs={"id": "players"}, header=[0, 1]
    )
    return frames


def median_seconds(action: Callable[[], object], repeats: int) -> float:
    """Median wall time of ``repeats`` runs of ``action`` (after one warm-up run)."""
    action()
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        action()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def alternating_times(actions: Sequence[Callable[[], object]], repeats: int) -> list[list[float]]:
    """Wall times of ``repeats`` runs of each action (after one warm-up), run turn about.

    Taking turns spreads changes in the machine's load over all the actions alike.
    """
    for action in actions:
        action()
    times: list[list[float]] = [[] for _ in actions]
    for _ in range(repeats):
        for action, spent in zip(actions, times, strict=True):
            start = time.perf_counter()
            action()
            spent.append(time.perf_counter() - start)
    return times


def with_collector_off(action: Callable[[], object]) -> Callable[[], object]:
    """``action`` run with the cyclic collector switched off, and its state restored after."""

    def run() -> object:
        was_enabled = gc.isenabled()
        gc.disable()
        try:
            return action()
        finally:
            if was_enabled:
                gc.enable()

    return run


def collections_during(action: Callable[[], object], runs: int) -> tuple[dict[int, int], float]:
    """Collections of each generation that ``runs`` runs of ``action`` trigger, and their time."""
    counts: dict[int, int] = {}
    spent = [0.0, 0.0]  # start of the current collection, total so far

    def note(phase: str, info: dict[str, int]) -> None:
        if phase == "start":
            spent[0] = time.perf_counter()
        else:
            spent[1] += time.perf_counter() - spent[0]
            counts[info["generation"]] = counts.get(info["generation"], 0) + 1

    gc.callbacks.append(note)
    try:
        for _ in range(runs):
            action()
    finally:
        gc.callbacks.remove(note)
    return dict(sorted(counts.items())), spent[1]


# proc(5): a field of /proc/self/status in kB (VmRSS, VmHWM), for the child scripts below.
_STATUS_FUNCTION = """
def status(field):
    with open("/proc/self/status") as f:
        for line in f:
            if line.startswith(field + ":"):
                return int(line.split()[1])
"""

_PEAK_SCRIPT = (
    """
import sys
from harvester import TableRule, extract_table
"""
    + _STATUS_FUNCTION
    + """
data = open(sys.argv[1], "rb").read()
extract_table(data[:4096] + b"</table>", TableRule(select="table#players", header_rows=2))
with open("/proc/self/clear_refs", "w") as f:
    f.write("5")  # Linux: reset the peak RSS (VmHWM) to the current RSS
before = status("VmRSS")
extract_table(data, TableRule(select="table#players", header_rows=2))
print(before, status("VmHWM"))
"""
)


def peak_memory_kib(data: bytes, path: str = "auto") -> tuple[int, int]:
    """RSS before and peak RSS during one extraction of ``data`` (KiB), in a fresh process,
    on the extraction ``path`` ("auto" or "dom")."""
    with tempfile.NamedTemporaryFile(suffix=".html") as page:
        page.write(data)
        page.flush()
        out = subprocess.run(
            [sys.executable, "-c", _PEAK_SCRIPT, page.name],
            capture_output=True,
            text=True,
            check=True,
            env={**os.environ, "HARVESTER_EXTRACT_PATH": path},
        )
    before, after = out.stdout.split()
    return int(before), int(after)


def hostile_pages() -> dict[str, tuple[str, str]]:
    """Pages built to hurt an extractor, each with the selector to ask for."""
    wide_row = "<tr>" + "<th>x</th>" * 100_000 + "</tr><tr>" + "<td>1</td>" * 100_000 + "</tr>"
    many = "".join(f'<table class="t"><tr><td>{i}</td></tr></table>' for i in range(50_000))
    return {
        'colspan="1000000000" × 20,000 rows': (
            "<table>" + '<tr><td colspan="1000000000">x</td></tr>' * 20_000 + "</table>",
            "table",
        ),
        'rowspan="0" × 3,000 rows': (
            "<table>" + '<tr><td rowspan="0">x</td></tr>' * 3_000 + "</table>",
            "table",
        ),
        "one row of 100,000 cells, all headers 'x'": (f"<table>{wide_row}</table>", "table"),
        "50,000 tables, a selector that misses": (many, "table#missing"),
    }


_HOSTILE_SCRIPT = (
    """
import sys, time
from harvester import HarvesterError, TableRule, extract_table
"""
    + _STATUS_FUNCTION
    + """
data = open(sys.argv[1], "rb").read()
start = time.perf_counter()
try:
    table = extract_table(data, TableRule(select=sys.argv[2], header_rows=1)).table
    outcome = f"read: {table.num_rows} rows × {table.num_columns} columns"
except HarvesterError as error:
    text = str(error)
    outcome = f"error ({len(text):,} characters): {text[:150]}…"
print(f"{time.perf_counter() - start:.2f} {status('VmHWM')} {outcome}")
"""
)


def report_hostile() -> None:
    """Read each hostile page in a fresh process; print time, peak memory and the outcome."""
    for label, (html, select) in hostile_pages().items():
        with tempfile.NamedTemporaryFile(suffix=".html") as page:
            page.write(html.encode())
            page.flush()
            out = subprocess.run(
                [sys.executable, "-c", _HOSTILE_SCRIPT, page.name, select],
                capture_output=True,
                text=True,
                check=False,
            )
        if out.returncode != 0:
            print(f"{label}: FAILED, exit {out.returncode}: {out.stderr.strip()[-300:]}")
            continue
        seconds, peak_kib, outcome = out.stdout.strip().split(" ", 2)
        print(f"{label} ({len(html) / 1000:,.0f} KB):")
        print(f"  {float(seconds):6.2f} s, peak RSS {int(peak_kib) / 1024:,.0f} MiB; {outcome}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=5000)
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument(
        "--memory-rows",
        type=int,
        default=125_000,
        help="rows of the page for the memory figure (125,000 rows is about 50 MB)",
    )
    parser.add_argument(
        "--hostile", action="store_true", help="time the hostile pages instead (see above)"
    )
    args = parser.parse_args()
    if args.hostile:
        report_hostile()
        return

    from selectolax.lexbor import LexborHTMLParser

    from harvester import TableRule, extract_table, read_page
    from harvester.extract.fastpath import forced_path, path_status
    from harvester.extract.table import _extract_table  # the pipeline without the pause

    html = build_page(args.rows)
    data = html.encode()
    rule = TableRule(select="table#players", header_rows=2)
    result = extract_table(html, rule)
    frames = read_with_pandas(html)
    print(
        f"page: {len(data) / 1e6:.2f} MB, {args.rows} body rows, {result.table.num_columns} columns"
    )
    print(f"ours: {result.table.num_rows} rows; pandas.read_html: {len(frames[0])} rows")  # type: ignore[arg-type]
    print(f"extraction path: {path_status()}")

    def on_the_dom_path() -> object:
        with forced_path("dom"):
            return extract_table(data, rule)

    def unpaused() -> object:
        return _extract_table(read_page(data), rule, None)

    # (a), (b), (d) and (e) run turn about, so the ratios between them compare like with like.
    parse_times, our_times, dom_times, running_times, off_times = alternating_times(
        [
            lambda: LexborHTMLParser(data),
            lambda: extract_table(data, rule),  # bytes, as fetched
            on_the_dom_path,
            unpaused,
            with_collector_off(unpaused),
        ],
        args.repeats,
    )
    parse, ours = statistics.median(parse_times), statistics.median(our_times)
    dom = statistics.median(dom_times)
    reference = median_seconds(lambda: read_with_pandas(html), max(1, args.repeats // 2))
    print(f"(a)  bare lexbor parse           {parse * 1000:9.1f} ms")
    print(f"(b)  harvester, path in use      {ours * 1000:9.1f} ms")
    print(f"(b') harvester, DOM path alone   {dom * 1000:9.1f} ms")
    print(f"(c)  pandas.read_html(lxml)      {reference * 1000:9.1f} ms")
    print(f"c/b  = {reference / ours:.1f}   c/b' = {reference / dom:.1f}   (aim >= 8)")
    print(f"b/a  = {ours / parse:.2f}  b'/a = {dom / parse:.2f}   (aim <= 2.5)")

    report_collector(unpaused, running_times, off_times, args.repeats)
    report_memory(data, args.rows, args.memory_rows)


def report_collector(
    unpaused: Callable[[], object],
    running_times: list[float],
    off_times: list[float],
    repeats: int,
) -> None:
    """Print (d) against (e), and how many collections a run of (d) sets off."""
    counts, collecting = collections_during(unpaused, repeats)
    print(f"collector, without extract_table's pause ({len(gc.get_objects()):,} objects tracked):")
    # A full collection comes only every few runs, so the mean is what a long harvest pays;
    # the median shows a typical run.
    for label, spent in (
        ("(d) collector running     ", running_times),
        ("(e) collector switched off", off_times),
    ):
        print(
            f"  {label} median {statistics.median(spent) * 1000:7.1f} ms, "
            f"mean {statistics.mean(spent) * 1000:7.1f} ms"
        )
    medians = statistics.median(running_times) / statistics.median(off_times)
    means = statistics.mean(running_times) / statistics.mean(off_times)
    print(f"  d/e = {medians:.2f} (medians), {means:.2f} (means)")
    shown = ", ".join(f"generation {generation}: {n}" for generation, n in counts.items())
    print(
        f"  {repeats} more runs of (d): {shown or 'no collections'}; "
        f"{collecting / repeats * 1000:.1f} ms collecting per run"
    )


def report_memory(data: bytes, rows: int, memory_rows: int) -> None:
    """Print peak memory against page size, for the timed page and for a large one."""
    for count in (rows, memory_rows):
        page = data if count == rows else build_page(count).encode()
        for path in ("auto", "dom"):
            before, peak = peak_memory_kib(page, path)
            which = "path in use" if path == "auto" else "DOM path"
            print(
                f"memory, {len(page) / 1e6:.1f} MB page, {which}: "
                f"peak RSS {peak / 1024:.0f} MiB, {(peak - before) / 1024:.0f} MiB above the "
                f"process before extraction; growth / page size = "
                f"{(peak - before) * 1024 / len(page):.1f}   (aim <= 6)"
            )


if __name__ == "__main__":
    main()
