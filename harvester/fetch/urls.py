"""Facts about URLs that more than one part of the fetcher needs."""

from __future__ import annotations

__all__ = ["DEFAULT_PORTS"]

DEFAULT_PORTS = {"http": 80, "https": 443}  # RFC 9110 §4.2.1 and §4.2.2
