"""Typing benchmark: whole-column parsing with pyarrow.compute against the per-cell parsers.

Builds columns of cell texts in the shape of a large player table — 18 integer columns
(plain counts, and a few with thousands separators such as "1,250,000" and signed "−12"), two
decimal columns and two percent columns, 5,000 rows each, a few "—" nulls — and times
``convert_column`` over all of them (inferred and declared, then each kind of column alone), as
the median of several repeats with the cyclic collector off, as during an extraction:
  (a) the bulk route (harvester.extract.bulk_numbers), as extraction uses it,
  (b) the per-cell route, forced with ``per_cell_only()``,
turn about in this one run, and prints b/a. The last row times the typing step alone, without
the marker and null handling both routes share: ``bulk_column`` against the parsers plus the
array build; and the very last, ``extract_table`` on bench/extract_bench.py's page (5,000 rows
× 26 columns), both ways. Each row first checks that both routes give equal arrays.

Usage: .venv/bin/python bench/typing_bench.py [--rows 5000] [--repeats 31]
"""

from __future__ import annotations

import argparse
import gc
import importlib
import random
import statistics
import time
from collections.abc import Callable
from functools import partial

import pyarrow as pa

from harvester.extract.arrays import from_values
from harvester.extract.bulk_numbers import bulk_column, per_cell_only
from harvester.extract.parsers import ARROW_TYPES, PARSERS, ParseContext
from harvester.extract.rules import ColumnRule, ColumnType, TableRule
from harvester.extract.table import extract_table
from harvester.extract.values import convert_column

Column = tuple[str, list[str], ColumnType]
PREFIXES = ("count", "grouped", "plus_minus", "decimal", "percent")  # the kinds of column


def build_columns(rows: int, seed: int = 13) -> list[Column]:
    """Deterministic columns: (name, cell texts, the type they hold)."""
    rng = random.Random(seed)
    columns: list[Column] = []
    for x in range(14):  # plain counts: goals, shots, blocks, …
        cells = [str(rng.randint(0, 400)) for _ in range(rows)]
        columns.append((f"count{x}", cells, "integer"))
    for x in range(3):  # minutes and attendances with thousands separators
        cells = [f"{rng.randint(0, 3_000_000):,}" for _ in range(rows)]
        columns.append((f"grouped{x}", cells, "integer"))
    # plus-minus, written with U+2212 MINUS SIGN and a few em-dash nulls
    signed = [f"{n:+d}".replace("-", "\u2212") for n in (rng.randint(-60, 60) for _ in range(rows))]
    for i in range(0, rows, 97):
        signed[i] = "—"
    columns.append(("plus_minus", signed, "integer"))
    for x in range(2):
        cells = [f"{rng.uniform(0, 60):.1f}" for _ in range(rows)]
        columns.append((f"decimal{x}", cells, "decimal"))
    for x in range(2):
        cells = [f"{rng.uniform(0, 100):.1f}%" for _ in range(rows)]
        columns.append((f"percent{x}", cells, "percent"))
    return columns


def convert_all(columns: list[Column], table: TableRule, declared: bool) -> list[pa.Array]:
    """Every column converted, by inference or as declared."""
    out: list[pa.Array] = []
    for name, cells, kind in columns:
        rule = ColumnRule(name, type=kind) if declared else None
        out.append(convert_column(name, cells, rule, table).values)
    return out


def typing_step(columns: list[Column], bulk: bool) -> list[pa.Array]:
    """The typing step alone, as declared: bulk_column, or the parsers and the array build.

    ``columns`` hold no null texts (see ``without_nulls``)."""
    out: list[pa.Array] = []
    for _, cells, kind in columns:
        if bulk:
            result = bulk_column(kind, cells, ".")
            assert result is not None
            out.append(result[1])
        else:
            values, _ = PARSERS[kind](cells, ParseContext(".", infer=False))
            assert values is not None
            out.append(from_values(values, ARROW_TYPES[kind]))
    return out


def without_nulls(columns: list[Column]) -> list[Column]:
    nulls = frozenset(TableRule().nulls)
    return [(name, [c for c in cells if c not in nulls], kind) for name, cells, kind in columns]


def timed_ms(run: Callable[[], list[pa.Array]], runs: list[float]) -> None:
    gc.collect()
    start = time.perf_counter()
    run()
    runs.append((time.perf_counter() - start) * 1e3)


def compare(
    bulk: Callable[[], list[pa.Array]], per_cell: Callable[[], list[pa.Array]], repeats: int
) -> tuple[float, float]:
    """Median milliseconds of (a) ``bulk`` and (b) ``per_cell``, timed turn about with the
    collector off (extraction pauses it), after checking that both give the same arrays."""
    for ours, reference in zip(bulk(), per_cell(), strict=True):
        assert ours.type == reference.type and ours.equals(reference)
    times: tuple[list[float], list[float]] = ([], [])
    gc.disable()
    try:
        for _ in range(repeats):
            timed_ms(bulk, times[0])
            timed_ms(per_cell, times[1])
    finally:
        gc.enable()
    return statistics.median(times[0]), statistics.median(times[1])


def forced(run: Callable[[], list[pa.Array]]) -> Callable[[], list[pa.Array]]:
    def per_cell() -> list[pa.Array]:
        with per_cell_only():
            return run()

    return per_cell


def main() -> None:
    parser = argparse.ArgumentParser(description=(__doc__ or "").splitlines()[0])
    parser.add_argument("--rows", type=int, default=5000)
    parser.add_argument("--repeats", type=int, default=31)
    args = parser.parse_args()
    columns = build_columns(args.rows)
    print(f"{len(columns)} columns × {args.rows} rows; medians of {args.repeats} repeats")
    print(f"{'columns':<26} {'(a) bulk':>10} {'(b) per cell':>13} {'b / a':>7}")
    table = TableRule()
    rows: dict[str, tuple[Callable[[], list[pa.Array]], Callable[[], list[pa.Array]]]] = {}
    for label, declared in (("all, inferred", False), ("all, declared", True)):
        run = partial(convert_all, columns, table, declared)
        rows[label] = run, forced(run)
    for prefix in PREFIXES:
        subset = [c for c in columns if c[0].startswith(prefix)]
        run = partial(convert_all, subset, table, False)
        rows[f"{prefix} ×{len(subset)}, inferred"] = run, forced(run)
    plain = without_nulls(columns)
    rows["typing step alone, all"] = (
        partial(typing_step, plain, True),
        partial(typing_step, plain, False),
    )
    # bench/ is this script's folder, first on sys.path.
    build_page: Callable[[int], str] = importlib.import_module("extract_bench").build_page
    page = build_page(args.rows).encode()

    def whole_page() -> list[pa.Array]:
        return extract_table(page).table.columns  # type: ignore[no-any-return]

    rows["extract_bench's page"] = whole_page, forced(whole_page)
    for label, (bulk, per_cell) in rows.items():
        a, b = compare(bulk, per_cell, args.repeats)
        print(f"{label:<26} {a:7.2f} ms {b:10.2f} ms {b / a:7.2f}")


if __name__ == "__main__":
    main()
