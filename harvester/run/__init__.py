"""The run: a recipe's plan captured, extracted and stored, with row provenance and a report.

``harvest`` orchestrates (``reparse`` is a harvest from the snapshot archive); ``provenance``
fills the provenance columns of each row; ``report`` keeps what happened to each table.
"""

from __future__ import annotations

from harvester.run.captures import find_captures
from harvester.run.harvest import harvest, live_source
from harvester.run.pages import page_request
from harvester.run.reparse import reparse
from harvester.run.report import Outcome, RunReport, summary

__all__ = [
    "Outcome",
    "RunReport",
    "find_captures",
    "harvest",
    "live_source",
    "page_request",
    "reparse",
    "summary",
]
