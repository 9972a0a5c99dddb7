"""Judging URLs by robots.txt: by a saved file, or by each site's own, fetched politely.

What ``harvester robots`` prints, as a library: a verdict per URL in the order given, and for
the live form the Crawl-delay in force at each site (robots.txt is a site's wish, not a
permission).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType

from harvester.fetch.identity import Identity
from harvester.fetch.robots import RobotsTxt, Verdict, robots_url
from harvester.fetch.sync import SyncFetcher
from harvester.formats import tsv_field

__all__ = ["RobotsReport", "UrlVerdict", "judge_by_file", "judge_live"]


@dataclass(frozen=True)
class UrlVerdict:
    """What robots.txt says of one URL."""

    url: str
    verdict: Verdict

    @property
    def why(self) -> str:
        """The deciding rule (``line 3: Disallow: /private/``), or the reason when none decided."""
        rule = self.verdict.rule
        if rule is None:
            return self.verdict.reason
        return f"line {rule.line}: {rule.directive}"

    def line(self, *, explain: bool = False) -> str:
        """``allowed<TAB>URL`` or ``disallowed<TAB>URL``, with the reason as a third column."""
        text = f"{'allowed' if self.verdict.allowed else 'disallowed'}\t{tsv_field(self.url)}"
        return f"{text}\t{tsv_field(self.why)}" if explain else text

    def to_dict(self) -> dict[str, object]:
        """The verdict as plain JSON values."""
        rule = self.verdict.rule
        return {
            "url": self.url,
            "allowed": self.verdict.allowed,
            "rule": None if rule is None else rule.directive,
            "line": None if rule is None else rule.line,
            "reason": self.verdict.reason,
        }


@dataclass(frozen=True)
class RobotsReport:
    """Verdicts for URLs in the order given, and the Crawl-delay of each robots.txt read live."""

    agent: str
    verdicts: tuple[UrlVerdict, ...]
    crawl_delays: Mapping[str, float | None] = field(
        default_factory=lambda: MappingProxyType({})
    )  # robots.txt URL → seconds in force (None: the file names none); a saved file's only if named

    def text_lines(self, *, explain: bool = False) -> list[str]:
        """One line per URL, then ``crawl-delay<TAB>SECONDS`` per site (naming it if several)."""
        lines = [verdict.line(explain=explain) for verdict in self.verdicts]
        for location, delay in self.crawl_delays.items():
            shown = "none" if delay is None else f"{delay:g}"
            suffix = f"\t{location}" if len(self.crawl_delays) > 1 else ""
            lines.append(f"crawl-delay\t{shown}{suffix}")
        return lines

    def to_dict(self) -> dict[str, object]:
        """The report as plain JSON values."""
        return {
            "agent": self.agent,
            "urls": [verdict.to_dict() for verdict in self.verdicts],
            "crawl_delay": dict(self.crawl_delays),
        }


def judge_by_file(
    content: bytes, urls: Sequence[str], agent: str, *, location: str = "robots.txt"
) -> RobotsReport:
    """Judge ``urls`` by one robots.txt file's content; nothing is fetched.

    The file's Crawl-delay (or Request-rate) for ``agent`` is reported under ``location`` (the
    file's name, say) when the file names one; a file without one reports none.
    """
    rules = RobotsTxt.parse(content)
    verdicts = tuple(UrlVerdict(url, rules.check(url, agent)) for url in urls)
    delay = rules.min_interval(agent)
    delays = MappingProxyType({} if delay is None else {location: delay})
    return RobotsReport(agent, verdicts, delays)


def judge_live(urls: Sequence[str], agent: str, identity: Identity) -> RobotsReport:
    """Judge ``urls`` by each site's robots.txt, fetched politely once per site as ``identity``."""
    verdicts: list[UrlVerdict] = []
    delays: dict[str, float | None] = {}
    with SyncFetcher(identity) as fetcher:
        for url in urls:
            rules = fetcher.check_robots(url)
            verdicts.append(UrlVerdict(url, rules.check(url, agent)))
            delays[robots_url(url)] = rules.min_interval(agent)
    return RobotsReport(agent, tuple(verdicts), MappingProxyType(delays))
