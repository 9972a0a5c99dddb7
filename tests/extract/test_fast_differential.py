"""The compiled fast path against the DOM path, on the same bytes (issue 13, "proof of exactness").

The DOM path (``grid.py`` over lexbor) is the reference; ``forced_path("dom")`` runs only it,
``forced_path("auto")`` lets the fast path read what it accepts. Every page generated in
``html_strategies.py`` and every page of ``tests/data/html`` is read both ways, for every
table on it (and one index past the last), with the default rule and with rule variations,
and the two results must be the same: the grid texts, every field of the ExtractedTable, the
Arrow table (``equals``, the schema with its types and metadata, and its IPC bytes — issue 13
asks for the same table "byte for byte") — or the same exception type, message and hint.
Where the extension is not built, both settings run the DOM path; the comparisons start to
bite the moment the fast path is built (CI runs this file both ways).

The last part pins the DOM path itself against html5lib, a general-purpose implementation of
the WHATWG parsing algorithm (HTML §13.2), on the same generated pages: the tables it builds,
formed into grids by a literal transcription of HTML §4.9.12.1 written here, give the same
cells, texts and captions as ours. And a few hand-worked examples check single rules of the
tokenizer and tree builder on both paths.
"""

from __future__ import annotations

import io
import os
import subprocess
import sys
import xml.etree.ElementTree as ElementTree
from collections.abc import Callable, Iterator
from dataclasses import dataclass, fields
from functools import partial
from pathlib import Path
from typing import Any

import html5lib
import pyarrow as pa
import pytest
from hypothesis import HealthCheck, given, settings

from harvester.extract.fastpath import PATH_ENV, fast_module, forced_path, path_status
from harvester.extract.grid import build_grid
from harvester.extract.rules import ColumnRule, TableRule
from harvester.extract.table import ExtractedTable, extract_grid, extract_table, read_page
from tests.extract.html_strategies import messy_pages, plain_pages

HTML_CORPUS = Path(__file__).parent.parent / "data" / "html"
BASE_URL = "http://127.0.0.1:8650/seasons/2026/standings.html"

