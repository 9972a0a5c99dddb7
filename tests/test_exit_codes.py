"""Exit statuses are defined once (the CLI's help text) and docs/cron.md lists the same ones.

Every exit status an error of the exception tree carries is among them too; each status's
behaviour is tested where it arises (tests/cli/, tests/run/).
"""

from __future__ import annotations

import re
from pathlib import Path

from harvester import errors
from harvester.cli.app import EXIT_CODES

ROOT = Path(__file__).resolve().parent.parent


def statuses_in_help() -> set[int]:
    return {int(number) for number in re.findall(r"\b(\d{1,3})\b", EXIT_CODES)}


def statuses_in_cron_doc() -> set[int]:
    text = (ROOT / "docs" / "cron.md").read_text(encoding="utf-8")
    table = text.split("## Exit status", 1)[1].split("\n## ", 1)[0]
    found: set[int] = set()
    for cell in re.findall(r"^\| ([0-9, ]+) \|", table, re.M):
        found |= {int(number) for number in cell.replace(" ", "").split(",")}
    return found


def test_the_cron_doc_lists_exactly_the_statuses_the_help_defines() -> None:
    assert statuses_in_cron_doc() == statuses_in_help() == {0, 1, 2, 3, 4, 5, 130, 143}


def test_every_error_class_exits_with_a_documented_status() -> None:
    classes = [
        value
        for value in vars(errors).values()
        if isinstance(value, type) and issubclass(value, errors.HarvesterError)
    ]
    assert len(classes) > 5
    assert {cls.exit_code for cls in classes} <= statuses_in_help()
