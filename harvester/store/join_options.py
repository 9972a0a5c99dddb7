"""What a join check is asked and what it writes: tables, key columns, rates, alias files.

``harvester.store.join_check`` does the check itself (with pyarrow and rapidfuzz); this module
needs neither, so the command line can name the suggestion threshold in its help, and parse
its options, without importing them.
"""

from __future__ import annotations

import csv
import re
from collections.abc import Iterable
from fractions import Fraction
from pathlib import Path

from harvester.errors import JoinInputError

__all__ = [
    "SUGGEST_THRESHOLD",
    "parse_on",
    "parse_rate",
    "parse_table",
    "percent",
    "refuse_existing",
    "write_aliases",
]

SUGGEST_THRESHOLD = 90.0
"""Lowest score of a suggested alias. The Indel ratio is 100 · (1 − edits / total length): one
letter dropped or added reaches it from 10 characters in both keys together, one letter changed
(two edits) from 20."""

_RATE = re.compile(r"(?P<number>[0-9]+(?:\.[0-9]*)?|\.[0-9]+)\s*(?P<percent>%?)")


def percent(rate: Fraction) -> str:
    """A rate as a percentage with one decimal (97.7)."""
    return f"{float(rate * 100):.1f}"


def parse_table(text: str) -> tuple[str, str]:
    """``DATASET/TABLE`` → (dataset, table)."""
    dataset, slash, table = text.partition("/")
    if not dataset or not slash or not table or "/" in table:
        raise JoinInputError(
            f"{text!r} is not DATASET/TABLE", hint="write e.g. league-players/players"
        )
    return dataset, table


def parse_on(text: str) -> tuple[str, str]:
    """``COLUMN`` (both sides) or ``LEFT=RIGHT`` → (left column, right column)."""
    left, equals, right = (part.strip() for part in text.partition("="))
    if not equals:
        right = left
    if not left or not right or "=" in right:
        raise JoinInputError(
            f"--on {text!r} is not COLUMN or LEFT=RIGHT",
            hint="write e.g. --on player_key or --on player_key=name_key",
        )
    return left, right


def parse_rate(text: str) -> Fraction:
    """A rate as a fraction 0..1 (``0.95``) or a percentage 0..100 (``95%``), exactly."""
    found = _RATE.fullmatch(text.strip())
    rate = None
    if found:
        number = Fraction(found["number"])  # decimal text is read exactly: 0.95 is 19/20
        rate = number / 100 if found["percent"] else number
    if rate is None or rate > 1:
        raise JoinInputError(
            f"rate {text!r} is not a fraction from 0 to 1 or a percentage from 0% to 100%",
            hint="write e.g. 0.95 or 95%",
        )
    return rate


def refuse_existing(path: Path) -> None:
    """Raise when ``path`` exists: alias files are for a person to confirm, never overwritten."""
    if path.exists():
        raise JoinInputError(
            f"{path}: the file already exists; alias suggestions never overwrite a file",
            hint="confirm or move the old file, or name a new one",
        )


def write_aliases(path: Path, pairs: Iterable[tuple[str, str]]) -> int:
    """Write ``alias,key`` CSV lines (RFC 4180) to a new file; return how many lines were written.

    The header is ``alias,key``: each line maps a variant (a left key) to the canonical key
    (the right key it probably is).
    """
    refuse_existing(path)
    written = 0
    try:
        # Mode "x" creates or fails, so a file made since the check above is not overwritten.
        with path.open("x", encoding="utf-8", newline="") as out:
            writer = csv.writer(out, lineterminator="\n")
            writer.writerow(("alias", "key"))
            for alias, key in pairs:
                writer.writerow((alias, key))
                written += 1
    except FileExistsError:
        refuse_existing(path)
        raise
    except OSError as exc:
        raise JoinInputError(
            f"{path}: cannot write the alias file ({exc.strerror})",
            hint="name a file in a folder you can write to",
        ) from exc
    return written
