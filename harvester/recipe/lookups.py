"""Files beside a recipe that columns look values up in: code lists and person-key aliases.

A code file (``codes = "clubs.csv"`` on a column) is a CSV with the header ``code,name``: each
code (a club abbreviation) and its canonical name. ``aliases.csv`` beside the recipe, when it
exists, is a CSV with the header ``alias,key``: a known variant of a person's name and the key
it stands for; both sides are normalized as person keys (harvester.extract.keys), so either may
be written as a name. Every problem is one line naming the file and its line.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from harvester.errors import RecipeError
from harvester.extract.keys import person_key

__all__ = ["ALIASES_FILE", "MAX_LOOKUP_BYTES", "read_aliases", "read_codes"]

ALIASES_FILE = "aliases.csv"
MAX_LOOKUP_BYTES = 16 << 20  # a lookup file is a list of names, not a dataset (no source)


def _rows(path: Path, header: tuple[str, str], key: str) -> list[tuple[int, str, str]]:
    """The (line, first, second) rows of a two-column CSV with ``header``."""
    shown = str(path)
    try:
        with path.open("rb") as handle:
            raw = handle.read(MAX_LOOKUP_BYTES + 1)
    except OSError as exc:
        raise RecipeError(
            f"cannot read {shown}: {exc.strerror or exc}", key=key,
            hint="put the file beside the recipe, or fix the name",
        ) from None  # fmt: skip
    if len(raw) > MAX_LOOKUP_BYTES:
        raise RecipeError(f"{shown} is larger than {MAX_LOOKUP_BYTES:,} bytes", key=key)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise RecipeError(
            f"{shown}: not UTF-8 (byte {exc.start})", key=key, hint="save it as UTF-8"
        ) from None
    reader = csv.reader(io.StringIO(text))
    rows: list[tuple[int, str, str]] = []
    for number, row in enumerate(reader, start=1):
        cells = [cell.strip() for cell in row]
        if number == 1:
            if tuple(cell.lower() for cell in cells) != header:
                raise RecipeError(
                    f"{shown}, line 1: the header must be {','.join(header)},"
                    f" got {','.join(cells)}",
                    key=key,
                    hint=f"start the file with the line {','.join(header)}",
                )
            continue
        if not any(cells):
            continue
        if len(cells) != 2 or not cells[0] or not cells[1]:
            raise RecipeError(
                f"{shown}, line {number}: expected two values ({','.join(header)}), got {row!r}",
                key=key,
                hint='quote a value holding a comma: "Smith, John"',
            )
        rows.append((number, cells[0], cells[1]))
    return rows


def read_codes(path: Path, key: str) -> tuple[tuple[str, str], ...]:
    """The (code, name) pairs of a code file; a code given twice is an error."""
    seen: dict[str, int] = {}
    pairs = []
    for number, code, name in _rows(path, ("code", "name"), key):
        if code in seen:
            raise RecipeError(
                f"{path}, line {number}: code {code!r} is already on line {seen[code]}", key=key,
                hint="give each code once",
            )  # fmt: skip
        seen[code] = number
        pairs.append((code, name))
    return tuple(pairs)


def read_aliases(path: Path) -> tuple[tuple[str, str], ...]:
    """The (alias key, canonical key) pairs of an aliases file, both normalized."""
    pairs: dict[str, str] = {}
    for number, alias, canonical in _rows(path, ("alias", "key"), ALIASES_FILE):
        alias_key, canonical_key = person_key(alias), person_key(canonical)
        if alias_key is None or canonical_key is None:
            raise RecipeError(f"{path}, line {number}: a name with no letters", key=ALIASES_FILE)
        if pairs.get(alias_key, canonical_key) != canonical_key:
            raise RecipeError(
                f"{path}, line {number}: {alias!r} is already an alias of {pairs[alias_key]!r}",
                key=ALIASES_FILE, hint="give each alias one key",
            )  # fmt: skip
        pairs[alias_key] = canonical_key
    return tuple(sorted(pairs.items()))
