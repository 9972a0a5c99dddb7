"""Salvaging a ``.open`` WARC file a crashed writer left: keep its whole records, finish it.

A writer appends one gzip member per record and holds a lock on its ``.open`` file
(``liveness``); when it dies mid-record, the file ends in a cut-off member. Salvage keeps
every whole record before that point, cuts the unfinished tail off and gives the file its
final name, so the records become part of the archive. It never touches a file a live writer
holds, and it refuses (leaving the file as it is) whenever cutting would drop a whole record.
"""

from __future__ import annotations

import io
import os
from pathlib import Path
from typing import BinaryIO

from harvester.errors import StoreError
from harvester.snapshots.index import sync_folder
from harvester.snapshots.liveness import hold, is_held
from harvester.snapshots.members import (
    GZIP_MAGIC,
    DamagedMember,
    iter_members,
    read_member,
    whole_record,
)
from harvester.snapshots.warc import OPEN_SUFFIX

__all__ = ["salvage"]

_MAX_SEARCHED_TAIL = 64 << 20  # a crash leaves at most one record's worth; more is not a crash


def salvage(open_path: Path) -> Path | None:
    """Finish the dead ``.open`` file ``open_path``; its final path, or None if none is left.

    What loses least: every whole record is kept, and only an unfinished last member is cut
    off (an incomplete gzip member cannot hold a whole record). A file whose only whole record
    is its warcinfo is still renamed — it says a run started and with what settings. A file
    with no whole record at all (empty, or garbage from the first byte) holds nothing to keep
    and is removed. A file a live writer holds is left alone (None). When a whole record
    follows the damaged bytes, or the damaged part is too big to be a crash's unfinished
    record, nothing is changed and StoreError says where, so no record is ever cut away.
    """
    if not open_path.name.endswith(OPEN_SUFFIX):
        raise StoreError(f"{open_path}: not a .open WARC file", hint="salvage only *.warc.gz.open")
    if is_held(open_path):
        return None
    try:
        with open(open_path, "r+b") as stream:
            try:
                hold(stream)  # holding it ourselves: no writer can take it up meanwhile
            except BlockingIOError:
                return None
            return _finish(open_path, stream)
    except FileNotFoundError:
        return None  # another salvage got there first
    except OSError as exc:
        raise StoreError(
            f"{open_path}: cannot salvage the file ({exc.strerror or exc})",
            hint="check the archive folder's permissions and free space",
        ) from None


def _finish(open_path: Path, stream: BinaryIO) -> Path | None:
    size = stream.seek(0, os.SEEK_END)
    keep, whole = _whole_prefix(stream)
    if keep < size:
        _refuse_if_whole_record_follows(open_path, stream, keep, size)
    if whole == 0:
        open_path.unlink()
        return None
    if keep < size:
        stream.truncate(keep)
    stream.flush()
    os.fsync(stream.fileno())
    final = open_path.with_name(open_path.name.removesuffix(OPEN_SUFFIX))
    if final.exists():
        raise StoreError(
            f"{open_path}: cannot salvage: {final.name} already exists",
            hint="two files with one name should not happen; move one of them aside by hand",
        )
    os.replace(open_path, final)
    sync_folder(final.parent)
    return final


def _whole_prefix(stream: BinaryIO) -> tuple[int, int]:
    """Where the leading run of whole records ends, and how many records it holds."""
    end, count = 0, 0
    try:
        for member in iter_members(stream):
            if whole_record(member.data):
                break
            end, count = member.offset + member.length, count + 1
    except DamagedMember:
        pass
    return end, count


def _refuse_if_whole_record_follows(path: Path, stream: BinaryIO, start: int, size: int) -> None:
    """StoreError if a whole record may lie in the damaged tail from ``start``."""
    if size - start > _MAX_SEARCHED_TAIL:
        raise StoreError(
            f"{path}: {size - start} damaged bytes from offset {start}: too many for a crash",
            hint="inspect the file with `warcio index` and repair it by hand",
        )
    stream.seek(start)
    tail = io.BytesIO(stream.read())
    candidate = tail.getvalue().find(GZIP_MAGIC, 1)
    while candidate >= 0:
        try:
            member = read_member(tail, candidate)
        except DamagedMember:
            member = None
        if member is not None and not whole_record(member.data):
            raise StoreError(
                f"{path}: a whole record at offset {start + candidate} follows damaged bytes "
                f"at offset {start}; salvage would cut it off",
                hint="inspect the file with `warcio index` and repair it by hand",
            )
        candidate = tail.getvalue().find(GZIP_MAGIC, candidate + 1)
