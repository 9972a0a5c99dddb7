"""`harvester captures`: the relied-on JSON form (issue 10) against real loopback archives.

Two archives: the demo web archive (its captures listed by its own API), and a bare server
that serves REFERENCES.md §4.4's example TimeMap (made-up hosts, datetimes as published) so the
§4.5 worked example can be checked as written: target 2023-01-01 → the 2023-05-20 memento,
2021-06-01 → the first, 2026-01-01 → the last.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import threading
from collections.abc import Iterator
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import ClassVar

import pytest

from harvester._version import __version__
from harvester.demo.web_archive import DemoWebArchive

ORIGINAL = "https://stats.example.org/tables/population.html"
# REFERENCES.md §4.4 (RFC 7089 §5 serialisation), hosts as published there.
TIMEMAP = """<https://stats.example.org/tables/population.html>; rel="original",
<https://archive.example.net/timemap/link/https://stats.example.org/tables/population.html>
  ; rel="self"; type="application/link-format"
  ; from="Mon, 03 Jan 2022 09:15:00 GMT"; until="Fri, 14 Jun 2024 17:40:12 GMT",
<https://archive.example.net/timegate/https://stats.example.org/tables/population.html>
  ; rel="timegate",
<https://archive.example.net/m/20220103091500/https://stats.example.org/tables/population.html>
  ; rel="first memento"; datetime="Mon, 03 Jan 2022 09:15:00 GMT",
<https://archive.example.net/m/20230520121005/https://stats.example.org/tables/population.html>
  ; rel="memento"; datetime="Sat, 20 May 2023 12:10:05 GMT",
<https://archive.example.net/m/20240614174012/https://stats.example.org/tables/population.html>
  ; rel="last memento"; datetime="Fri, 14 Jun 2024 17:40:12 GMT"
