"""The ``harvester join-check`` command (registered on the app by cli/app.py).

It parses the options, calls ``harvester.store.join_check.join_check``, prints the result, and
writes alias suggestions when asked; docs/joins.md says what each number means.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Annotated

import typer

from harvester.cli.common import (
    DEFAULT_ARCHIVE,
    ArchiveOption,
    TextFormat,
    fail,
    parse_assignments,
)
from harvester.errors import HarvesterError
from harvester.store.join_options import SUGGEST_THRESHOLD

__all__ = ["join_check_command"]


def join_check_command(
    left: Annotated[
        str,
        typer.Argument(metavar="DATASET/TABLE", help="The table whose keys should find a match."),
    ],
    right: Annotated[
        str,
        typer.Argument(
            metavar="DATASET/TABLE", help="The table joined to (its keys are canonical)."
        ),
    ],
    on: Annotated[
        str,
        typer.Option(
            "--on",
            metavar="COLUMN[=COLUMN]",
            help="The key column of both tables, or LEFT=RIGHT when the names differ.",
        ),
    ],
    archive: ArchiveOption = DEFAULT_ARCHIVE,
    where: Annotated[
        list[str] | None,
        typer.Option(
            "--where",
            metavar="NAME=VALUE",
            help="Keep rows whose column NAME equals VALUE as text, on each table that has it"
            " (repeat for several).",
        ),
    ] = None,
    output_format: Annotated[
        TextFormat, typer.Option("--format", "-f", help="text or json.")
    ] = TextFormat.text,
    suggest: Annotated[
        Path | None,
        typer.Option(
            "--suggest",
            metavar="FILE.csv",
            help=f"Write confident candidates (score >= {SUGGEST_THRESHOLD:g}, a unique best) as"
            " alias,key lines to a new file for a person to confirm; never overwrites.",
        ),
    ] = None,
    fail_under: Annotated[
        str | None,
        typer.Option(
            "--fail-under",
            metavar="RATE",
            help="Exit 1 when the match rate is below RATE: a fraction (0.95) or a percentage"
            " (95%).",
        ),
    ] = None,
) -> None:
    """Check how well two archived tables join on a key, and show the near misses.

    Reads the latest version of each partition of both tables and compares the key columns
    exactly, as text; null keys are left out. "matched" counts the distinct keys found on both
    sides; the match rate is matched over the left table's distinct keys. Each unmatched key is
    shown with its three closest unmatched keys of the other table, scored 0-100 by rapidfuzz's
    token_sort_ratio, best first.

    Text output: a summary line, then one line per unmatched key (left ones first, each side in
    key order): SIDE, KEY and "CANDIDATE (SCORE), ..." separated by tabs. With --suggest, the
    left key is the alias and the right key the canonical one; the count of lines written is
    printed (on stderr with --format json).

    Exit status: 0 done; 1 the match rate is below --fail-under (equal passes); 2 bad usage (a
    malformed DATASET/TABLE, --on or --where, a missing column, a bad RATE, an existing --suggest
    file); 5 archive error (no such dataset or table, a damaged file).

    Example: harvester join-check league-players/players league-contracts/contracts --on
    player_key --where season=2026 --fail-under 95%
    """
    from harvester.store.join_check import join_check
    from harvester.store.join_options import (
        parse_on,
        parse_rate,
        percent,
        refuse_existing,
        write_aliases,
    )

    pairs = parse_assignments(where, "--where", "season=2026")
    try:
        columns = parse_on(on)
        threshold = None if fail_under is None else parse_rate(fail_under)
        if suggest is not None:
            refuse_existing(suggest)  # before the check, so a long check is not wasted
        found = join_check(archive, left, right, columns, pairs)
        if output_format is TextFormat.json:
            typer.echo(json.dumps(found.to_dict(), ensure_ascii=False, allow_nan=False))
        else:
            for line in found.text_lines():
                typer.echo(line)
        if suggest is not None:
            written = write_aliases(suggest, found.suggestions())
            note = f"wrote {written} alias line(s) to {suggest}"
            typer.echo(note, err=output_format is TextFormat.json)
    except HarvesterError as error:
        fail(error)
    if threshold is not None and found.below(threshold):
        rate = found.match_rate
        shown = "n/a" if rate is None else f"{percent(rate)} %"
        counts = f"{found.matched} of {found.left.keys} left keys"
        typer.echo(
            f"error: match rate {shown} ({counts}) is below --fail-under {fail_under}", err=True
        )
        raise typer.Exit(1)