# Derandomized so a CI run is repeatable. These counts keep the whole file at 30-40 s on the
# development machine with the extension not built (each example reads every table of its
# page 28 times: 2 grids and 12 rules, both ways); a failure's shrinking takes minutes more.
SETTINGS = settings(
    deadline=None,
    derandomize=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
MESSY_EXAMPLES = 100
PLAIN_EXAMPLES = 150
HTML5LIB_MESSY_EXAMPLES = 40  # html5lib is pure Python: a messy page costs it ~0.3 s
HTML5LIB_PLAIN_EXAMPLES = 100


# --- running one call both ways ---------------------------------------------------------------


@dataclass(frozen=True)
class Raised:
    """An exception as the comparison sees it: its type, message and hint."""

    kind: type[BaseException]
    message: str
    hint: str


def outcome(call: Callable[[], Any]) -> Any:
    """What ``call`` returns, or the exception it raises, as a comparable value."""
    try:
        return call()
    except Exception as error:  # every exception, bugs included, must be the same both ways
        return Raised(type(error), str(error), getattr(error, "hint", ""))


def both_paths(call: Callable[[], Any]) -> tuple[Any, Any]:
    """``call`` under the DOM path only, then under the automatic choice."""
    with forced_path("dom"):
        dom = outcome(call)
    with forced_path("auto"):
        auto = outcome(call)
    return dom, auto


def ipc_bytes(table: pa.Table) -> bytes:
    sink = io.BytesIO()
    with pa.ipc.new_stream(sink, table.schema) as writer:
        writer.write_table(table)
    return sink.getvalue()


def assert_same_table(dom: ExtractedTable, auto: ExtractedTable, what: str) -> None:
    for field in fields(ExtractedTable):
        if field.name != "table":
            assert getattr(auto, field.name) == getattr(dom, field.name), f"{what}: {field.name}"
    schema = [(column.name, column.type) for column in dom.table.schema]
    assert [(column.name, column.type) for column in auto.table.schema] == schema, what
    assert auto.table.schema.equals(dom.table.schema, check_metadata=True), what
    assert auto.table.equals(dom.table, check_metadata=True), what
    assert auto.table.to_pylist() == dom.table.to_pylist(), what
    assert ipc_bytes(auto.table) == ipc_bytes(dom.table), f"{what}: not the same bytes"


def assert_same(dom: Any, auto: Any, what: str) -> None:
    if isinstance(dom, ExtractedTable) and isinstance(auto, ExtractedTable):
        assert_same_table(dom, auto, what)
    else:
        assert auto == dom, what


# --- the rules each table is read with ----------------------------------------------------------


def rule_variations(index: int, first_column: str | None) -> Iterator[tuple[str, TableRule]]:
    """The default rule and a few variations of it, for the table at ``index``."""
    yield "default", TableRule(index=index)
    yield "header_rows=0", TableRule(index=index, header_rows=0)
    yield "header_rows=1", TableRule(index=index, header_rows=1)
    yield "header_rows=2", TableRule(index=index, header_rows=2)
    yield "keep repeated headers", TableRule(index=index, drop_repeated_headers=False)
    yield "hidden=drop", TableRule(index=index, hidden="drop")
    yield "groups as a column", TableRule(index=index, group_rows="column")
    yield (
        "keep groups and empty rows",
        TableRule(index=index, group_rows="keep", drop_empty_rows=False),
    )
    yield "comma decimals", TableRule(index=index, decimal_mark=",")
    yield "text only", TableRule(index=index, infer_types=False)
    # A link column needs a source column: the first one the default rule found, if any; and
    # one naming no column, which must fail the same way on both paths.
    source = first_column or "no_such_column"
    links = (
        ColumnRule(name="link_url", link_of=source),
        ColumnRule(name="link_id", link_of=source, pattern=r"/players/(p\d+)"),
    )
    yield f"link_of={source}", TableRule(index=index, columns=links)
    yield (
        "link_of, header_rows=0",
        TableRule(index=index, header_rows=0, columns=(ColumnRule("u", link_of="column_1"),)),
    )


def compare_page(page: bytes) -> int:
    """Read every table of ``page`` both ways with every rule; the number of reads compared."""
    with forced_path("dom"):
        count = len(read_page(page).tables("table"))
    compared = 0
    for index in range(count + 1):  # one past the last: the same "out of range" error
        for drop_hidden in (False, True):
            dom, auto = both_paths(
                partial(extract_grid, page, "table", index, drop_hidden=drop_hidden)
            )
            assert_same(dom, auto, f"extract_grid index {index} drop_hidden={drop_hidden}")
            compared += 1
        with forced_path("dom"):
            default = outcome(partial(extract_table, page, TableRule(index=index)))
        names = default.table.column_names if isinstance(default, ExtractedTable) else []
        for label, rule in rule_variations(index, names[0] if names else None):
            dom, auto = both_paths(partial(extract_table, page, rule, base_url=BASE_URL))
            assert_same(dom, auto, f"extract_table index {index}, rule {label}")
            compared += 1
    return compared


# --- the differential tests -----------------------------------------------------------------


@settings(SETTINGS, max_examples=MESSY_EXAMPLES)
@given(page=messy_pages())
def test_messy_pages_read_the_same_on_both_paths(page: bytes) -> None:
    compare_page(page)


@settings(SETTINGS, max_examples=PLAIN_EXAMPLES)
@given(page=plain_pages())
def test_plain_pages_read_the_same_on_both_paths(page: bytes) -> None:
    compare_page(page)


CORPUS = sorted(HTML_CORPUS.glob("*.html"))


def test_the_corpus_is_there() -> None:
    # Eleven hand-made edge pages today; the parametrized test below must not run on none.
    assert len(CORPUS) >= 11


@pytest.mark.parametrize("path", CORPUS, ids=[path.name for path in CORPUS])
def test_corpus_pages_read_the_same_on_both_paths(path: Path) -> None:
    compared = compare_page(path.read_bytes())
    assert compared >= 14  # at least the "out of range" reads: the page was really read


# --- the switch -------------------------------------------------------------------------------


def run_python(code: str, environment: dict[str, str]) -> list[str]:
    result = subprocess.run(
        [sys.executable, "-c", code],
        env=environment,
        capture_output=True,
        text=True,
        check=True,
        timeout=60,
    )
    return result.stdout.splitlines()


STATUS_CODE = (
    "from harvester.extract.fastpath import fast_module, path_status\n"
    "print(fast_module() is None)\n"
    "print(path_status())\n"
)


def test_the_environment_variable_turns_the_fast_path_off_for_a_process() -> None:
    environment = {**os.environ, PATH_ENV: "dom"}
    is_none, status = run_python(STATUS_CODE, environment)
    assert is_none == "True"
    assert status == f"DOM path only ({PATH_ENV}=dom)"


def test_without_the_variable_the_status_names_the_path_actually_used() -> None:
    environment = {name: value for name, value in os.environ.items() if name != PATH_ENV}
    is_none, status = run_python(STATUS_CODE, environment)
    if is_none == "True":  # no extension on this machine: the status says why
        assert status.startswith("DOM path only: the extension was not built")
    else:
        assert status == "compiled fast path for plain tables, DOM path for the rest"


def test_forced_dom_path_has_no_fast_module_and_says_so() -> None:
    with forced_path("dom"):
        assert fast_module() is None
        assert path_status().startswith("DOM path only")


def test_forced_path_refuses_an_unknown_path_and_leaves_the_choice_alone() -> None:
    with forced_path("dom"):
        refusal = r"path must be 'dom' or 'auto', not 'bogus'"
        with pytest.raises(ValueError, match=refusal), forced_path("bogus"):
            pass  # never entered
        assert fast_module() is None  # still the DOM path


def test_forced_path_is_undone_after_an_error_in_the_block() -> None:
    with forced_path("dom"):
        with pytest.raises(RuntimeError), forced_path("auto"):
            raise RuntimeError("inside")
        assert fast_module() is None


# --- the DOM path against html5lib (a reference implementation of HTML §13.2) -----------------

_SKIPPED = frozenset({"script", "style", "template"})


def reference_text(element: ElementTree.Element) -> str:
    """The project's cell text on an html5lib element: DOM textContent (§4.9.12 cells), with
    ``br`` as a space and script, style and template left out, whitespace collapsed."""
    parts: list[str] = []

    def walk(node: ElementTree.Element) -> None:
        for child in node:
            tag = child.tag
            if isinstance(tag, str):  # comments and processing instructions are not text
                if tag == "br":
                    parts.append(" ")
                elif tag not in _SKIPPED:
                    parts.append(child.text or "")
                    walk(child)
            parts.append(child.tail or "")

    parts.append(element.text or "")
    walk(element)
    return " ".join("".join(parts).split())  # the project's collapse, NBSP too


@dataclass(frozen=True)
class ReferenceCell:
    text: str
    header: bool


def reference_cells(table: ElementTree.Element) -> list[list[ReferenceCell]]:
    """The table's cells in the order "forming a table" (HTML §4.9.12.1) processes them:
    row groups in tree order with every tfoot last, the tr children of each, the td and th
    children of each row. (The parser puts every row in a row group, §13.2.6.4.9.)"""
    groups = [child for child in table if child.tag in ("thead", "tbody")]
    groups += [child for child in table if child.tag == "tfoot"]
    return [
        [
            ReferenceCell(reference_text(cell), cell.tag == "th")
            for cell in row
            if cell.tag in ("td", "th")
        ]
        for group in groups
        for row in group
        if row.tag == "tr"
    ]


def reference_caption(table: ElementTree.Element) -> str | None:
    captions = [child for child in table if child.tag == "caption"]
    return reference_text(captions[0]) if captions else None


def html5lib_tables(page: bytes) -> list[ElementTree.Element]:
    document = html5lib.parse(page.decode("utf-8"), namespaceHTMLElements=False)
    return list(document.iter("table"))


def our_cells(page: bytes, index: int) -> tuple[list[list[ReferenceCell]], str | None]:
    """Our grid's cells at their anchors, row by row and left to right, and its caption."""
    with forced_path("dom"):
        located = read_page(page).tables("table")[index]
        grid = build_grid(located.node)
    anchored: dict[int, list[ReferenceCell]] = {y: [] for y in range(grid.height)}
    for y, row in enumerate(grid.rows):
        for x, cell in enumerate(row):
            if cell is not None and (cell.x, cell.y) == (x, y):
                anchored[y].append(ReferenceCell(cell.text, cell.header))
    return [anchored[y] for y in range(grid.height)], grid.caption


def page_tables(page: bytes) -> int:
    with forced_path("dom"):
        return sum(1 for table in read_page(page).tables("table") if not table.in_comment)


@settings(SETTINGS, max_examples=HTML5LIB_MESSY_EXAMPLES)
@given(page=messy_pages(invalid_bytes=False, legacy=False, templates=False))
def test_messy_tables_have_the_cells_html5lib_builds(page: bytes) -> None:
    # HTML §13.2.6.4.9 "in table", §13.2.6.4.14 "in row", §13.2.6.4.15 "in cell" decide which
    # cells a table has and what text they hold; §4.9.12.1 the order the grid reads them in.
    # Every cell is anchored in our grid, even one that overlaps another, so the anchored
    # cells in reading order are exactly the cells html5lib's tree has, in its order.
    theirs = html5lib_tables(page)
    assert page_tables(page) == len(theirs)
    for index, table in enumerate(theirs):
        cells, caption = our_cells(page, index)
        expected = reference_cells(table)
        # Our grid has a row for each tr; html5lib's rows, flattened, give the same cells.
        assert [cell for row in cells for cell in row] == [c for row in expected for c in row]
        assert len(cells) == len(expected)
        assert caption == reference_caption(table)


@settings(SETTINGS, max_examples=HTML5LIB_PLAIN_EXAMPLES)
@given(page=plain_pages())
def test_plain_grids_are_html5lib_tables_formed_by_hand(page: bytes) -> None:
    # HTML §4.9.12.1 on a table without spans: row y holds row y's cells from x = 0, and every
    # slot no cell covers (a short row) is empty; the grid is as wide as the widest row.
    theirs = html5lib_tables(page)
    assert page_tables(page) == len(theirs)
    for index, table in enumerate(theirs):
        rows = [[cell.text for cell in row] for row in reference_cells(table)]
        width = max((len(row) for row in rows), default=0)
        expected = [row + [""] * (width - len(row)) for row in rows]
        for path in ("dom", "auto"):
            with forced_path(path):
                assert extract_grid(page, "table", index) == expected, path


# --- single rules, worked by hand, on both paths ------------------------------------------------

# Each: a page, then the grid rows expected, worked out from the section named.
HAND_WORKED: list[tuple[str, bytes, list[list[str]]]] = [
    (
        # §13.2.6.4.9 "in table": a td start tag inserts tbody and tr; §13.2.6.4.15 "in cell":
        # a td or tr start tag closes the open cell.
        "implied row group, row and cell ends",
        b"<table><td>1<td>2<tr><td>3</table>",
        [["1", "2"], ["3", ""]],
    ),
    (
        # §13.2.6.4.9 "anything else": text in the table is foster-parented out of it.
        "foster-parented text",
        b"<table>stray<tr><td>a</td></tr>more</table>",
        [["a"]],
    ),
    (
        # §13.2.5.72-73: "&notin;" is one reference; "&notit;" matches the legacy "&not"
        # (no semicolon) and keeps "it;"; "&amp" without a semicolon is "&".
        "named references with and without semicolons",
        b"<table><tr><td>&notin;</td><td>&notit;</td><td>&amp x</td><td>&ampx</td></tr></table>",
        [["\u2209", "\u00acit;", "& x", "&x"]],
    ),
    (
        # §13.2.5.80 "numeric character reference end state": 0 and surrogates and values past
        # U+10FFFF become U+FFFD; 0x80 maps to U+20AC by the table there; a decimal reference
        # without its semicolon still counts.
        "numeric references the tokenizer replaces",
        b"<table><tr><td>&#0;</td><td>&#x80;</td><td>&#xD800;</td><td>&#x110000;</td>"
        b"<td>&#65</td></tr></table>",
        [["\ufffd", "\u20ac", "\ufffd", "\ufffd", "A"]],
    ),
    (
        # §13.2.6.4.7 "in body" (cell content is parsed in body): a U+0000 NULL character
        # token is ignored.
        "NUL in a cell is dropped",
        b"<table><tr><td>a\x00b</td></tr></table>",
        [["ab"]],
    ),
    (
        # §13.2.6.4.15 "in cell": </table> closes the cell, and so the row and the table.
        "an end tag of the table closes the open cell",
        b"<table><tr><td>a<td>b</table><p>after</p>",
        [["a", "b"]],
    ),
    (
        # §13.2.6.4.9: a comment inside the table is a comment node, not text of any cell.
        "comments are no text",
        b"<table><tr><td>1<!-- x --></td><!-- y --><td>2</td></tr></table>",
        [["1", "2"]],
    ),
]


@pytest.mark.parametrize("path", ["dom", "auto"])
@pytest.mark.parametrize(
    ("page", "expected"),
    [(page, expected) for _, page, expected in HAND_WORKED],
    ids=[name for name, _, _ in HAND_WORKED],
)
def test_hand_worked_parsing_rules(page: bytes, expected: list[list[str]], path: str) -> None:
    with forced_path(path):
        assert extract_grid(page) == expected


@pytest.mark.parametrize("path", ["dom", "auto"])
def test_a_reference_in_an_attribute_followed_by_equals_is_kept(path: str) -> None:
    # §13.2.5.73 "named character reference state": in an attribute value, a match without a
    # semicolon followed by "=" or an alphanumeric is flushed as written ("&copy=2" stays).
    page = (
        b'<table><tr><th>player</th></tr><tr><td><a href="?a=1&copy=2&amp;b">x</a></td></tr>'
        b"</table>"
    )
    rule = TableRule(columns=(ColumnRule(name="url", link_of="player"),))
    with forced_path(path):
        table = extract_table(page, rule).table
    assert table.column("url").to_pylist() == ["?a=1&copy=2&b"]


# Bytes that are not UTF-8 in a page declared UTF-8: the Encoding Standard's UTF-8 decoder
# (§8.1.1) gives one U+FFFD per maximal ill-formed subpart (Unicode §3.9, "U+FFFD
# substitution of maximal subparts"), which is also what Python's "replace" handler does.
INVALID_UTF8 = [
    b"\xed\xa0\x80",  # an encoded surrogate: three U+FFFD
    b"\xc0\xaf",  # an overlong "/": two
    b"\xf0\x9f\x98",  # a four-byte sequence cut short: one
    b"\xf4\x90\x80\x80",  # past U+10FFFF: four
    b"\x80\x80",  # stray continuation bytes: two
    b"\xc3",  # a lead byte before ASCII: one
]


@pytest.mark.parametrize("path", ["dom", "auto"])
@pytest.mark.parametrize("sequence", INVALID_UTF8, ids=[s.hex() for s in INVALID_UTF8])
def test_invalid_utf8_in_a_cell_decodes_as_the_encoding_standard_says(
    sequence: bytes, path: str
) -> None:
    page = b'<meta charset="utf-8"><table><tr><td>a' + sequence + b"b</td></tr></table>"
    with forced_path(path):
        assert extract_grid(page) == [[(b"a" + sequence + b"b").decode("utf-8", "replace")]]
