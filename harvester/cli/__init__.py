"""The command line: ``harvester`` and its commands, over the library's public API.

``app`` builds the typer app; one module per command group (``extract``, ``recipes``,
``harvest``, ``store``, ``robots``, ``demo``); ``common`` holds the shared options and error
exits; ``render`` the terminal, CSV, JSON and Parquet output, which only the CLI uses.
"""

from __future__ import annotations

from harvester.cli.app import CAUTION, app, main

__all__ = ["CAUTION", "app", "main"]
