"""Parse a robots.txt file (RFC 9309) and decide whether an agent may fetch a URL.

Pure logic, no network: the fetcher fetches ``robots_url(page)`` and builds one of three
objects from the outcome (RFC 9309 §2.3.1): ``RobotsTxt.parse`` for a 2xx body,
``RobotsTxt.unavailable`` for a 4xx (allow all), ``RobotsTxt.unreachable`` for a 5xx or a
network error (disallow all). ``check`` then returns a ``Verdict`` naming the rule that decided.

Choices the RFC leaves open, each pinned by a test:

* ``User-agent: ExampleBot/2.0`` is outside the product-token grammar (§2.2.1); we compare only
  its leading run of ``[A-Za-z_-]`` ("examplebot"), and the same for the caller's agent. A
  user-agent value with no such run still opens a group, one that no agent matches, so the
  rules under it never leak into the group before.
* Percent-encoding (§2.2.2): both the URI and the pattern are normalised the same way: ``%XX``
  of an unreserved character (RFC 3986 §2.3) is decoded, other ``%XX`` are uppercased, non-ASCII
  (as UTF-8), control and space octets and a stray ``%`` are encoded, and every delimiter stays
  as written. So ``?baz=https://foo.bar`` is NOT turned into ``https%3A%2F%2F`` (Figure 4's query
  example): encoding every reserved character would also encode ``/`` and ``?`` and break every
  match, and decoding ``%2F`` would change what the URI means (RFC 3986 §2.2).
* A literal ``*`` or ``$`` in the URI becomes ``%2A`` / ``%24`` before matching (§2.2.3,
  Figure 6); in a pattern ``*`` is always the wildcard and ``$`` is the anchor only when last
  (elsewhere it is ``%24``).
* Longest match counts the octets of the normalised pattern (§2.2.2 says "most octets"), after
  collapsing runs of ``*`` and dropping trailing ``*`` before the end (they change nothing a
  prefix match matches); a final ``$`` counts as one octet.
* A pattern that starts with neither ``/`` nor ``*`` is kept but matches from the path's first
  octet (§2.2.2), which is always ``/``, so ``Disallow: fish`` blocks nothing.
* Only ``allow``/``disallow`` lines end a run of ``user-agent`` lines; other records
  (``sitemap``, ``crawl-delay``, anything unknown) never open, end or split a group: §2.2.4 says
  they MUST NOT interfere with the parsing of the defined records. So ``User-agent: *`` /
  ``Crawl-delay: 10`` / ``User-agent: otherbot`` / ``Disallow: /`` is ONE group, as the grammar
  without the Crawl-delay line reads, and ``*`` agents are disallowed too. (Python's
  urllib.robotparser reads two groups there; we follow the RFC, which errs on the polite side.)
* ``/robots.txt`` is allowed even when robots.txt is unreachable (§2.2.2: implicitly allowed),
  so the fetcher may retry it. ``check`` reads input without a scheme as a path, even ``//a``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from urllib.parse import urlsplit

from harvester.errors import FetchError
from harvester.fetch.limits import ROBOTS_PARSE_LIMIT
from harvester.fetch.urls import DEFAULT_PORTS

__all__ = ["ROBOTS_PARSE_LIMIT", "RobotsRule", "RobotsTxt", "Verdict", "robots_url"]


_LINE_BREAK = re.compile(r"\r\n|\r|\n")
# scheme "://" authority (RFC 3986 §3). Without a scheme the input is a path, even "//a".
_AUTHORITY = re.compile(r"[A-Za-z][A-Za-z0-9+.-]*://[^/?#]*")
# RFC 9309 §2.2: key, optional blanks, ':', optional blanks, value; '#' comments removed first.
_RECORD = re.compile(r"[ \t]*([A-Za-z][A-Za-z0-9_-]*)[ \t]*:[ \t]*(.*?)[ \t]*")
_TOKEN = re.compile(r"[A-Za-z_-]+")
_HEX = frozenset(b"0123456789abcdefABCDEF")
_UNRESERVED = frozenset(b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-._~")
# Anything outside printable ASCII, or a character normalisation may rewrite, takes the slow path.
_NEEDS_WORK = re.compile(r"[^\x21-\x7e]|[%*$]")
_DECIMAL = re.compile(r"\d+(?:\.\d*)?|\.\d+")
# Request-rate is not in RFC 9309 (common practice, no published source): "n/s" with an
# optional unit s/m/h after the second number, e.g. "1/5s" or "3/10"; anything after a blank
# is ignored (some files append a time window like "0600-0845").
_REQUEST_RATE = re.compile(
    r"(\d+(?:\.\d+)?)[ \t]*/[ \t]*(\d+(?:\.\d+)?)[ \t]*([smhSMH]?)(?:[ \t].*)?"
)
_UNIT_SECONDS = {"": 1.0, "s": 1.0, "m": 60.0, "h": 3600.0}


@dataclass(frozen=True, slots=True)
class RobotsRule:
    """One allow/disallow line: its pattern as written and its 1-based line number."""

    allow: bool
    pattern: str
    line: int

    @property
    def directive(self) -> str:
        """The rule as robots.txt writes it: ``Disallow: /private/``."""
        return f"{'Allow' if self.allow else 'Disallow'}: {self.pattern}"

    def __str__(self) -> str:
        return f"{self.directive} (line {self.line})"


@dataclass(frozen=True, slots=True)
class Verdict:
    """Whether a URL may be fetched, the rule that decided (if any) and why, in words."""

    allowed: bool
    rule: RobotsRule | None
    reason: str


@dataclass(slots=True)
class _Group:
    """A group as parsed: its agent tokens, rules, and the other records we read."""

    agents: list[str] = field(default_factory=list)
    rules: list[RobotsRule] = field(default_factory=list)
    crawl_delays: list[float] = field(default_factory=list)
    request_intervals: list[float] = field(default_factory=list)


@dataclass(frozen=True, slots=True)
class _Matcher:
    """A rule compiled for matching: the normalised pattern split at its wildcards."""

    weight: int
    pieces: tuple[str, ...]
    anchored: bool
    rule: RobotsRule

    def matches(self, path: str) -> bool:
        # Leftmost placement of each piece is optimal for '*'-only globs, so str.find in one
        # pass decides without backtracking (no regex blow-up on hostile patterns, RFC 9309 §3).
        first = self.pieces[0]
        if not path.startswith(first):
            return False
        if len(self.pieces) == 1:
            return not self.anchored or len(path) == len(first)
        pos = len(first)
        middle = self.pieces[1:-1] if self.anchored else self.pieces[1:]
        for piece in middle:
            found = path.find(piece, pos)
            if found < 0:
                return False
            pos = found + len(piece)
        if not self.anchored:
            return True
        last = self.pieces[-1]
        return len(path) - len(last) >= pos and path.endswith(last)


@dataclass(frozen=True, slots=True)
class _Selected:
    """What applies to one agent: matchers longest first, allow first on ties."""

    found_group: bool
    matchers: tuple[_Matcher, ...]
    crawl_delay: float | None
    request_interval: float | None


def _normalise(text: str, *, pattern: bool) -> str:
    """Percent-encoding normal form shared by URIs and patterns (see the module docstring)."""
    if not _NEEDS_WORK.search(text):
        return text
    data = text.encode("utf-8", "surrogatepass")
    out: list[str] = []
    i = 0
    while i < len(data):
        byte = data[i]
        if byte == 0x25 and i + 2 < len(data) and data[i + 1] in _HEX and data[i + 2] in _HEX:
            value = int(data[i + 1 : i + 3], 16)
            out.append(chr(value) if value in _UNRESERVED else f"%{value:02X}")
            i += 3
            continue
        if byte == 0x2A and pattern:
            out.append("*")
        elif byte <= 0x20 or byte >= 0x7F or byte in b"%*$":
            out.append(f"%{byte:02X}")
        else:
            out.append(chr(byte))
        i += 1
    return "".join(out)


def _compile(rule: RobotsRule) -> _Matcher:
    text = rule.pattern
    anchored = text.endswith("$")
    if anchored:
        text = text[:-1]
    text = re.sub(r"\*+", "*", _normalise(text, pattern=True))
    if not anchored:
        text = text.rstrip("*")
    return _Matcher(len(text) + anchored, tuple(text.split("*")), anchored, rule)


def _agent_token(value: str) -> str:
    """The product token a user-agent value names: '*', its leading [A-Za-z_-] run, or ''."""
    value = value.strip()
    if value == "*" or (value.startswith("*") and value[1:2].isspace()):
        return "*"
    found = _TOKEN.match(value)
    return found.group(0).lower() if found else ""


def _seconds(value: str) -> float | None:
    """A Crawl-delay value in seconds, or None when it is not a non-negative number."""
    return float(value) if _DECIMAL.fullmatch(value) else None


def _interval(value: str) -> float | None:
    """Seconds between requests from a Request-rate value like ``1/5s``, or None."""
    found = _REQUEST_RATE.fullmatch(value)
    if not found or float(found.group(1)) <= 0:
        return None
    span = float(found.group(2)) * _UNIT_SECONDS[found.group(3).lower()]
    return span / float(found.group(1))


def _limited_text(content: str | bytes, limit: int) -> str:
    """The first ``limit`` octets as text, BOM stripped, a cut-off last line dropped."""
    if isinstance(content, str):
        # Every character is at least one octet, so this slice still holds >= the limit.
        content = content[: limit + 1].encode("utf-8", "surrogatepass")
    data = content[: limit + 1]
    if len(data) > limit:
        if data[limit] in b"\r\n":
            data = data[:limit]  # the last line ends exactly at the limit
        else:
            end = max(data.rfind(b"\n", 0, limit), data.rfind(b"\r", 0, limit))
            data = data[: end + 1]  # drop the cut-off last line (nothing if none ended)
    data = data.removeprefix(b"\xef\xbb\xbf")
    # RFC 9309 §2.2.2 lets us bridge encoding mismatches: bad octets become U+FFFD.
    return data.decode("utf-8", errors="replace")


def _path_and_query(url: str) -> str:
    """The path plus query of an absolute URL or of a path(+query); the fragment never counts."""
    url = url.split("#", 1)[0]
    authority = _AUTHORITY.match(url)
    rest = url[authority.end() :] if authority else url
    return rest if rest.startswith("/") else "/" + rest


class RobotsTxt:
    """The rules of one robots.txt (or a blanket verdict when it could not be read)."""

    def __init__(
        self, groups: list[_Group], sitemaps: list[str], blanket: Verdict | None = None
    ) -> None:
        # Callers use parse/unavailable/unreachable; this constructor is not part of the API.
        self._groups = groups
        self._sitemaps = sitemaps
        self._blanket = blanket
        self._selected: dict[str, _Selected] = {}

    @classmethod
    def parse(cls, content: str | bytes, *, limit: int = ROBOTS_PARSE_LIMIT) -> RobotsTxt:
        """Parse a 2xx robots.txt body; every line that parses is used (RFC 9309 §2.3.1.5).

        Only the first ``limit`` octets are read (RFC 9309 §2.5; ``FetchLimits`` sets it).
        """
        groups: list[_Group] = []
        sitemaps: list[str] = []
        current: _Group | None = None
        seen_rule = False  # an allow/disallow since the last user-agent line
        for number, raw in enumerate(_LINE_BREAK.split(_limited_text(content, limit)), start=1):
            record = _RECORD.fullmatch(raw.split("#", 1)[0])
            if record is None:
                continue  # empty line or one that does not parse: skipped (§2.3.1.5)
            key, value = record.group(1).lower(), record.group(2)
            if key == "user-agent":
                if current is None or seen_rule:
                    current = _Group()
                    groups.append(current)
                    seen_rule = False
                current.agents.append(_agent_token(value))
            elif key in ("allow", "disallow"):
                if current is None:
                    continue  # rules before the first user-agent line are ignored (§2.2.2)
                seen_rule = True
                if value:  # an empty pattern is a no-op: "nothing disallowed" (1994 practice)
                    current.rules.append(RobotsRule(key == "allow", value, number))
            elif key == "sitemap":
                if value:
                    sitemaps.append(value)  # belongs to no group and ends none (§2.2.4)
            elif current is not None:
                # Crawl-delay and Request-rate are NOT in RFC 9309: common practice, no
                # published source. Read leniently ('_' or '-' or neither) as "other records";
                # bad or negative values are ignored.
                name = key.replace("-", "").replace("_", "")
                if name == "crawldelay" and (delay := _seconds(value)) is not None:
                    current.crawl_delays.append(delay)
                elif name == "requestrate" and (interval := _interval(value)) is not None:
                    current.request_intervals.append(interval)
        return cls(groups, sitemaps)

    @classmethod
    def unavailable(cls, status: int | None = None) -> RobotsTxt:
        """robots.txt is unavailable (4xx): everything may be fetched (RFC 9309 §2.3.1.3)."""
        where = f" (HTTP {status})" if status is not None else ""
        return cls(
            [], [], Verdict(True, None, f"robots.txt unavailable{where}: everything allowed")
        )

    @classmethod
    def unreachable(cls, detail: str) -> RobotsTxt:
        """robots.txt is unreachable (5xx, network error): nothing may be fetched (§2.3.1.4)."""
        reason = f"robots.txt unreachable ({detail}): everything disallowed"
        return cls([], [], Verdict(False, None, reason))

    def check(self, url: str, agent: str) -> Verdict:
        """Whether ``agent`` may fetch ``url`` (absolute, or a path with optional query)."""
        path = _normalise(_path_and_query(url), pattern=False)
        if path.split("?", 1)[0] == "/robots.txt":
            return Verdict(True, None, "/robots.txt is always allowed (RFC 9309 §2.2.2)")
        if self._blanket is not None:
            return self._blanket
        selected = self._select(agent)
        if not selected.found_group:
            return Verdict(True, None, f"no group for {agent!r} and no '*' group: no rules apply")
        for matcher in selected.matchers:  # longest first, allow first on ties: first hit wins
            if matcher.matches(path):
                rule = matcher.rule
                verb = "allowed" if rule.allow else "disallowed"
                return Verdict(rule.allow, rule, f"{verb} by robots.txt {rule}")
        return Verdict(True, None, "no rule matches")

    def crawl_delay(self, agent: str) -> float | None:
        """Crawl-delay in seconds for ``agent`` (largest over merged groups), or None."""
        return None if self._blanket is not None else self._select(agent).crawl_delay

    def request_interval(self, agent: str) -> float | None:
        """Seconds between requests from Request-rate for ``agent`` (largest), or None."""
        return None if self._blanket is not None else self._select(agent).request_interval

    def min_interval(self, agent: str) -> float | None:
        """The larger of crawl_delay and request_interval for ``agent``, or None if neither."""
        values = [
            v for v in (self.crawl_delay(agent), self.request_interval(agent)) if v is not None
        ]
        return max(values) if values else None

    def sitemaps(self) -> list[str]:
        """Every Sitemap URL in the file, as written and in file order."""
        return list(self._sitemaps)

    def _select(self, agent: str) -> _Selected:
        """The merged groups for ``agent`` (or the merged '*' groups), compiled once and cached."""
        token = _agent_token(agent)
        if token in ("", "*"):
            raise FetchError(
                f"robots.txt agent {agent!r} does not start with a product token",
                hint="use letters, '_' or '-' only, such as 'harvester'",
            )
        cached = self._selected.get(token)
        if cached is not None:
            return cached
        # RFC 9309 §2.2.1: every group naming the token is merged; else every '*' group.
        groups = [g for g in self._groups if token in g.agents]
        groups = groups or [g for g in self._groups if "*" in g.agents]
        matchers = sorted(
            (_compile(rule) for group in groups for rule in group.rules),
            key=lambda m: (-m.weight, not m.rule.allow),  # stable: earlier line first
        )
        delays = [d for g in groups for d in g.crawl_delays]
        intervals = [i for g in groups for i in g.request_intervals]
        selected = _Selected(
            bool(groups),
            tuple(matchers),
            max(delays) if delays else None,
            max(intervals) if intervals else None,
        )
        self._selected[token] = selected
        return selected


def robots_url(url: str) -> str:
    """The robots.txt URL for any URL: ``scheme://host[:port]/robots.txt`` (RFC 9309 §2.3)."""
    parts = urlsplit(url.strip())
    try:
        host, port = parts.hostname, parts.port
    except ValueError as error:
        raise FetchError(
            f"cannot derive robots.txt URL from {url!r}: {error}", hint="fix the URL's port"
        ) from None
    if not parts.scheme or not host:
        raise FetchError(
            f"cannot derive robots.txt URL from {url!r}: it has no scheme or host",
            hint="use an absolute URL such as https://league.example/table",
        )
    scheme = parts.scheme.lower()
    if ":" in host:
        host = f"[{host}]"  # an IPv6 literal keeps its brackets (RFC 3986 §3.2.2)
    suffix = f":{port}" if port is not None and port != DEFAULT_PORTS.get(scheme) else ""
    return f"{scheme}://{host}{suffix}/robots.txt"
