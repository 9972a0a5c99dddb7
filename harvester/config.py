"""The user's own settings: for now, the contact that goes into every request.

Looked up in order: the ``HARVESTER_CONTACT`` environment variable, then ``contact = "..."`` in
the config file — ``$HARVESTER_CONFIG`` if set, else ``$XDG_CONFIG_HOME/harvester/config.toml``
(``~/.config/harvester/config.toml`` when XDG_CONFIG_HOME is unset). A recipe's own ``contact``
or a ``--contact`` option wins over both.
"""

from __future__ import annotations

import os
import tomllib
from pathlib import Path

from harvester.errors import HarvesterError

__all__ = ["config_path", "configured_contact"]


def config_path() -> Path:
    """Where the user config file is read from."""
    explicit = os.environ.get("HARVESTER_CONFIG")
    if explicit:
        return Path(explicit).expanduser()
    base = os.environ.get("XDG_CONFIG_HOME") or str(Path.home() / ".config")
    return Path(base) / "harvester" / "config.toml"


def configured_contact() -> str | None:
    """The contact from the environment or the config file, or None if neither gives one."""
    from_env = os.environ.get("HARVESTER_CONTACT", "").strip()
    if from_env:
        return from_env
    path = config_path()
    if not path.is_file():
        return None
    try:
        settings = tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise HarvesterError(
            f"{path}: cannot read the config file ({exc})",
            hint='fix it; it holds lines like contact = "mailto:you@example.org"',
        ) from exc
    contact = settings.get("contact")
    if contact is not None and not isinstance(contact, str):
        raise HarvesterError(
            f"{path}: contact must be text in quotes",
            hint='write contact = "mailto:you@example.org"',
        )
    return contact or None
