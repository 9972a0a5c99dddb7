"""A configured web archive: where its TimeMaps and TimeGates are, and how to ask for originals.

Any RFC 7089 archive is described by URL templates in which ``{url}`` stands for the page's own
URL, inserted exactly as planned (no further encoding: archives take the URI-R as the rest of
the path). ``original`` rewrites a memento URI (URI-M) into the one that answers with the bytes
the site served, unmodified (archives often inject a banner and rewrite links unless asked).
``rule`` and ``within`` say which capture to prefer (``capture_choice``).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import timedelta
from functools import cached_property
from urllib.parse import urljoin, urlsplit

from harvester.fetch.capture_choice import ChoiceRule

__all__ = ["URL_PLACEHOLDER", "OriginalRewrite", "WebArchive", "rewriting_signs"]

URL_PLACEHOLDER = "{url}"


@dataclass(frozen=True)
class OriginalRewrite:
    """A rewrite of a memento URI: Python ``re`` ``pattern``, ``replace`` with ``\\1`` groups."""

    pattern: str
    replace: str

    @cached_property
    def compiled(self) -> re.Pattern[str]:
        """The compiled pattern."""
        return re.compile(self.pattern)

    def apply(self, memento_uri: str) -> str | None:
        """The URI asking for the original bytes; None when the pattern does not match.

        Only the first match is replaced: a URI-M ends with the page's own URL, which may by
        chance hold the same pattern again.
        """
        rewritten, count = self.compiled.subn(self.replace, memento_uri, count=1)
        return rewritten if count else None


@dataclass(frozen=True)
class WebArchive:
    """One web archive, by URL templates: at least one of ``timemap`` and ``timegate``."""

    timemap: str | None = None
    timegate: str | None = None
    original: OriginalRewrite | None = None
    rule: ChoiceRule = "closest"
    within: timedelta | None = None

    def timemap_url(self, url: str) -> str | None:
        """The TimeMap URI (URI-T) of the page ``url``, if the archive has a TimeMap template."""
        return self.timemap.replace(URL_PLACEHOLDER, url) if self.timemap else None

    def timegate_url(self, url: str) -> str | None:
        """The TimeGate URI (URI-G) of the page ``url``, if the archive has a TimeGate template."""
        return self.timegate.replace(URL_PLACEHOLDER, url) if self.timegate else None

    @property
    def hosts(self) -> frozenset[str]:
        """The archive's origins (scheme://host:port) its templates name, lower-cased."""
        found = set()
        for template in (self.timemap, self.timegate):
            if template:
                found.add(_origin(template.replace(URL_PLACEHOLDER, "")))
        return frozenset(found)


def _origin(url: str) -> str:
    parts = urlsplit(url)
    return f"{parts.scheme}://{parts.netloc}".lower()


# An attribute holding a URL whose path embeds another absolute URL: the mark of a link an
# archive rewrote to replay through itself (common practice, no published source).
_LINK_ATTRIBUTE = re.compile(
    rb"""\b(?:href|src|action)\s*=\s*(?:"([^"]*)"|'([^']*)'|([^\s>"']+))""", re.IGNORECASE
)
_EMBEDDED_URL = re.compile(r"/(?:https?:/{1,2}|https?%3A%2F%2F)", re.IGNORECASE)
_MAX_SCANNED = 8 << 20  # bytes of a page looked at: rewriting shows from the first links


def rewriting_signs(body: bytes, memento_url: str, archive_hosts: frozenset[str]) -> int:
    """How many links of a memento's body point back into the archive that served it.

    A link counts when it resolves (against ``memento_url``) onto one of ``archive_hosts`` or
    the memento's own host and its path embeds another absolute URL — how archives rewrite the
    links of a page they replay. Zero for the original bytes of a page that never linked there.
    """
    hosts = archive_hosts | {_origin(memento_url)}
    count = 0
    for match in _LINK_ATTRIBUTE.finditer(body[:_MAX_SCANNED]):
        raw = next(group for group in match.groups() if group is not None)
        value = raw.decode("latin-1").strip()
        try:
            target = urljoin(memento_url, value)
        except ValueError:
            continue
        if _origin(target) in hosts and _EMBEDDED_URL.search(urlsplit(target).path):
            count += 1
    return count
