"""Column names at scale: de-duplication and renames stay linear in the number of columns.

No test here reads a clock: the linear one counts the candidate names the algorithm forms, and
the others check results worked out by hand.
"""

from __future__ import annotations

import pytest

from harvester import ExtractError, TableRule, extract_table
from harvester.extract.headers import deduplicate, rename_columns


class CountedName(str):
    """A name that counts how often it is formatted into a candidate such as ``x_7``."""

    formatted = 0

    def __format__(self, spec: str) -> str:
        CountedName.formatted += 1
        return str.__format__(self, spec)


def test_deduplicate_forms_each_candidate_once() -> None:
    # 2,000 copies of one name take the suffixes 2 … 2,000 in turn. Resuming where the last
    # search stopped forms 1,999 candidates; restarting at 2 each time would form
    # 1 + 2 + … + 1,999 = 1,999,000 of them.
    CountedName.formatted = 0
    names = deduplicate([CountedName("x")] * 2_000)
    assert names == ["x"] + [f"x_{number}" for number in range(2, 2_001)]
    assert CountedName.formatted == 1_999


def test_deduplicate_still_skips_taken_suffixes_when_resuming() -> None:
    # "a_2" and "a_4" are real columns: the repeats of "a" take a_3, then a_5 (a_4 is taken),
    # then a_6; the repeated "a_2" becomes a_2_2.
    names = ["a", "a_2", "a", "a_4", "a", "a", "a_2"]
    assert deduplicate(names) == ["a", "a_2", "a_3", "a_4", "a_5", "a_6", "a_2_2"]


def test_100000_columns_with_one_header_get_numbered_names() -> None:
    # One header row of 100,000 th cells all reading "x", one body row of 100,000 cells "1":
    # the names are x, x_2, …, x_100000, every column an integer column holding 1.
    html = "<table><tr>" + "<th>x</th>" * 100_000 + "</tr><tr>" + "<td>1</td>" * 100_000
    table = extract_table(html + "</tr></table>", TableRule(header_rows=1)).table
    assert table.column_names == ["x"] + [f"x_{number}" for number in range(2, 100_001)]
    assert table.num_rows == 1
    assert table.column("x_100000").to_pylist() == [1]


def test_rename_among_many_columns_finds_the_clash() -> None:
    # 50,000 columns c0 … c49999; renaming c7 to c49999 makes two columns of that name.
    names = [f"c{i}" for i in range(50_000)]
    renamed = rename_columns(names, [("c3", "three")])
    assert renamed[3] == "three" and renamed[:3] == ["c0", "c1", "c2"]
    with pytest.raises(ExtractError, match="rename gives two columns the name c49999"):
        rename_columns(names, [("c7", "c49999")])
