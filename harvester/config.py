"""The user's own settings: the contact that goes into every request, and a default archive.

The config file is ``$HARVESTER_CONFIG`` if set, else ``$XDG_CONFIG_HOME/harvester/config.toml``
(``~/.config/harvester/config.toml`` when XDG_CONFIG_HOME is unset). The contact is looked up in
order: the ``HARVESTER_CONTACT`` environment variable, then ``contact = "..."`` in the file; a
recipe's own ``contact`` or a ``--contact`` option wins over both. A ``[captures]`` table in the
file is the web archive of every recipe that names none (``config_table``; the recipe loader
checks its keys).
"""

from __future__ import annotations

import os
import tomllib
from pathlib import Path

from harvester.errors import HarvesterError

__all__ = ["config_path", "config_table", "configured_contact"]


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
    contact = _settings().get("contact")
    if contact is not None and not isinstance(contact, str):
        raise HarvesterError(
            f"{config_path()}: contact must be text in quotes",
            hint='write contact = "mailto:you@example.org"',
        )
    return contact or None


def config_table(name: str) -> dict[str, object] | None:
    """The config file's table ``[name]``, unchecked, or None when the file has none."""
    table = _settings().get(name)
    if table is None:
        return None
    if not isinstance(table, dict):
        raise HarvesterError(
            f"{config_path()}: {name} must be a table",
            hint=f"write [{name}] on a line of its own, with its keys below it",
        )
    return table


def _settings() -> dict[str, object]:
    """The config file's settings; nothing when there is no file."""
    path = config_path()
    if not path.is_file():
        return {}
    try:
        return tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise HarvesterError(
            f"{path}: cannot read the config file ({exc})",
            hint='fix it; it holds lines like contact = "mailto:you@example.org"',
        ) from exc
