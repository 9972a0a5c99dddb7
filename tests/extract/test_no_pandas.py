"""Extraction never imports pandas (issue 13 item 4): checked in a fresh interpreter.

pyarrow's ``pa.array`` on a plain list asks its pandas shim whether the list is a pandas object,
which imports pandas; the control below shows that this check sees that import on this pyarrow.
"""

from __future__ import annotations

import importlib.util
import json
import subprocess
import sys

# One table with a column of every type the typed-column builders make: text with markers kept,
# grouped and signed integers (the bulk route), a decimal, a percent, a duration, a date,
# a declared boolean, and em-dash nulls.
EXTRACT = r"""
import json, sys
from harvester.extract.rules import ColumnRule, TableRule
from harvester.extract.table import extract_table

page = '''<table><tr><th>Player</th><th>Goals</th><th>Rating</th><th>Pct</th><th>Time</th>
<th>Born</th><th>Captain</th><th>Diff</th></tr>
<tr><td>Lea Varn*</td><td>1,204</td><td>7.5</td><td>52.5%</td><td>12:30</td>
<td>2001-04-17</td><td>✓</td><td>−3</td></tr>
<tr><td>Osk Belund</td><td>87</td><td>6.25</td><td>40%</td><td>1:02:03</td>
<td>1999-12-31</td><td></td><td>—</td></tr></table>'''
rule = TableRule(columns=(
    ColumnRule("player", markers_to="flags"), ColumnRule("captain", type="boolean"),
))
table = extract_table(page, rule).table
print(json.dumps({
    "pandas": "pandas" in sys.modules,
    "types": {name: str(table.schema.field(name).type) for name in table.column_names},
}))
"""

# The derived columns: a link column, group labels as a column, a person key and code names.
DERIVED = r"""
import json, sys, tempfile, pathlib
from harvester.extract.rules import ColumnRule, TableRule
from harvester.extract.table import extract_table

page = '''<table><tr><th>Player</th><th>Club</th></tr>
<tr><th colspan=2>East</th></tr>
<tr><td><a href="/p/1">Varn, Lea</a></td><td>VRE</td></tr>
<tr><td><a href="/p/2">Osk Belund</a></td><td>ZZZ</td></tr></table>'''
rule = TableRule(group_rows="column", columns=(
    ColumnRule("player", person_key=True),
    ColumnRule("club", codes="clubs.csv", code_names=(("VRE", "HC Vrelmark"),)),
    ColumnRule("link", link_of="player"),
))
found = extract_table(page, rule)
print(json.dumps({
    "pandas": "pandas" in sys.modules,
    "rows": found.table.to_pylist(),
}))
"""

CONTROL = r"""
import json, sys
import pyarrow as pa
pa.array(["Lea Varn"], type=pa.string())
print(json.dumps({"pandas": "pandas" in sys.modules}))
"""


def _run(script: str) -> dict[str, object]:
    done = subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, check=True, timeout=120
    )
    result: dict[str, object] = json.loads(done.stdout)
    return result


def test_pandas_is_installed_so_the_check_means_something() -> None:
    assert importlib.util.find_spec("pandas") is not None


def test_the_check_sees_pyarrow_import_pandas_for_a_plain_list() -> None:
    # pyarrow 26 array.pxi: _is_array_like() asks pandas_api, which imports pandas.
    assert _run(CONTROL)["pandas"] is True


def test_extracting_a_table_leaves_pandas_unimported() -> None:
    result = _run(EXTRACT)
    assert result["types"] == {
        "player": "string",
        "flags": "string",
        "goals": "int64",
        "rating": "double",
        "pct": "double",
        "time": "int64",
        "born": "date32[day]",
        "captain": "bool",
        "diff": "int64",
    }
    assert result["pandas"] is False


def test_derived_columns_leave_pandas_unimported_too() -> None:
    result = _run(DERIVED)
    assert result["rows"] == [
        {"group": "East", "player": "Varn, Lea", "player_key": "lea varn", "club": "VRE",
         "club_name": "HC Vrelmark", "link": "/p/1"},
        {"group": "East", "player": "Osk Belund", "player_key": "osk belund", "club": "ZZZ",
         "club_name": None, "link": "/p/2"},
    ]  # fmt: skip
    assert result["pandas"] is False
