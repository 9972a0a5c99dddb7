"""Write grids and typed tables as CSV, JSON, Parquet or a terminal table (only the CLI draws)."""

from __future__ import annotations

import csv
import json
from collections.abc import Sequence
from pathlib import Path
from typing import Any, TextIO

import pyarrow as pa
import pyarrow.parquet as pq

from harvester.formats import json_value

__all__ = [
    "grid_to_csv",
    "grid_to_json",
    "table_rows",
    "table_to_csv",
    "table_to_json",
    "table_to_rich",
    "write_parquet",
]


def grid_to_csv(grid: Sequence[Sequence[str]], out: TextIO) -> None:
    """Write a grid as CSV with no header line (RFC 4180 quoting, ``\\n`` line ends)."""
    writer = csv.writer(out, lineterminator="\n")
    writer.writerows(grid)


def grid_to_json(grid: Sequence[Sequence[str]], out: TextIO) -> None:
    """Write a grid as a JSON list of rows, each a list of slot texts."""
    json.dump([list(row) for row in grid], out, ensure_ascii=False)
    out.write("\n")


def table_rows(table: pa.Table) -> list[dict[str, Any]]:
    """The table as a list of row objects, keys in column order, values as plain JSON values."""
    names = table.column_names
    columns = [table.column(i).to_pylist() for i in range(table.num_columns)]
    return [
        {name: json_value(column[i]) for name, column in zip(names, columns, strict=True)}
        for i in range(table.num_rows)
    ]


def table_to_json(table: pa.Table, out: TextIO) -> None:
    """Write a typed table as a JSON list of row objects (nulls as ``null``)."""
    json.dump(table_rows(table), out, ensure_ascii=False)
    out.write("\n")


def table_to_csv(table: pa.Table, out: TextIO) -> None:
    """Write a typed table as CSV with a header line; nulls are empty fields."""
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(table.column_names)
    for row in table_rows(table):
        writer.writerow(["" if value is None else value for value in row.values()])


def write_parquet(table: pa.Table, path: Path) -> None:
    """Write a typed table to one Parquet file."""
    pq.write_table(table, path)


def table_to_rich(
    rows: Sequence[Sequence[Any]], headers: Sequence[str] | None, out: TextIO, title: str = ""
) -> None:
    """Draw rows as a terminal table (rich), with ``headers`` when given."""
    from rich.console import Console
    from rich.table import Table

    view = Table(title=title or None, show_header=headers is not None)
    columns = max((len(row) for row in rows), default=len(headers or ()))
    for i in range(columns):
        view.add_column(headers[i] if headers is not None else str(i))
    for row in rows:
        view.add_row(*("" if value is None else str(value) for value in row))
    # Piped output gets a generous width instead of rich's 80 columns, so no cell is cut.
    Console(file=out, width=None if out.isatty() else 240).print(view)
