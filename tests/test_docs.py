"""Docs that must not drift from the code: the CLI reference and the README's commands."""

from __future__ import annotations

import importlib.util
import re
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def cli_reference() -> str:
    """What tools/docgen.py writes (a repository tool, so it is loaded from its file)."""
    spec = importlib.util.spec_from_file_location("docgen", ROOT / "tools" / "docgen.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    text: str = module.cli_reference()
    return text


def test_cli_reference_matches_help() -> None:
    committed = (ROOT / "docs" / "cli.md").read_text(encoding="utf-8")
    assert committed == cli_reference(), "docs/cli.md is stale: run python tools/docgen.py"


def _readme_commands() -> list[str]:
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    section = readme.split("## Two commands", 1)[1].split("\n## ", 1)[0]
    return re.findall(r"```sh\n(.+?)\n```", section)


def test_readme_gives_a_demo_command_and_a_test_command() -> None:
    demo, tests = _readme_commands()
    assert "pip install" in demo and "harvester demo" in demo
    assert "pip install" in tests and "pytest" in tests


def test_ci_runs_the_readme_test_command() -> None:
    _, tests = _readme_commands()
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    install_and_test = tests.split("&&", 1)[1].strip()  # the part after creating the venv
    assert install_and_test in ci
