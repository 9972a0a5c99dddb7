"""Imports point downstream only: a check of the package's own source, read as syntax (AST).

The stages of the flow (DEVELOPERS.md): recipe → fetch → snapshots → extract → store → run → cli,
with demo beside the run; snapshots knows captures (fetch) and nothing downstream. fetch,
extract and store never import each other, the recipe, the run or the CLI; only the CLI imports
the CLI. The shared top-level modules import no stage at all.
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "harvester"
SHARED = {"_version", "errors", "config", "timestamps", "formats"}

# Which parts of harvester each part may import (besides itself). Anything else is a failure.
ALLOWED: dict[str, set[str]] = {
    "_version": set(),
    "errors": set(),
    "timestamps": set(),
    "formats": {"timestamps"},
    "config": {"errors"},
    "extract": SHARED,
    "fetch": SHARED,
    "store": SHARED,
    "snapshots": SHARED | {"fetch"},
    "recipe": SHARED | {"extract", "fetch", "store"},
    "run": SHARED | {"recipe", "fetch", "snapshots", "extract", "store"},
    "demo": SHARED | {"recipe", "run", "store"},
    "cli": SHARED | {"recipe", "fetch", "snapshots", "extract", "store", "run", "demo"},
}


def _part(path: Path) -> str:
    """The part of the package a source file belongs to: its folder, or its own top module."""
    relative = path.relative_to(PACKAGE).with_suffix("").parts
    return relative[0]


def _imported_parts(path: Path) -> set[str]:
    """The parts of harvester a module imports, read from its syntax tree (lazy imports too)."""
    found: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        names: list[str] = []
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names = [node.module]
        elif isinstance(node, ast.Import):
            names = [alias.name for alias in node.names]
        for name in names:
            pieces = name.split(".")
            if pieces[0] == "harvester":
                found.add(pieces[1] if len(pieces) > 1 else "harvester")
    return found


def test_no_module_imports_against_the_flow() -> None:
    wrong = []
    for path in sorted(PACKAGE.rglob("*.py")):
        if path == PACKAGE / "__init__.py":
            continue  # the public API re-exports every stage
        part = _part(path)
        assert part in ALLOWED, f"{path}: part {part!r} is missing from ALLOWED; add its edges"
        for target in _imported_parts(path) - {part}:
            if target not in ALLOWED[part]:
                wrong.append(f"{path.relative_to(PACKAGE.parent)} imports harvester.{target}")
    assert wrong == []


def test_relative_imports_are_not_used() -> None:
    # The direction check reads absolute names; a relative import would slip past it.
    for path in sorted(PACKAGE.rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        relative = [n for n in ast.walk(tree) if isinstance(n, ast.ImportFrom) and n.level > 0]
        assert not relative, f"{path}: use absolute imports"


def test_the_check_catches_an_import_against_the_flow(tmp_path: Path) -> None:
    # The checker itself can fail: a store module importing the run is found.
    module = tmp_path / "bad.py"
    module.write_text("from harvester.run.harvest import harvest\nimport harvester.cli\n")
    assert _imported_parts(module) == {"run", "cli"}
    assert not {"run", "cli"} <= ALLOWED["store"]


def test_at_most_six_modules_at_the_top() -> None:
    top = sorted(path.name for path in PACKAGE.glob("*.py"))
    assert len(top) <= 6, top
