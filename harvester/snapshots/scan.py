"""Deriving the index from the WARC files alone: scan one file, resolve revisits, reindex all.

``scan_warc`` walks a file gzip member by gzip member (each member one record, WARC 1.1
Annex D), lets warcio parse each record with its digests checked, and reads what the index
needs. A revisit's payload may live in another file, so ``resolve`` fills in its payload record
and SHA-256 in a second pass, from an index of everything scanned. ``reindex`` salvages what
crashed writers left (``salvage``) and rebuilds every index file; ``index_missing`` only adds
the index files that are missing.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Iterable
from dataclasses import dataclass, replace
from datetime import UTC, datetime
from pathlib import Path
from typing import Literal

from harvester.errors import StoreError
from harvester.fetch.httpdate import parse_http_date
from harvester.snapshots.entry import INDEX_DIR, WARC_DIR, IndexEntry
from harvester.snapshots.index import (
    INDEX_SUFFIX,
    SnapshotIndex,
    index_path,
    read_index_file,
    write_index_file,
)
from harvester.snapshots.members import DamagedMember, Member, iter_members
from harvester.snapshots.reader import http_status, parse_member
from harvester.snapshots.salvage import salvage
from harvester.snapshots.warc import OPEN_SUFFIX, WARC_SUFFIX

__all__ = [
    "ReindexReport",
    "RevisitKind",
    "index_missing",
    "parse_warc_date",
    "reindex",
    "resolve",
    "revisit_kind",
    "salvage",
    "scan_warc",
]

RevisitKind = Literal["identical-payload-digest", "server-not-modified"]

# WARC 1.1 §6.7.2, §6.7.3; 1.0 spells the version 1.0, and Annex B.6 prints the not-modified
# profile without "/revisit/": readers accept every spelling (REFERENCES §5.6, common practice).
_PROFILE = re.compile(
    r"https?://netpreserve\.org/warc/1\.[01]/(?:revisit/)?"
    r"(identical-payload-digest|server-not-modified)/?"
)
# WARC 1.1 §5.4: W3CDTF in UTC, seconds required here, a fraction of 1 to 9 digits.
_WARC_DATE = re.compile(r"(\d{4})-(\d\d)-(\d\d)T(\d\d):(\d\d):(\d\d)(?:\.(\d{1,9}))?Z")
_MAX_CHAIN = 16  # a revisit of a revisit …: far more than any writer makes
_RESCAN = "run `harvester snapshots reindex` to list every damaged file; restore it from a copy"


def revisit_kind(profile: str) -> RevisitKind | None:
    """Which revisit profile ``profile`` names, in any spelling; None for one not recognised."""
    found = _PROFILE.fullmatch(profile.strip())
    return found.group(1) if found else None  # type: ignore[return-value]


def parse_warc_date(text: str) -> datetime | None:
    """A WARC-Date (WARC 1.1 §5.4) as an aware UTC datetime, to the microsecond; None if bad."""
    found = _WARC_DATE.fullmatch(text.strip())
    if found is None:
        return None
    year, month, day, hour, minute, second = (int(part) for part in found.groups()[:6])
    micros = int((found.group(7) or "0")[:6].ljust(6, "0"))
    try:
        return datetime(year, month, day, hour, minute, second, micros, tzinfo=UTC)
    except ValueError:
        return None


def scan_warc(path: Path, name: str | None = None) -> list[IndexEntry]:
    """The index entries of the WARC file ``path``, in file order (``name``: the file's name).

    Raises StoreError naming the file and the offset at the first damaged member or record
    (cut off, corrupt, not record-at-a-time gzip, or failing its digests).
    """
    file_name = name if name is not None else path.name
    entries: list[IndexEntry] = []
    try:
        with open(path, "rb") as stream:
            for member in iter_members(stream):
                entry = _entry_of(member, file_name)
                if entry is not None:
                    entries.append(entry)
    except DamagedMember as exc:
        raise StoreError(f"{path}: damaged record at {exc}", hint=_RESCAN) from None
    except OSError as exc:
        raise StoreError(
            f"{path}: cannot read the WARC file ({exc.strerror or exc})",
            hint="check that the file exists and can be read",
        ) from None
    return entries


def _entry_of(member: Member, file_name: str) -> IndexEntry | None:
    record, payload = parse_member(member)
    kind = record.rec_type
    if kind not in ("response", "revisit"):
        return None  # request, warcinfo, metadata …: no entry (entry.py)
    warc = record.rec_headers
    profile = ""
    if kind == "revisit":
        profile = (warc.get_header("WARC-Profile") or "").strip()
        if revisit_kind(profile) is None:
            return None  # WARC 1.1 §6.7.1: do not interpret a profile not recognised
    http = record.http_headers
    if http is None and kind == "response":
        return None  # not an HTTP exchange (dns:, a bare resource): nothing to serve
    date = parse_warc_date(warc.get_header("WARC-Date") or "")
    if date is None:
        raise DamagedMember(member.offset, "its WARC-Date is missing or not W3CDTF UTC")
    record_id = (warc.get_header("WARC-Record-ID") or "").strip()
    if not record_id:
        raise DamagedMember(member.offset, "it has no WARC-Record-ID")
    memento = http.get_header("Memento-Datetime") if http is not None else None
    if kind == "response":
        payload_record_id, body_sha256 = record_id, hashlib.sha256(payload).hexdigest()
    else:
        payload_record_id, body_sha256 = _bracketed(warc.get_header("WARC-Refers-To")), ""
    return IndexEntry(
        # warcio's loader already strips the <> 1.0-era writers put around the URI (common
        # practice; tested in test_scan.py against a 1.0 file).
        url=(warc.get_header("WARC-Target-URI") or "").strip(),
        date=date,
        record_type=kind,
        profile=profile,
        status=http_status(http),
        payload_digest=(warc.get_header("WARC-Payload-Digest") or "").strip(),
        body_sha256=body_sha256,
        file=file_name,
        offset=member.offset,
        length=member.length,
        record_id=record_id,
        payload_record_id=payload_record_id,
        # RFC 7089 §2.1.1: Memento-Datetime marks a prior state served by a web archive.
        origin="web-archive" if memento is not None else "live",
        memento_datetime=parse_http_date(memento) if memento is not None else None,
    )


def _bracketed(value: str | None) -> str:
    """A record id as WARC 1.1 §5.2 writes it, ``<uri>``; some writers drop the brackets."""
    text = (value or "").strip()
    if text and not text.startswith("<"):
        return f"<{text}>"
    return text


def resolve(entries: Iterable[IndexEntry], index: SnapshotIndex) -> list[IndexEntry]:
    """``entries`` with each revisit's payload record and SHA-256 filled in where known.

    A revisit's ``WARC-Refers-To`` (WARC 1.1 §5.11) is followed, through revisits of revisits,
    to the response holding the payload; an identical-payload revisit without it falls back to
    the first response with the same WARC-Payload-Digest (§6.7.2). What cannot be found stays:
    the referred id (or "" when there is none) and "" as SHA-256. ``index`` must know the
    entries' own records too when they refer within their file.
    """
    return [_resolved(entry, index) if entry.record_type == "revisit" else entry
            for entry in entries]  # fmt: skip


def _resolved(entry: IndexEntry, index: SnapshotIndex) -> IndexEntry:
    refers = entry.payload_record_id
    if not refers:
        if revisit_kind(entry.profile) != "identical-payload-digest":
            return entry  # a 304 without WARC-Refers-To: the original is not known
        original = index.by_payload_digest(entry.payload_digest)
        if original is None:
            return entry
        return replace(
            entry, payload_record_id=original.record_id, body_sha256=original.body_sha256
        )
    current = refers
    for _ in range(_MAX_CHAIN):
        original = index.record(current)
        if original is None:
            return entry
        if original.record_type == "response":
            return replace(
                entry, payload_record_id=original.record_id, body_sha256=original.body_sha256
            )
        if not original.payload_record_id or original.payload_record_id == current:
            return entry
        current = original.payload_record_id
    return entry


@dataclass(frozen=True)
class ReindexReport:
    """What ``reindex`` or ``index_missing`` did; file names, not paths."""

    indexed: tuple[str, ...] = ()  # WARC files whose index file was written
    entries: int = 0  # entries written
    salvaged: tuple[str, ...] = ()  # dead .open files finished (their final names)
    removed_open: tuple[str, ...] = ()  # dead .open files without a whole record, removed
    held_open: tuple[str, ...] = ()  # .open files a live writer holds, left alone
    removed_index_files: tuple[str, ...] = ()  # index files whose WARC file is gone
    damaged: tuple[tuple[str, str], ...] = ()  # (file, why): reported, their index left as is


def reindex(snapshots_dir: Path) -> ReindexReport:
    """Salvage dead ``.open`` files, rescan every complete WARC file, rewrite the whole index.

    A damaged WARC file is reported in ``damaged`` and keeps the index file it had (its
    undamaged records stay reachable); the other files are indexed all the same. Index files
    whose WARC file is gone are removed.
    """
    warc_dir, index_dir = snapshots_dir / WARC_DIR, snapshots_dir / INDEX_DIR
    damaged: list[tuple[str, str]] = []
    salvaged, removed_open, held_open = _salvage_all(warc_dir, damaged)
    names = _complete_files(warc_dir)
    scanned = _scan_all(warc_dir, names, damaged)
    known = SnapshotIndex(entry for entries in scanned.values() for entry in entries)
    for name, _ in damaged:
        try:  # revisits may refer to records of a damaged file that its old index knows
            for entry in read_index_file(index_path(snapshots_dir, name)):
                known.add(entry)
        except StoreError:
            pass
    for name, entries in scanned.items():
        write_index_file(resolve(entries, known), index_path(snapshots_dir, name))
    removed = []
    if index_dir.is_dir():
        for path in sorted(index_dir.iterdir()):
            if path.name.startswith(".") and path.name.endswith(".inprogress"):
                path.unlink()  # a write a crash interrupted: never read, never needed
            elif (
                path.name.endswith(INDEX_SUFFIX)
                and path.name.removesuffix(INDEX_SUFFIX) not in names
            ):
                path.unlink()
                removed.append(path.name)
    return _report(scanned, (salvaged, removed_open, held_open), damaged, tuple(removed))


def index_missing(snapshots_dir: Path) -> ReindexReport:
    """Salvage dead ``.open`` files, then index the complete WARC files without an index file.

    Cheap when there is nothing to do. Every recording run calls it at start: a crash leaves an
    ``.open`` file, or (between finishing a WARC file and writing its index file) exactly
    this gap.
    """
    warc_dir = snapshots_dir / WARC_DIR
    damaged: list[tuple[str, str]] = []
    salvaged, removed_open, held_open = _salvage_all(warc_dir, damaged)
    missing = {name for name in _complete_files(warc_dir)
               if not index_path(snapshots_dir, name).exists()}  # fmt: skip
    if not missing:
        return ReindexReport(
            salvaged=salvaged, removed_open=removed_open, held_open=held_open,
            damaged=tuple(damaged),
        )  # fmt: skip
    scanned = _scan_all(warc_dir, missing, damaged)
    known = SnapshotIndex.load(snapshots_dir)
    for entries in scanned.values():
        for entry in entries:
            known.add(entry)
    for name, entries in scanned.items():
        write_index_file(resolve(entries, known), index_path(snapshots_dir, name))
    return _report(scanned, (salvaged, removed_open, held_open), damaged)


def _report(
    scanned: dict[str, list[IndexEntry]],
    salvage: tuple[tuple[str, ...], tuple[str, ...], tuple[str, ...]],
    damaged: list[tuple[str, str]],
    removed_index_files: tuple[str, ...] = (),
) -> ReindexReport:
    salvaged, removed_open, held_open = salvage
    return ReindexReport(
        indexed=tuple(scanned),
        entries=sum(len(entries) for entries in scanned.values()),
        salvaged=salvaged,
        removed_open=removed_open,
        held_open=held_open,
        removed_index_files=removed_index_files,
        damaged=tuple(damaged),
    )


def _complete_files(warc_dir: Path) -> set[str]:
    if not warc_dir.is_dir():
        return set()
    return {path.name for path in warc_dir.glob("*" + WARC_SUFFIX) if path.is_file()}


def _scan_all(
    warc_dir: Path, names: Iterable[str], damaged: list[tuple[str, str]]
) -> dict[str, list[IndexEntry]]:
    scanned: dict[str, list[IndexEntry]] = {}
    for name in sorted(names):
        try:
            scanned[name] = scan_warc(warc_dir / name)
        except StoreError as exc:
            damaged.append((name, exc.message))
    return scanned


def _salvage_all(
    warc_dir: Path, damaged: list[tuple[str, str]]
) -> tuple[tuple[str, ...], tuple[str, ...], tuple[str, ...]]:
    salvaged: list[str] = []
    removed: list[str] = []
    held: list[str] = []
    if not warc_dir.is_dir():
        return (), (), ()
    for path in sorted(warc_dir.glob("*" + WARC_SUFFIX + OPEN_SUFFIX)):
        try:
            final = salvage(path)
        except StoreError as exc:
            damaged.append((path.name, exc.message))
            continue
        if final is not None:
            salvaged.append(final.name)
        elif path.exists():
            held.append(path.name)
        else:
            removed.append(path.name)
    return tuple(salvaged), tuple(removed), tuple(held)
