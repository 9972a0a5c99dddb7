"""Every column type the extractor makes survives the archive, read by us, DuckDB and polars.

The page below is extracted by the real extractor, stored by the real writer, and read back
three ways; the expected values are written out by hand from the page.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import duckdb
import polars as pl
import pyarrow as pa

from harvester import ColumnRule, TableRule, extract_table
from harvester.run.provenance import RowSource, with_provenance
from harvester.store.archive import Archive
from harvester.store.writer import ArchiveWriter

PAGE = """<table id="all">
<thead><tr><th>Name</th><th>Goals</th><th>Rate</th><th>Salary</th><th>Pct</th>
<th>Born</th><th>Min</th><th>Lap</th><th>Captain</th></tr></thead>
<tbody>
<tr><td>Lea Varn*</td><td>1,204</td><td>0.5</td><td>$1,250,000</td><td>12.5%</td>
<td>2001-03-04</td><td>35:20</td><td>1:02.5</td><td>✓</td></tr>
<tr><td>Osk Belund</td><td>−3</td><td>.25</td><td>—</td><td>100%</td>
<td>1999-12-31</td><td>1:00:00</td><td>0:59.0</td><td></td></tr>
</tbody></table>"""

EXPECTED = [
    {
        "name": "Lea Varn",
        "goals": 1204,
        "rate": 0.5,
        "salary": 1250000.0,
        "pct": 12.5,
        "born": dt.date(2001, 3, 4),
        "min": 2120,
        "lap": 62.5,
        "captain": True,
    },
    {
        "name": "Osk Belund",
        "goals": -3,
        "rate": 0.25,
        "salary": None,
        "pct": 100.0,
        "born": dt.date(1999, 12, 31),
        "min": 3600,
        "lap": 59.0,
        "captain": False,
    },
]
TYPES = {
    "name": pa.string(),
    "goals": pa.int64(),
    "rate": pa.float64(),
    "salary": pa.float64(),
    "pct": pa.float64(),
    "born": pa.date32(),
    "min": pa.int64(),
    "lap": pa.float64(),
    "captain": pa.bool_(),
}
CAPTURED = dt.datetime(2026, 12, 1, 22, 0, 0, 123456, tzinfo=dt.UTC)


def store(root: Path) -> None:
    rule = TableRule(
        select="#all",
        columns=(
            ColumnRule(name="salary", type="currency"),
            ColumnRule(name="min", type="duration"),
            ColumnRule(name="lap", type="duration"),
            ColumnRule(name="captain", type="boolean"),
        ),
    )
    extracted = extract_table(PAGE, rule)
    source = RowSource(
        "http://127.0.0.1:8650/all.html",
        "http://127.0.0.1:8650/all.html",
        CAPTURED,
        "live",
        200,
        "ab" * 32,
        "types",
        "cd" * 32,
        "#all",
    )
    data = with_provenance(extracted.table, source, list(extracted.source_rows))
    with ArchiveWriter(str(root)) as writer:
        result = writer.commit(
            "types", "all", [("season", 2026)], data, provenance={"run_id": "r1"}
        )
    assert result.status == "new"


def test_types_survive_our_reader(tmp_path: Path) -> None:
    store(tmp_path)
    table = Archive(str(tmp_path)).read("types", "all")
    for name, kind in TYPES.items():
        assert table.schema.field(name).type == kind, name
    rows = table.select(list(TYPES)).to_pylist()
    assert rows == EXPECTED
    assert table.column("_captured_at").to_pylist() == [CAPTURED, CAPTURED]
    assert table.column("season").to_pylist() == [2026, 2026]


def test_types_survive_duckdb(tmp_path: Path) -> None:
    store(tmp_path)
    pattern = f"{tmp_path}/tables/types/all/*/version=*/part-0.parquet"
    columns = ", ".join(f'"{name}"' for name in TYPES)
    connection = duckdb.connect()  # its own connection: nothing left over from other tests
    relation = connection.sql(
        f"SELECT {columns}, _captured_at, season "
        f"FROM read_parquet('{pattern}', hive_partitioning=true) ORDER BY name"
    )
    # DuckDB's own types for Arrow's: VARCHAR, BIGINT, DOUBLE, DATE, BOOLEAN, TIMESTAMP WITH
    # TIME ZONE, and BIGINT for the hive key (duckdb docs, "Hive partitioning", autocast).
    assert [str(t) for t in relation.types] == [
        "VARCHAR",
        "BIGINT",
        "DOUBLE",
        "DOUBLE",
        "DOUBLE",
        "DATE",
        "BIGINT",
        "DOUBLE",
        "BOOLEAN",
        "TIMESTAMP WITH TIME ZONE",
        "BIGINT",
    ]
    rows = relation.fetchall()
    assert [row[: len(TYPES)] for row in rows] == [tuple(row.values()) for row in EXPECTED]
    assert {row[-1] for row in rows} == {2026}
    connection.close()


def test_types_survive_polars(tmp_path: Path) -> None:
    store(tmp_path)
    files = sorted(tmp_path.glob("tables/types/all/*/version=*/part-0.parquet"))
    frame = pl.read_parquet(files[0]).select(list(TYPES)).sort("name")
    assert frame.schema["born"] == pl.Date
    assert frame.schema["captain"] == pl.Boolean
    assert frame.to_dicts() == EXPECTED
