"""The ``harvester versions`` and ``harvester diff`` commands (registered on the app by cli.py).

Both read the archive through ``harvester.store.archive.Archive``. ``diff`` matches rows by the
key columns the harvest recorded in the newer file's ``harvester.provenance`` footer entry, and
compares whole rows when none were recorded.
"""

from __future__ import annotations

import json
from typing import Annotated

import typer

from harvester.cli.common import (
    DEFAULT_ARCHIVE,
    ArchiveOption,
    TextFormat,
    fail,
    parse_assignments,
    time_option,
    usage,
)
from harvester.errors import HarvesterError
from harvester.formats import tsv_field
from harvester.timestamps import rfc3339

__all__ = ["diff_command", "versions_command"]


def _split_target(target: str, *, table_required: bool) -> tuple[str, str | None]:
    dataset, slash, table = target.partition("/")
    if not dataset or (slash and not table) or "/" in table:
        usage(f"{target!r} is not DATASET or DATASET/TABLE — write e.g. league-players/players")
    if table_required and not table:
        usage(f"{target!r} names no table — write DATASET/TABLE, e.g. {dataset}/players")
    return dataset, table or None


def versions_command(
    target: Annotated[
        str, typer.Argument(metavar="DATASET[/TABLE]", help="A dataset, or one of its tables.")
    ],
    archive: ArchiveOption = DEFAULT_ARCHIVE,
    output_format: Annotated[
        TextFormat, typer.Option("--format", "-f", help="text or json.")
    ] = TextFormat.text,
) -> None:
    """List the archived versions of a dataset's tables, one line per version of a partition.

    Text lines hold TABLE, PARTITION (KEY=VALUE/…, or - when the table has none), VERSION,
    ROWS, COMMITTED_AT and DATA_SHA256, separated by tabs. Versions with the same DATA_SHA256
    hold the same data.

    Example: harvester versions league-players/players --archive archive
    """
    from harvester.store.archive import Archive
    from harvester.store.layout import show_partition

    dataset, table = _split_target(target, table_required=False)
    try:
        infos = Archive(archive).versions(dataset, table)
    except HarvesterError as error:
        fail(error)
    if output_format is TextFormat.json:
        typer.echo(json.dumps([info.to_dict() for info in infos], ensure_ascii=False))
        return
    for info in infos:
        fields = (info.table, show_partition(info.partition), str(info.version), str(info.rows))
        line = (*fields, rfc3339(info.committed_at), info.data_sha256)
        typer.echo("\t".join(tsv_field(field) for field in line))


def diff_command(
    target: Annotated[str, typer.Argument(metavar="DATASET/TABLE", help="The table to diff.")],
    partition: Annotated[
        list[str] | None,
        typer.Option(
            "--partition", "-p", metavar="KEY=VALUE", help="Which partition (repeat per key)."
        ),
    ] = None,
    from_version: Annotated[
        int | None,
        typer.Option("--from", metavar="N", help="Older version (default: the one before --to)."),
    ] = None,
    to_version: Annotated[
        int | None, typer.Option("--to", metavar="M", help="Newer version (default: the latest).")
    ] = None,
    since: Annotated[
        str | None,
        typer.Option("--since", metavar="TIME", help="Without --partition: versions from TIME."),
    ] = None,
    until: Annotated[
        str | None,
        typer.Option("--until", metavar="TIME", help="Without --partition: versions before TIME."),
    ] = None,
    archive: ArchiveOption = DEFAULT_ARCHIVE,
    output_format: Annotated[
        TextFormat, typer.Option("--format", "-f", help="text or json.")
    ] = TextFormat.text,
) -> None:
    """Show the rows added, removed and changed between two versions of one partition.

    Rows are matched by the key columns the harvest recorded; with none, whole rows are
    compared, so an edited row shows as removed and added. Text output: a header line, a
    summary line, then one line per row led by a word: "added", "removed", or "changed" with each
    changed column's old → new value (values as JSON). A null partition value is written
    __HIVE_DEFAULT_PARTITION__.

    Without --partition, for a table of several partitions: one line per partition that changed
    in the latest run that wrote a version of it (from ARCHIVE/runs), or whose versions were
    committed between --since and --until, with its rows added, removed and changed.

    Example: harvester diff league-players/players --partition season=2019 --from 1 --to 3
    """
    from harvester.store.archive import Archive
    from harvester.store.contract import NULL_SEGMENT
    from harvester.store.partition_diff import diff_partition

    dataset, table = _split_target(target, table_required=True)
    assert table is not None
    if not partition and (since or until or _partitioned(archive, dataset, table)):
        _summarise(archive, dataset, table, since, until, output_format)
        return
    if since or until:
        usage("--since and --until pick partitions; with --partition use --from and --to")
    pairs = parse_assignments(partition, "--partition", "season=2019", metavar="KEY=VALUE")
    wanted = {key: None if value == NULL_SEGMENT else value for key, value in pairs.items()}
    try:
        found = diff_partition(Archive(archive), dataset, table, wanted, from_version, to_version)
    except HarvesterError as error:
        fail(error)
    if output_format is TextFormat.json:
        typer.echo(json.dumps(found.to_dict(), ensure_ascii=False, allow_nan=False))
        return
    for line in found.text_lines():
        typer.echo(line)


def _partitioned(archive: str, dataset: str, table: str) -> bool:
    """Whether the table has more than one partition (unreadable: let the diff say why)."""
    from harvester.store.archive import Archive

    try:
        return len({info.partition for info in Archive(archive).versions(dataset, table)}) > 1
    except HarvesterError:
        return False


def _summarise(
    archive: str,
    dataset: str,
    table: str,
    since: str | None,
    until: str | None,
    output_format: TextFormat,
) -> None:
    from harvester.run.changes import changed_partitions

    try:
        changes = changed_partitions(
            archive,
            dataset,
            table,
            since=time_option("--since", since),
            until=time_option("--until", until),
        )
    except HarvesterError as error:
        fail(error)
    if output_format is TextFormat.json:
        typer.echo(json.dumps([change.to_dict() for change in changes], ensure_ascii=False))
        return
    typer.echo(f"{dataset}/{table}: {len(changes)} partition(s) changed")
    for change in changes:
        typer.echo(change.line())
