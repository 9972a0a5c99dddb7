"""``harvester snapshots``: the captures kept in the snapshot archive, one record, a rebuild.

``snapshots`` lists captures from the index (never the WARC files); ``snapshots show`` prints one
record's headers and can write its payload to a file; ``snapshots reindex`` rebuilds the index
from the WARC files alone, salvaging what a crash left.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Annotated

import typer

from harvester.cli.common import DEFAULT_ARCHIVE, TextFormat, fail, time_option, usage
from harvester.errors import HarvesterError, StoreError
from harvester.formats import tsv_field

__all__ = ["snapshots_app"]

snapshots_app = typer.Typer(
    invoke_without_command=True,
    no_args_is_help=False,
    add_completion=False,
    rich_markup_mode=None,
)

SnapshotsArchive = Annotated[
    str | None,
    typer.Option("--archive", metavar="ROOT", help="Archive root (a local folder)."),
]
FormatOption = Annotated[TextFormat, typer.Option("--format", "-f", help="text or json.")]


def _snapshots_dir(ctx: typer.Context, archive: str | None) -> Path:
    """ARCHIVE/snapshots, from this command's --archive, the group's, or the default."""
    from harvester.run.runs import local_folder
    from harvester.snapshots.entry import SNAPSHOTS_DIR

    root = archive or (ctx.obj or {}).get("archive") or DEFAULT_ARCHIVE
    try:
        folder = local_folder(root, SNAPSHOTS_DIR)
    except HarvesterError as error:
        fail(error)
    if folder is None:
        fail(StoreError(f"{root}: an archive on an object store keeps no snapshot archive"))
    return Path(folder)


@snapshots_app.callback()
def snapshots_command(
    ctx: typer.Context,
    url: Annotated[
        str | None,
        typer.Option("--url", metavar="TEXT", help="Only captures whose URL contains TEXT."),
    ] = None,
    since: Annotated[
        str | None,
        typer.Option("--since", metavar="TIME", help="Only captures at or after TIME (UTC)."),
    ] = None,
    until: Annotated[
        str | None,
        typer.Option("--until", metavar="TIME", help="Only captures before TIME (UTC)."),
    ] = None,
    archive: SnapshotsArchive = None,
    output_format: FormatOption = TextFormat.text,
) -> None:
    """List the captures kept in the snapshot archive (ARCHIVE/snapshots), oldest first.

    Text lines hold DATE, STATUS, TYPE (response or revisit), URL and RECORD_ID, separated by
    tabs; --format json prints a list of objects with the index's columns. Read from the index,
    never the WARC files. TIME is RFC 3339 or a date (midnight UTC).

    Example: harvester snapshots --url /seasons/2026/ --since 2026-12-01 --archive archive
    """
    ctx.obj = {"archive": archive}
    if ctx.invoked_subcommand is not None:
        return
    from harvester.snapshots.index import SnapshotIndex

    folder = _snapshots_dir(ctx, archive)
    try:
        entries = SnapshotIndex.load(folder).select(
            url_contains=url,
            since=time_option("--since", since),
            until=time_option("--until", until),
        )
    except HarvesterError as error:
        fail(error)
    if output_format is TextFormat.json:
        typer.echo(json.dumps([entry.to_dict() for entry in entries], indent=2))
        return
    for entry in entries:
        values = (entry.to_dict()["date"], entry.status, entry.record_type, entry.url)
        typer.echo("\t".join(tsv_field(str(value)) for value in (*values, entry.record_id)))


@snapshots_app.command("show")
def show_command(
    ctx: typer.Context,
    record_id: Annotated[
        str, typer.Argument(metavar="RECORD-ID", help="A WARC-Record-ID, e.g. from a row.")
    ],
    payload: Annotated[
        Path | None,
        typer.Option(
            "--payload",
            metavar="FILE",
            help="Write the payload (the page's body; a revisit's original's) to FILE, - for"
            " standard output (the headers are then not printed).",
        ),
    ] = None,
    archive: SnapshotsArchive = None,
    output_format: FormatOption = TextFormat.text,
) -> None:
    """Print one record's WARC and HTTP headers; with --payload, write its payload.

    RECORD-ID is the value of a row's _warc_record_id column (or a listing's), with its <…>.

    Example: harvester snapshots show '<urn:uuid:…>' --payload page.html --archive archive
    """
    from harvester.snapshots.stored_source import StoredSource

    folder = _snapshots_dir(ctx, archive)
    try:
        entry, content, body = StoredSource.from_archive(folder).stored_record(record_id)
    except HarvesterError as error:
        fail(error)
    if payload is not None and str(payload) == "-":
        sys.stdout.buffer.write(body)
        return
    if payload is not None:
        try:
            payload.write_bytes(body)
        except OSError as exc:
            usage(f"--payload {payload}: cannot write the file ({exc.strerror}) — check the path")
    if output_format is TextFormat.json:
        shown = {
            "entry": entry.to_dict(),
            "warc_headers": [list(pair) for pair in content.warc_headers],
            "http_status": content.status or None,
            "http_headers": [list(pair) for pair in content.http_headers],
            "payload_bytes": len(body),
        }
        typer.echo(json.dumps(shown, indent=2))
        return
    lines = ["WARC/1.1", *(f"{k}: {v}" for k, v in content.warc_headers), ""]
    if content.http_headers:
        lines += [f"HTTP status {content.status}", *(f"{k}: {v}" for k, v in content.http_headers)]
    lines.append(f"payload: {len(body):,} bytes" + (f", written to {payload}" if payload else ""))
    typer.echo("\n".join(lines))


@snapshots_app.command("reindex")
def reindex_command(ctx: typer.Context, archive: SnapshotsArchive = None) -> None:
    """Rebuild the snapshot index from the WARC files alone, salvaging crashed files.

    A .open file no live harvest holds is cut at its last whole record and completed; every
    complete WARC file is scanned and its index file rewritten; index files without a WARC file
    are removed. Exit status 5 when a file is damaged (listed; the others are indexed).

    Example: harvester snapshots reindex --archive archive
    """
    from harvester.snapshots.scan import reindex

    folder = _snapshots_dir(ctx, archive)
    try:
        done = reindex(folder)
    except HarvesterError as error:
        fail(error)
    typer.echo(
        f"indexed {len(done.indexed)} WARC files ({done.entries} records); salvaged"
        f" {len(done.salvaged)}, removed {len(done.removed_open)} empty .open files, left"
        f" {len(done.held_open)} still being written; removed {len(done.removed_index_files)}"
        " index files of missing WARC files"
    )
    for name, why in done.damaged:
        typer.echo(f"damaged\t{name}\t{tsv_field(why)}", err=True)
    if done.damaged:
        raise typer.Exit(5)
