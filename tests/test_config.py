"""Where the contact comes from when neither a recipe nor --contact gives one."""

from __future__ import annotations

from pathlib import Path

import pytest

from harvester.config import config_path, configured_contact
from harvester.errors import HarvesterError


@pytest.fixture(autouse=True)
def clean_environment(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    for name in ("HARVESTER_CONTACT", "HARVESTER_CONFIG"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path / "xdg"))


def test_nothing_configured(tmp_path: Path) -> None:
    assert config_path() == tmp_path / "xdg" / "harvester" / "config.toml"
    assert configured_contact() is None


def test_the_config_file(tmp_path: Path) -> None:
    path = tmp_path / "xdg" / "harvester" / "config.toml"
    path.parent.mkdir(parents=True)
    path.write_text('contact = "mailto:analyst@example.org"\n', encoding="utf-8")
    assert configured_contact() == "mailto:analyst@example.org"


def test_the_environment_wins(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "own.toml"
    path.write_text('contact = "mailto:file@example.org"\n', encoding="utf-8")
    monkeypatch.setenv("HARVESTER_CONFIG", str(path))
    assert configured_contact() == "mailto:file@example.org"
    monkeypatch.setenv("HARVESTER_CONTACT", "https://example.org/about")
    assert configured_contact() == "https://example.org/about"


def test_a_broken_config_file_names_itself(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "own.toml"
    path.write_text("contact = mailto:oops\n", encoding="utf-8")
    monkeypatch.setenv("HARVESTER_CONFIG", str(path))
    with pytest.raises(HarvesterError, match=r"own\.toml: cannot read the config file"):
        configured_contact()
