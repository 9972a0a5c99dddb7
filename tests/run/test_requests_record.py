"""Reading the request record from run reports written by hand: summaries, damage, host names.

The end-to-end checks against the demo server are in tests/cli/test_requests.py; here the
reports are small files whose every value is written out, so each expected line is too.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from harvester.errors import StoreError
from harvester.run.requests_record import host_matches, request_history

HOST = "http://127.0.0.1:8650"


def write_run(archive: Path, run_id: str, gaps: list[float | None], interval: float) -> None:
    header = {
        "run_id": run_id,
        "hosts": {HOST: {"requests": len(gaps), "interval_seconds": interval}},
    }
    lines = [json.dumps(header), json.dumps({"kind": "table", "table": "t", "status": "new"})]
    for second, gap in enumerate(gaps):
        lines.append(json.dumps({
            "kind": "request",
            "started_at": f"2026-03-01T12:00:0{second}.000000Z",
            "host": HOST,
            "url": f"{HOST}/page/{second}",
            "status": 200,
            "gap_seconds": gap,
        }))  # fmt: skip
    (archive / "runs").mkdir(parents=True, exist_ok=True)
    (archive / "runs" / f"{run_id}.jsonl").write_text("\n".join(lines) + "\n")


def test_a_gap_below_the_interval_in_force_is_named(tmp_path: Path) -> None:
    write_run(tmp_path, "r1", [None, 0.3, 0.125, 0.25], interval=0.2)
    history = request_history(str(tmp_path))
    assert history.runs == 1
    assert history.text_lines() == [
        "2026-03-01T12:00:00.000000Z\t200\t-\thttp://127.0.0.1:8650/page/0",
        "2026-03-01T12:00:01.000000Z\t200\t0.300\thttp://127.0.0.1:8650/page/1",
        "2026-03-01T12:00:02.000000Z\t200\t0.125\thttp://127.0.0.1:8650/page/2",
        "2026-03-01T12:00:03.000000Z\t200\t0.250\thttp://127.0.0.1:8650/page/3",
        "http://127.0.0.1:8650: 4 requests, smallest gap 0.125 s, Crawl-delay in force 0.2 s:"
        " below the Crawl-delay (1 of them)",
    ]


def test_gaps_at_or_over_the_interval_are_not_below_it(tmp_path: Path) -> None:
    write_run(tmp_path, "r1", [None, 0.2, 0.5], interval=0.2)
    (summary,) = request_history(str(tmp_path)).hosts.values()
    assert summary.line() == (
        "http://127.0.0.1:8650: 3 requests, smallest gap 0.200 s, Crawl-delay in force 0.2 s"
    )


def test_a_damaged_report_names_its_file_and_line(tmp_path: Path) -> None:
    write_run(tmp_path, "r1", [None], interval=1.0)
    report = tmp_path / "runs" / "r1.jsonl"
    report.write_text(report.read_text() + '{"kind": "request", "url": \n')
    with pytest.raises(StoreError, match=r"r1\.jsonl, line 4: not a run report line"):
        request_history(str(tmp_path))


@pytest.mark.parametrize(
    ("wanted", "matches"),
    [
        ("http://127.0.0.1:8650", True),
        ("HTTP://127.0.0.1:8650/", True),
        ("127.0.0.1:8650", True),
        ("127.0.0.1", True),
        ("http://127.0.0.1:8651", False),
        ("127.0.0.2", False),
    ],
)
def test_host_matches_the_origin_or_the_host_name(wanted: str, matches: bool) -> None:
    assert host_matches(HOST, wanted) is matches
