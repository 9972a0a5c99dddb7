"""The ``harvester versions`` and ``harvester diff`` commands (registered on the app by cli.py).

Both read the archive through ``harvester.store.archive.Archive``. ``diff`` matches rows by the
key columns the harvest recorded in the newer file's ``harvester.provenance`` footer entry, and
compares whole rows when none were recorded.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import Annotated

import typer

from harvester.cli_common import DEFAULT_ARCHIVE, ArchiveOption, TextFormat, fail, usage
from harvester.errors import HarvesterError
from harvester.provenance import rfc3339
from harvester.store.archive import Archive, VersionInfo
from harvester.store.compare import diff_partition, show_partition
from harvester.store.diff import VersionDiff, json_value
from harvester.store.layout import NULL_SEGMENT

__all__ = ["diff_command", "versions_command"]


def _split_target(target: str, *, table_required: bool) -> tuple[str, str | None]:
    dataset, slash, table = target.partition("/")
    if not dataset or (slash and not table) or "/" in table:
        usage(f"{target!r} is not DATASET or DATASET/TABLE — write e.g. league-players/players")
    if table_required and not table:
        usage(f"{target!r} names no table — write DATASET/TABLE, e.g. {dataset}/players")
    return dataset, table or None


def _version_record(info: VersionInfo) -> dict[str, object]:
    return {
        "dataset": info.dataset,
        "table": info.table,
        "partition": dict(info.partition),
        "version": info.version,
        "rows": info.rows,
        "committed_at": rfc3339(info.committed_at),
        "data_sha256": info.data_sha256,
        "path": info.path,
    }


def versions_command(
    target: Annotated[
        str, typer.Argument(metavar="DATASET[/TABLE]", help="A dataset, or one of its tables.")
    ],
    root: ArchiveOption = DEFAULT_ARCHIVE,
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
    dataset, table = _split_target(target, table_required=False)
    try:
        infos = Archive(root).versions(dataset, table)
    except HarvesterError as error:
        fail(error)
    if output_format is TextFormat.json:
        typer.echo(json.dumps([_version_record(info) for info in infos], ensure_ascii=False))
        return
    for info in infos:
        fields = (info.table, show_partition(info.partition), str(info.version), str(info.rows))
        typer.echo("\t".join((*fields, rfc3339(info.committed_at), info.data_sha256)))


def _parse_partition(pairs: Sequence[str]) -> dict[str, str | None]:
    wanted: dict[str, str | None] = {}
    for pair in pairs:
        key, equals, value = pair.partition("=")
        if not equals or not key.strip():
            usage(f"--partition {pair!r} is not KEY=VALUE — write e.g. --partition season=2019")
        key = key.strip()
        if key in wanted:
            usage(f"--partition names {key!r} twice — give each partition key once")
        wanted[key] = None if value == NULL_SEGMENT else value
    return wanted


def _show_value(value: object) -> str:
    return json.dumps(json_value(value), ensure_ascii=False)


def _print_diff(diff: VersionDiff) -> None:
    for row in diff.added:
        typer.echo("+ " + ", ".join(f"{name}={_show_value(v)}" for name, v in row.items()))
    for row in diff.removed:
        typer.echo("- " + ", ".join(f"{name}={_show_value(v)}" for name, v in row.items()))
    for change in diff.changed:
        key = ", ".join(f"{name}={_show_value(v)}" for name, v in change.key)
        cells = "; ".join(
            f"{cell.column} {_show_value(cell.old)} → {_show_value(cell.new)}"
            for cell in change.changes
        )
        typer.echo(f"~ {key}: {cells}")


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
    root: ArchiveOption = DEFAULT_ARCHIVE,
    output_format: Annotated[
        TextFormat, typer.Option("--format", "-f", help="text or json.")
    ] = TextFormat.text,
) -> None:
    """Show the rows added, removed and changed between two versions of one partition.

    Rows are matched by the key columns the harvest recorded; with none, whole rows are
    compared, so an edited row shows as removed and added. Text output: a header line, a
    summary line, then "+ " added rows, "- " removed rows and "~ " changed rows with each
    changed column's old → new value (values as JSON). A null partition value is written
    __HIVE_DEFAULT_PARTITION__.

    Example: harvester diff league-players/players --partition season=2019 --from 1 --to 3
    """
    dataset, table = _split_target(target, table_required=True)
    assert table is not None
    wanted = _parse_partition(partition or [])
    try:
        found = diff_partition(Archive(root), dataset, table, wanted, from_version, to_version)
    except HarvesterError as error:
        fail(error)
    older, newer, diff = found.older, found.newer, found.diff
    if output_format is TextFormat.json:
        record = {
            "dataset": dataset,
            "table": table,
            "partition": dict(newer.partition),
            "from_version": older.version,
            "to_version": newer.version,
            **diff.to_dict(),
        }
        typer.echo(json.dumps(record, ensure_ascii=False, allow_nan=False))
        return
    where = f"{dataset}/{table}"
    if newer.partition:
        where += " " + show_partition(newer.partition)
    typer.echo(f"{where}: version {older.version} → {newer.version}")
    typer.echo(diff.summary())
    _print_diff(diff)
