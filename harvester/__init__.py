"""harvester: a polite, cached web-table harvester with a snapshot archive."""

from __future__ import annotations

__version__ = "0.1.0.dev0"

__all__ = ["__version__"]
