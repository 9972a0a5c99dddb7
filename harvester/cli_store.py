"""The ``harvester versions`` and ``harvester diff`` commands (registered on the app by cli.py).

Both read the archive through ``harvester.store.archive.Archive``. ``diff`` matches rows by the
key columns the harvest recorded in the newer file's ``harvester.provenance`` footer entry, and
compares whole rows when none were recorded.
"""

from __future__ import annotations

import datetime as dt
import json
from collections.abc import Sequence
from enum import StrEnum
from typing import Annotated

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq
import typer

from harvester.cli_exits import fail, usage
from harvester.errors import HarvesterError, StoreError
from harvester.store.archive import Archive, VersionInfo
from harvester.store.diff import VersionDiff, diff_versions, json_value
from harvester.store.layout import NULL_SEGMENT, open_root

__all__ = ["DEFAULT_ARCHIVE", "StoreFormat", "diff_command", "versions_command"]

DEFAULT_ARCHIVE = "archive"  # the default output root (DESIGN §2)
_PROVENANCE = b"harvester.provenance"
_DAMAGED = "the file is damaged or not harvester's; move its version folder out of the archive"

Partition = tuple[tuple[str, str | None], ...]


class StoreFormat(StrEnum):
    """How ``versions`` and ``diff`` print their result."""

    text = "text"
    json = "json"


def _split_target(target: str, *, table_required: bool) -> tuple[str, str | None]:
    dataset, slash, table = target.partition("/")
    if not dataset or (slash and not table) or "/" in table:
        usage(f"{target!r} is not DATASET or DATASET/TABLE — write e.g. league-players/players")
    if table_required and not table:
        usage(f"{target!r} names no table — write DATASET/TABLE, e.g. {dataset}/players")
    return dataset, table or None


def _show_partition(partition: Partition) -> str:
    """``season=2019/phase=final`` (decoded values; null as Hive's marker; "-" for none)."""
    if not partition:
        return "-"
    return "/".join(f"{key}={NULL_SEGMENT if value is None else value}" for key, value in partition)


