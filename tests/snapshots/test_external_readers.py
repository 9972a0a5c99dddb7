"""The snapshot archive read without harvester, as docs/snapshots.md shows it (DuckDB, warcio).

The snippets are taken from the code blocks of docs/snapshots.md marked ``<!-- tested: NAME -->``
and run, from the folder holding ``archive/``, against an archive harvested from the loopback demo
site. Their answers are checked against the demo server's own log and against the rows' own
``_body_sha256``, never against harvester's reader.
"""

from __future__ import annotations

import hashlib
import os
import re
from pathlib import Path

import duckdb
import pytest

from harvester.demo.server import DemoServer
from harvester.recipe import load_recipe
from harvester.run import harvest

DOC = Path(__file__).resolve().parents[2] / "docs" / "snapshots.md"
RECIPES = Path(__file__).resolve().parents[2] / "recipes"


def snippet(name: str) -> str:
    """The one code block of docs/snapshots.md marked ``<!-- tested: name -->``."""
    text = DOC.read_text(encoding="utf-8")
    blocks = re.findall(rf"<!-- tested: {re.escape(name)} -->\n```\w+\n(.*?)\n```", text, re.S)
    assert len(blocks) == 1, f"docs/snapshots.md has {len(blocks)} blocks marked {name!r}"
    return str(blocks[0])


@pytest.fixture
def in_archive_parent(
    demo_site: DemoServer, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> DemoServer:
    recipe = load_recipe(RECIPES / "league-players.toml", {"site": demo_site.base_url})
    harvest(recipe, archive=str(tmp_path / "archive"))
    monkeypatch.chdir(tmp_path)
    return demo_site


def test_duckdb_lists_a_pages_captures_from_the_index(in_archive_parent: DemoServer) -> None:
    rows = duckdb.execute(snippet("duckdb-index")).fetchall()
    (logged,) = in_archive_parent.requests_for("/seasons/2026/players.html")
    ((_, status, record_type, record_id, file, offset),) = rows
    assert (status, record_type) == (logged.status, "response")
    assert record_id.startswith("<urn:uuid:") and record_id.endswith(">")  # WARC 1.1 §5.2
    assert os.path.isfile(f"archive/snapshots/warc/{file}") and offset > 0


def test_warcio_reads_the_record_a_row_names(in_archive_parent: DemoServer) -> None:
    scope: dict[str, object] = {}
    exec(snippet("warcio-record"), scope)  # the documented snippet, run as written
    body = scope["body"]
    assert isinstance(body, bytes)
    assert hashlib.sha256(body).hexdigest() == scope["body_sha256"]
    assert body.startswith(b"<!DOCTYPE html>")