"""
MEMENTO = "https://archive.example.net/m/{}/" + ORIGINAL


class _TimeMapHandler(BaseHTTPRequestHandler):
    seen: ClassVar[list[tuple[str, str]]] = []

    def do_GET(self) -> None:
        type(self).seen.append((self.path, self.headers.get("User-Agent", "")))
        if self.path == "/robots.txt":
            body, kind, status = b"User-agent: *\nAllow: /\n", "text/plain", 200
        elif self.path == f"/tm/{ORIGINAL}":
            body, kind, status = TIMEMAP.encode(), "application/link-format", 200
        else:
            body, kind, status = b"not here", "text/plain", 404
        self.send_response(status)
        self.send_header("Content-Type", kind)
        self.send_header("Content-Length", str(len(body)))
        self.end_headers()
        self.wfile.write(body)

    def log_message(self, format: str, *args: object) -> None:
        pass


@pytest.fixture
def bare_archive() -> Iterator[str]:
    server = ThreadingHTTPServer(("127.0.0.1", 0), _TimeMapHandler)
    _TimeMapHandler.seen = []
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.server_address[1]}"
    finally:
        server.shutdown()
        server.server_close()


def captures(*args: str, contact: bool = False) -> subprocess.CompletedProcess[str]:
    env = {k: v for k, v in os.environ.items() if k not in ("HARVESTER_CONTACT",)}
    env["HARVESTER_CONFIG"] = os.devnull + ".absent"  # no user config
    if contact:
        env["HARVESTER_CONTACT"] = "mailto:analyst@example.org"
    return subprocess.run(
        [sys.executable, "-m", "harvester.cli", "captures", *args],
        capture_output=True,
        text=True,
        env=env,
        timeout=60,
        check=False,
    )


@pytest.mark.parametrize(
    ("near", "chosen"),
    [
        ("2023-01-01", "20230520121005"),  # §4.5: 139 d 12:10:05 against 362 d 14:45:00
        ("2021-06-01", "20220103091500"),  # before the first: the first (RFC 7089 §4.5.3)
        ("2026-01-01", "20240614174012"),  # after the last: the last (RFC 7089 §4.5.3)
    ],
)
def test_the_worked_example_chooses_as_published(bare_archive: str, near: str, chosen: str) -> None:
    done = captures(
        ORIGINAL, "--timemap", bare_archive + "/tm/{url}", "--near", near, "--format", "json"
    )
    assert done.returncode == 0, done.stderr
    rows = json.loads(done.stdout)
    assert rows == [
        {
            "datetime": "2022-01-03T09:15:00Z",
            "uri": MEMENTO.format("20220103091500"),
            "chosen": chosen == "20220103091500",
        },
        {
            "datetime": "2023-05-20T12:10:05Z",
            "uri": MEMENTO.format("20230520121005"),
            "chosen": chosen == "20230520121005",
        },
        {
            "datetime": "2024-06-14T17:40:12Z",
            "uri": MEMENTO.format("20240614174012"),
            "chosen": chosen == "20240614174012",
        },
    ]


def test_only_robots_txt_and_the_timemap_are_asked_for(bare_archive: str) -> None:
    done = captures(ORIGINAL, "--timemap", bare_archive + "/tm/{url}", "--near", "2023-01-01")
    assert done.returncode == 0, done.stderr
    paths = [path for path, _ in _TimeMapHandler.seen]
    assert paths == ["/robots.txt", f"/tm/{ORIGINAL}"]  # RFC 9309 §2.3: robots.txt first
    # Without a contact the look-up still names the product and version (RFC 9110 §10.1.5).
    assert {agent for _, agent in _TimeMapHandler.seen} == {f"harvester/{__version__}"}
    # Text form: DATETIME<TAB>URI, a third column on the chosen one.
    lines = [line.split("\t") for line in done.stdout.splitlines()]
    assert lines[1] == ["2023-05-20T12:10:05Z", MEMENTO.format("20230520121005"), "chosen"]
    assert len(lines[0]) == 2 and len(lines[2]) == 2


def test_the_demo_archive_lists_its_captures_in_order(demo_archive: DemoWebArchive) -> None:
    page = demo_archive.uri_r(2019, "players")
    template = demo_archive.base_url + "/timemap/{url}"
    done = captures(page, "--timemap", template, "--near", "2019-06-30", "--format", "json")
    assert done.returncode == 0, done.stderr
    rows = json.loads(done.stdout)
    listed = demo_archive.captures(page)
    assert [row["uri"] for row in rows] == [capture.uri_m for capture in listed]
    assert [row["datetime"] for row in rows] == [
        capture.datetime.strftime("%Y-%m-%dT%H:%M:%SZ") for capture in listed
    ]
    # June 28 14:05:09 is 33 h 54 min 51 s before the target, July 3 80 h 30 min after.
    assert [row["chosen"] for row in rows] == [False, True, False, False]
    before = captures(
        page, "--timemap", template, "--near", "2019-07-10", "--rule", "before", "--format", "json"
    )
    assert [row["chosen"] for row in json.loads(before.stdout)] == [False, False, True, False]
    none = captures(
        page, "--timemap", template, "--near", "2019-09-01", "--within", "1d", "--format", "json"
    )
    assert none.returncode == 0
    assert not any(row["chosen"] for row in json.loads(none.stdout))
    assert "no capture satisfies" not in none.stderr  # json output says it by chosen alone


def test_bad_options_are_one_line_errors(bare_archive: str) -> None:
    no_archive = captures(ORIGINAL)
    assert no_archive.returncode == 2
    assert no_archive.stderr.count("\n") == 1 and "--timemap" in no_archive.stderr
    bad_date = captures(ORIGINAL, "--timemap", bare_archive + "/tm/{url}", "--near", "June")
    assert bad_date.returncode == 2 and "--near" in bad_date.stderr
    no_placeholder = captures(ORIGINAL, "--timemap", bare_archive + "/tm/")
    assert no_placeholder.returncode == 2 and "{url}" in no_placeholder.stderr
    unknown = captures(
        "https://stats.example.org/other.html", "--timemap", bare_archive + "/tm/{url}"
    )
    assert unknown.returncode == 0  # a 404 TimeMap: the archive holds no capture of it
    assert unknown.stdout == "" and "no captures listed" in unknown.stderr
