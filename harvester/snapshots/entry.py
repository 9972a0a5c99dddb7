"""One line of the snapshot index: where a response or revisit record is, and what it holds.

The snapshot archive lives under ``ARCHIVE/snapshots/``: WARC files in ``warc/`` (the truth) and
the index in ``index/`` (derived from them, rebuilt by ``harvester snapshots reindex``). Every
response and revisit record has one entry; request and warcinfo records have none.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from datetime import datetime
from typing import Literal

from harvester.timestamps import rfc3339

__all__ = [
    "INDEX_DIR",
    "NOT_MODIFIED_PROFILE",
    "SAME_PAYLOAD_PROFILE",
    "SNAPSHOTS_DIR",
    "WARC_DIR",
    "IndexEntry",
    "RecordType",
]

SNAPSHOTS_DIR = "snapshots"  # under the archive root
WARC_DIR = "warc"  # under SNAPSHOTS_DIR: the WARC files
INDEX_DIR = "index"  # under SNAPSHOTS_DIR: the index's Parquet files

# WARC 1.1 §6.7.2 and §6.7.3: the two revisit profiles harvester writes.
SAME_PAYLOAD_PROFILE = "http://netpreserve.org/warc/1.1/revisit/identical-payload-digest"
NOT_MODIFIED_PROFILE = "http://netpreserve.org/warc/1.1/revisit/server-not-modified"

RecordType = Literal["response", "revisit"]


@dataclass(frozen=True)
class IndexEntry:
    """A response or revisit record of the snapshot archive, as the index holds it.

    ``payload_record_id`` is the record holding the payload: the record itself for a response,
    the original (``WARC-Refers-To``) for a revisit, "" for a 304 revisit whose original is not
    known. ``body_sha256`` is the hex SHA-256 of that payload ("" when it is not known), the
    value rows carry as ``_body_sha256``. ``origin`` is "live", or "web-archive" for a memento
    (its answer carries ``Memento-Datetime``, RFC 7089 §2.1.1).
    """

    url: str  # WARC-Target-URI: the URL asked for in this exchange (a redirect is its own entry)
    date: datetime  # WARC-Date: when the request was sent (aware, UTC)
    record_type: RecordType
    profile: str  # "" for a response; the revisit profile URI
    status: int  # the HTTP status of this exchange (304 for a revalidation)
    payload_digest: str  # WARC-Payload-Digest as written ("sha1:BASE32"); "" when absent
    body_sha256: str
    file: str  # the WARC file's name, in snapshots/warc/
    offset: int  # where the record's gzip member starts in the file
    length: int  # the member's length in bytes
    record_id: str  # WARC-Record-ID, with its angle brackets
    payload_record_id: str
    origin: str
    memento_datetime: datetime | None = None

    def to_dict(self) -> dict[str, object]:
        """The entry as JSON-ready values: the index's column names, times in RFC 3339 UTC."""
        values = asdict(self)
        values["date"] = rfc3339(self.date)
        if self.memento_datetime is not None:
            values["memento_datetime"] = rfc3339(self.memento_datetime)
        return values
