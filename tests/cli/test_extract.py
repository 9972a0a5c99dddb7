"""The command line, the relied-on forms above all (DESIGN §5), with hand-worked expectations."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import duckdb
import pytest
from typer.testing import CliRunner

from harvester.cli import app

RUNNER = CliRunner()

# Two-row header: "Shooting" spans Goals/Pct; "Player" spans both header rows.
# Body: thousands comma, U+2212 minus, a percent, an em dash, a captain marker, a repeated header
# row in the body, and a tfoot written before tbody (HTML §4.9.12.1: tfoot is processed last).
PAGE = """<!DOCTYPE html><html><body>
<table id="t">
<thead>
<tr><th rowspan="2">Player</th><th colspan="2">Shooting</th><th rowspan="2">Salary</th></tr>
<tr><th>Goals</th><th>Pct</th></tr>
</thead>
<tfoot><tr><td>Totals</td><td>1,262</td><td>—</td><td>—</td></tr></tfoot>
<tbody>
<tr><td><a href="/players/p0001.html">Ada Vorne</a>*</td><td>1,250</td><td>52.5%</td>
<td>$1,250,000</td></tr>
<tr><th>Player</th><th>Goals</th><th>Pct</th><th>Salary</th></tr>
<tr><td>Bo Kelstrom</td><td>\u221212</td><td>—</td><td>$900</td></tr>
</tbody>
</table>
<div id="wrap"><!-- <table id="hidden-in-comment"><tr><td>x</td><td>y</td></tr></table> --></div>
</body></html>
"""


@pytest.fixture
def page(tmp_path: Path) -> Path:
    path = tmp_path / "page.html"
    path.write_text(PAGE, encoding="utf-8")
    return path


def invoke(*args: str) -> tuple[int, str, str]:
    result = RUNNER.invoke(app, list(args))
    return result.exit_code, result.stdout, result.stderr


def test_grid_csv_is_the_span_expanded_grid_with_no_header_line(page: Path) -> None:
    # DESIGN §5 relied-on form; spans expanded per HTML §4.9.12.1 (each covered slot holds the
    # spanning cell's text), tfoot last, no header line of our own.
    code, out, _ = invoke("extract", str(page), "--select", "#t", "--grid", "--format", "csv")
    assert code == 0
    assert list(csv.reader(io.StringIO(out))) == [
        ["Player", "Shooting", "Shooting", "Salary"],
        ["Player", "Goals", "Pct", "Salary"],
        ["Ada Vorne*", "1,250", "52.5%", "$1,250,000"],
        ["Player", "Goals", "Pct", "Salary"],
        ["Bo Kelstrom", "\u221212", "—", "$900"],
        ["Totals", "1,262", "—", "—"],
    ]
    assert "\r" not in out


def test_json_rows_have_collapsed_names_in_column_order_and_typed_values(page: Path) -> None:
    # DESIGN §5 relied-on form: a JSON list of row objects, keys in column order, typed values.
    code, out, _ = invoke(
        "extract", str(page), "--select", "#t", "--header-rows", "2", "--format", "json"
    )
    assert code == 0
    rows = json.loads(out)
    assert [list(row) for row in rows] == [
        ["player", "shooting_goals", "shooting_pct", "salary"]
    ] * 3
    assert rows[0] == {
        "player": "Ada Vorne",
        "shooting_goals": 1250,
        "shooting_pct": 52.5,
        "salary": 1250000.0,
    }
    assert rows[1] == {
        "player": "Bo Kelstrom",
        "shooting_goals": -12,
        "shooting_pct": None,
        "salary": 900.0,
    }
    assert rows[2]["player"] == "Totals"


def test_json_typed_values_are_json_numbers_not_strings(page: Path) -> None:
    _, out, _ = invoke("extract", str(page), "--select", "#t", "--header-rows", "2", "-f", "json")
    assert '"shooting_goals": 1250' in out
    assert isinstance(json.loads(out)[0]["shooting_pct"], float)


def test_table_inside_a_comment_is_found_by_its_wrapper(page: Path) -> None:
    code, out, _ = invoke("extract", str(page), "--select", "#wrap", "--grid", "--format", "csv")
    assert code == 0
    assert out == "x,y\n"


def test_ambiguous_selector_lists_candidates_and_exits_non_zero(page: Path) -> None:
    code, out, err = invoke("extract", str(page), "--select", "table", "--format", "csv")
    assert code == 3
    assert out == ""
    assert err.count("\n") == 1  # one line, no traceback
    assert "matched 2 tables" in err
    assert "table#t" in err and "table#hidden-in-comment" in err and "inside a comment" in err
    assert "--index" in err


def test_index_picks_one_of_several_matches(page: Path) -> None:
    code, out, _ = invoke(
        "extract", str(page), "--select", "table", "--index", "1", "--grid", "-f", "csv"
    )
    assert code == 0
    assert out == "x,y\n"


def test_missing_file_is_a_one_line_usage_error(tmp_path: Path) -> None:
    code, _, err = invoke("extract", str(tmp_path / "nope.html"), "--format", "csv")
    assert code == 2
    assert "nope.html" in err and err.count("\n") == 1


def test_parquet_output_is_readable_by_duckdb(page: Path, tmp_path: Path) -> None:
    target = tmp_path / "out.parquet"
    code, _, _ = invoke(
        "extract",
        str(page),
        "-s",
        "#t",
        "--header-rows",
        "2",
        "-f",
        "parquet",
        "--out",
        str(target),
    )
    assert code == 0
    # DuckDB as an independent Parquet reader.
    rows = (
        duckdb.connect()
        .sql(f"SELECT player, shooting_goals, salary FROM read_parquet('{target}') ORDER BY player")
        .fetchall()
    )
    assert rows == [
        ("Ada Vorne", 1250, 1250000.0),
        ("Bo Kelstrom", -12, 900.0),
        ("Totals", 1262, None),
    ]


def test_parquet_without_out_is_refused(page: Path) -> None:
    code, _, err = invoke("extract", str(page), "-s", "#t", "-f", "parquet")
    assert code == 2
    assert "--out" in err


def test_parquet_into_a_missing_folder_is_a_one_line_error(page: Path, tmp_path: Path) -> None:
    target = tmp_path / "no-such-folder" / "out.parquet"
    code, _, err = invoke("extract", str(page), "-s", "#t", "-f", "parquet", "--out", str(target))
    assert code == 2
    assert "no-such-folder" in err and err.count("\n") == 1
