"""Every fetch test keeps its shared host pace in its own temporary folder, not the user's."""

from __future__ import annotations

from pathlib import Path

import pytest

from harvester.fetch.shared_pace import STATE_DIR_VARIABLE


@pytest.fixture(autouse=True)
def private_state_dir(
    tmp_path_factory: pytest.TempPathFactory, monkeypatch: pytest.MonkeyPatch
) -> Path:
    """A fresh state folder per test, named by ``$HARVESTER_STATE_DIR``."""
    folder = tmp_path_factory.mktemp("state")
    monkeypatch.setenv(STATE_DIR_VARIABLE, str(folder))
    return folder