def _stamp(info: VersionInfo) -> str:
    # RFC 3339 UTC with "Z" and microseconds, as harvester.committed_at is written (STORE.md).
    return info.committed_at.astimezone(dt.UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def _version_record(info: VersionInfo) -> dict[str, object]:
    return {
        "dataset": info.dataset,
        "table": info.table,
        "partition": dict(info.partition),
        "version": info.version,
        "rows": info.rows,
        "committed_at": _stamp(info),
        "data_sha256": info.data_sha256,
        "path": info.path,
    }


def versions_command(
    target: Annotated[
        str, typer.Argument(metavar="DATASET[/TABLE]", help="A dataset, or one of its tables.")
    ],
    root: Annotated[
        str, typer.Option("--archive", metavar="ROOT", help="Archive root: a folder or a URI.")
    ] = DEFAULT_ARCHIVE,
    output_format: Annotated[
        StoreFormat, typer.Option("--format", "-f", help="text or json.")
    ] = StoreFormat.text,
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
    if output_format is StoreFormat.json:
        typer.echo(json.dumps([_version_record(info) for info in infos], ensure_ascii=False))
        return
    for info in infos:
        fields = (info.table, _show_partition(info.partition), str(info.version), str(info.rows))
        typer.echo("\t".join((*fields, _stamp(info), info.data_sha256)))


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


def _pick_partition(
    infos: list[VersionInfo], wanted: dict[str, str | None], name: str
) -> list[VersionInfo]:
    """The versions, oldest first, of the one partition that ``wanted`` matches."""
    partitions: dict[Partition, list[VersionInfo]] = {}
    for info in infos:
        partitions.setdefault(info.partition, []).append(info)
    keys = list(dict.fromkeys(key for partition in partitions for key, _ in partition))
    for key in wanted:
        if key not in keys:
            raise StoreError(
                f"{name} has no partition key {key!r} (keys: {', '.join(keys) or 'none'})",
                hint="give --partition KEY=VALUE with one of those keys",
            )
    matches = [
        partition
        for partition in partitions
        if all(
            key in dict(partition) and dict(partition)[key] == value
            for key, value in wanted.items()
        )
    ]
    if not matches:
        shown = ", ".join(_show_partition(partition) for partition in partitions)
        raise StoreError(
            f"{name} has no partition {_show_partition(tuple(wanted.items()))} "
            f"(partitions: {shown})",
            hint="name one of those with --partition KEY=VALUE",
        )
    if len(matches) > 1:
        shown = ", ".join(_show_partition(partition) for partition in matches)
        raise StoreError(
            f"{name}: {len(matches)} partitions match ({shown})",
            hint="add --partition KEY=VALUE for every partition key to name one",
        )
    return sorted(partitions[matches[0]], key=lambda info: info.version)


def _pick_versions(
    history: list[VersionInfo], old: int | None, new: int | None, name: str
) -> tuple[VersionInfo, VersionInfo]:
    """The (from, to) versions: --to defaults to the latest, --from to the one before --to."""
    by_number = {info.version: info for info in history}
    listed = ", ".join(str(number) for number in by_number)
    for asked in (old, new):
        if asked is not None and asked not in by_number:
            raise StoreError(
                f"{name} has no version {asked} (versions: {listed})",
                hint="pick --from and --to among those",
            )
    newer = history[-1] if new is None else by_number[new]
    if old is not None:
        return by_number[old], newer
    earlier = [info for info in history if info.version < newer.version]
    if not earlier:
        raise StoreError(
            f"{name} has no version before {newer.version} to compare it with (versions: {listed})",
            hint="pass --from N to choose the other version",
        )
    return earlier[-1], newer


def _file_schema(archive: Archive, info: VersionInfo) -> pa.Schema:
    filesystem, _ = open_root(archive.root)
    try:
        return pq.read_schema(info.path, filesystem=filesystem)
    except (OSError, pa.ArrowInvalid) as exc:
        raise StoreError(f"{info.path}: cannot read the footer: {exc}", hint=_DAMAGED) from exc


def _recorded_key(info: VersionInfo, schema: pa.Schema) -> tuple[str, ...]:
    """The key columns the harvest wrote in ``harvester.provenance`` (empty when none)."""
    raw = (schema.metadata or {}).get(_PROVENANCE)
    if raw is None:
        return ()
    try:
        provenance = json.loads(raw)
    except ValueError as exc:  # JSONDecodeError and UnicodeDecodeError are ValueErrors
        raise StoreError(
            f"{info.path}: harvester.provenance in the footer is not JSON ({exc})", hint=_DAMAGED
        ) from exc
    key = provenance.get("key", []) if isinstance(provenance, dict) else None
    if not isinstance(key, list) or not all(isinstance(name, str) for name in key):
        raise StoreError(
            f'{info.path}: harvester.provenance "key" is not a list of column names',
            hint=_DAMAGED,
        )
    return tuple(key)


def _read_version(archive: Archive, info: VersionInfo, schema: pa.Schema) -> pa.Table:
    """One version's rows with the file's own columns (read() adds partition columns)."""
    where = {key: value for key, value in info.partition if value is not None}
    table = archive.read(info.dataset, info.table, where=where, version=info.version)
    for key, value in info.partition:
        if value is None:  # `where` cannot ask for null, so keep the null partition's rows here
            table = table.filter(pc.is_null(table.column(key)))
    return table.select(schema.names)


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
    root: Annotated[
        str, typer.Option("--archive", metavar="ROOT", help="Archive root: a folder or a URI.")
    ] = DEFAULT_ARCHIVE,
    output_format: Annotated[
        StoreFormat, typer.Option("--format", "-f", help="text or json.")
    ] = StoreFormat.text,
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
    name = f"{dataset}/{table}"
    try:
        archive = Archive(root)
        history = _pick_partition(archive.versions(dataset, table), wanted, name)
        where = name
        if history[0].partition:
            where += " " + _show_partition(history[0].partition)
        older, newer = _pick_versions(history, from_version, to_version, where)
        old_schema, new_schema = _file_schema(archive, older), _file_schema(archive, newer)
        diff = diff_versions(
            _read_version(archive, older, old_schema),
            _read_version(archive, newer, new_schema),
            _recorded_key(newer, new_schema),
        )
    except HarvesterError as error:
        fail(error)
    if output_format is StoreFormat.json:
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
    typer.echo(f"{where}: version {older.version} → {newer.version}")
    typer.echo(diff.summary())
    _print_diff(diff)
