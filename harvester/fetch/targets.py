"""Which URLs the fetcher may ask for, and which redirects it refuses to follow.

A URL is asked for only when it parses, names a host and a port in range, and carries no user
info (``user:secret@``): credentials a site slips into a redirect would otherwise be sent on.
A redirect from a public site to a loopback, private or link-local address is refused, so a
page on the web cannot steer the harvester at the machine it runs on or its local network; a
site that is itself on loopback (the demo, the tests) may still redirect within loopback.
"""

from __future__ import annotations

import ipaddress
import re
import socket
from collections.abc import Collection
from typing import Literal
from urllib.parse import urljoin, urlsplit, urlunsplit

from harvester.errors import FetchLimitError

__all__ = [
    "AddressKind",
    "address_kind",
    "check_target",
    "redact",
    "redirect_problem",
    "redirect_target",
    "url_problem",
]

AddressKind = Literal["loopback", "link-local", "private", "public"]
_NOT_PUBLIC: frozenset[AddressKind] = frozenset({"loopback", "link-local", "private"})
# Characters no host name or address literal may hold (RFC 3986 §3.2.2), controls and blanks.
_BAD_HOST = re.compile(r"[\x00-\x20\x7f<>\"{}|\\^`/?#@]")
# Legacy IPv4 spellings (2130706433, 0x7f.1, 0177.0.0.1) that the resolver reads as addresses.
_LEGACY_IPV4 = re.compile(r"[0-9a-fA-FxX.]+")


def redact(url: str) -> str:
    """``url`` with any password in its user info replaced by ``***``, for messages."""
    parts = urlsplit(url)
    if parts.password is None:
        return url
    host = parts.netloc.rpartition("@")[2]
    return urlunsplit(parts._replace(netloc=f"{parts.username}:***@{host}"))


def url_problem(url: str) -> str | None:
    """What makes ``url`` unfit to request, as one phrase; None when it may be asked for."""
    try:
        parts = urlsplit(url)
        parts.port  # noqa: B018 - raises ValueError for a port out of range or not a number
    except ValueError as exc:
        return f"invalid URL ({exc})"
    host = parts.hostname or ""
    if not host:
        return "invalid URL (it names no host)"
    if _BAD_HOST.search(host):
        return f"invalid URL (host {host!r} holds characters no host name may hold)"
    if "@" in parts.netloc:
        return "the URL carries user info (credentials), which harvester never sends"
    return None


def address_kind(host: str) -> AddressKind:
    """Whether a host names a loopback, link-local, private or public address.

    Only literal addresses (and ``localhost``) are judged; any other name counts as public.
    Names are not resolved here on purpose: a lookup of our own would be a second answer that
    may differ from the one the connection gets a moment later (DNS rebinding), so it would
    promise a safety it cannot keep. Refusing a name's private answer needs a resolver hook in
    the transport, which this check does not pretend to be.
    """
    name = host.strip("[]").rstrip(".").lower()
    if name == "localhost" or name.endswith(".localhost"):
        return "loopback"  # RFC 6761 §6.3: localhost names resolve to loopback
    address = _literal(name.split("%", 1)[0])  # drop an IPv6 zone index
    if address is None:
        return "public"
    if isinstance(address, ipaddress.IPv6Address) and address.ipv4_mapped is not None:
        address = address.ipv4_mapped
    if address.is_loopback or address.is_unspecified:  # 0.0.0.0 connects to this machine
        return "loopback"
    if address.is_link_local:
        return "link-local"
    if address.is_private:
        return "private"
    return "public"


def _literal(name: str) -> ipaddress.IPv4Address | ipaddress.IPv6Address | None:
    try:
        return ipaddress.ip_address(name)
    except ValueError:
        pass
    if _LEGACY_IPV4.fullmatch(name) and any(c.isdigit() for c in name):
        try:  # inet_aton reads the legacy forms without asking any resolver
            return ipaddress.IPv4Address(socket.inet_aton(name))
        except OSError:
            return None
    return None


def redirect_problem(source: str, target: str) -> str | None:
    """Why a redirect from ``source`` to ``target`` must not be followed, or None."""
    problem = url_problem(target)
    if problem is not None:
        return problem
    to = address_kind(urlsplit(target).hostname or "")
    if to not in _NOT_PUBLIC:
        return None
    source_host = urlsplit(source).hostname or ""
    came_from = address_kind(source_host)
    if came_from == to:
        return None  # a loopback site redirecting within loopback, a LAN host within the LAN
    return f"it leads from a {came_from} address to a {to} address"


def check_target(url: str, schemes: Collection[str]) -> None:
    """Refuse a URL of another scheme, a malformed one, or one carrying credentials."""
    scheme = urlsplit(url).scheme.lower()
    if scheme not in schemes:
        allowed = " or ".join(f"{name}://" for name in schemes)
        raise FetchLimitError(
            f"scheme {scheme or '(none)'!r} is not fetched",
            url=redact(url),
            hint=f"use a URL starting with {allowed}",
        )
    problem = url_problem(url)
    if problem is not None:
        raise FetchLimitError(problem, url=redact(url), hint="fix the URL")


def redirect_target(url: str, current: str, location: str, schemes: Collection[str]) -> str:
    """Where a redirect of ``current`` (asked for ``url``) leads; refused when it may not be."""
    try:
        target = urljoin(current, location)
    except ValueError as exc:
        raise FetchLimitError(
            f"redirect to an invalid Location {location!r} ({exc})",
            url=url,
            hint="the site sends a broken redirect; report it to the site",
        ) from None
    scheme = urlsplit(target).scheme.lower()
    problem = (
        f"scheme {scheme!r} is not fetched"
        if scheme not in schemes
        else redirect_problem(current, target)
    )
    if problem is not None:
        raise FetchLimitError(
            f"redirect to {redact(target)} refused: {problem}",
            url=url,
            hint="harvester does not follow such redirects; report it to the site",
        )
    return target
