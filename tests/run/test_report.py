"""The run report: one tab-separated line per table, which no value can split."""

from __future__ import annotations

from harvester.run.report import Outcome, summary


def test_an_outcome_line_has_one_field_per_part() -> None:
    outcome = Outcome("league-players", "players", "http://127.0.0.1:8650/p", {"season": 2026},
                      "new", rows=140, version=1)  # fmt: skip
    assert outcome.line().split("\t") == [
        "new",
        "league-players/players",
        "season=2026",
        "140 rows, version 1",
        "http://127.0.0.1:8650/p",
    ]


def test_a_value_holding_a_tab_or_line_break_cannot_forge_a_line() -> None:
    outcome = Outcome("d", "t", "http://127.0.0.1/p", {"league": "north\tsouth"}, "failed",
                      message="HTTP 404\nnew\td/t")  # fmt: skip
    line = outcome.line()
    assert "\n" not in line
    assert line.split("\t") == [
        "failed",
        "d/t",
        "league=north\\tsouth",
        "http://127.0.0.1/p",
        "HTTP 404\\nnew\\td/t",
    ]


def test_summary_counts_by_status_in_order_of_first_appearance() -> None:
    def outcome(status: str) -> Outcome:
        return Outcome("d", "t", "u", {}, status)  # type: ignore[arg-type]

    assert summary([outcome("new"), outcome("failed"), outcome("new")]) == "2 new, 1 failed"
    assert summary([]) == "nothing to do"
