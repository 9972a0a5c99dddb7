"""One hostile site, one run: every bad page is its own failed line, the good ones are stored.

The site is a real loopback server that misbehaves on purpose (tests/fetch/misbehaving.py).
Expected outcomes are worked out from the replies written below.
"""

from __future__ import annotations

import json
from pathlib import Path

import pyarrow.parquet as pq

from harvester import harvest, load_recipe
from harvester.demo.replies import HTML, Reply, page
from tests.fetch.misbehaving import ScriptedSite, html, redirect

TABLE = (
    "<table id='t'><tr><th>club</th><th>goals</th></tr><tr><td>Kalvik</td><td>12</td></tr></table>"
)

SCRIPT = {
    "/good.html": [html(TABLE)],
    # "hex" names no encoding in the WHATWG Encoding Standard, so the label is ignored (§4.2).
    "/header-hex.html": [Reply(200, {"Content-Type": "text/html; charset=hex"}, page("x", TABLE))],
    "/meta-hex.html": [
        Reply(200, {"Content-Type": "text/html"}, b"<meta charset=hex>" + page("x", TABLE))
    ],
    "/script-redirect.html": [redirect("javascript:alert(1)")],
    "/fake-gzip.html": [
        Reply(200, {"Content-Type": HTML, "Content-Encoding": "gzip"}, page("x", TABLE))
    ],
}


def test_each_bad_page_fails_alone_and_the_run_report_is_kept(tmp_path: Path) -> None:
    with ScriptedSite(SCRIPT, crawl_delay=0.01) as site:
        recipe_file = tmp_path / "hostile.toml"
        recipe_file.write_text(
            f'[recipe]\nname = "hostile"\nsite = "{site.base_url}"\n'
            'contact = "mailto:analyst@example.org"\n'
            '[parameters]\npage = ["good", "header-hex", "meta-hex", "script-redirect",'
            ' "fake-gzip"]\n'
            '[fetch]\nurl = "{site}/{page}.html"\n[tables.t]\nselect = "table#t"\n',
            encoding="utf-8",
        )
        archive = tmp_path / "archive"
        report = harvest(load_recipe(recipe_file), archive=str(archive), every_value=True)
    statuses = {outcome.partition["page"]: outcome.status for outcome in report.outcomes}
    assert statuses == {
        "good": "new",
        "header-hex": "new",
        "meta-hex": "new",
        "script-redirect": "failed",
        "fake-gzip": "failed",
    }
    messages = {o.partition["page"]: o.message for o in report.outcomes if o.status == "failed"}
    assert "redirect to an invalid Location" in messages["script-redirect"]
    assert "gzip" in messages["fake-gzip"]
    assert all("\n" not in message and "unexpected" not in message for message in messages.values())
    stored = archive / "tables/hostile/t/page=header-hex/version=1/part-0.parquet"
    assert pq.read_table(stored).select(["club", "goals"]).to_pylist() == [
        {"club": "Kalvik", "goals": 12}
    ]
    (kept,) = (archive / "runs").glob("*.jsonl")
    kinds = [json.loads(line).get("kind") for line in kept.read_text().splitlines()[1:]]
    assert kinds.count("table") == 5  # after the header, one line per table (then requests)
    assert json.loads(kept.read_text().splitlines()[0])["pages_done"] == 5
