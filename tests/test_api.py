"""The public surface: everything re-exported from ``harvester`` is listed, and nothing else."""

from __future__ import annotations
import __future__

import ast
import importlib
import pkgutil
import types
from pathlib import Path

import harvester

INIT = Path(harvester.__file__)


def test_all_lists_exactly_the_public_names() -> None:
    for name in harvester.__all__:
        getattr(harvester, name)  # the public API loads on first use: load all of it
    public = {
        name
        for name, value in vars(harvester).items()
        if not name.startswith("_")
        and not isinstance(value, types.ModuleType | __future__._Feature)
    }
    assert public | {"__version__"} == set(harvester.__all__)
    assert set(harvester.__all__) <= set(dir(harvester))


def _typed_exports() -> dict[str, str]:
    """Name → module of the imports a type checker reads in ``harvester/__init__.py``."""
    found: dict[str, str] = {}
    for node in ast.parse(INIT.read_text(encoding="utf-8")).body:
        if isinstance(node, ast.If) and ast.unparse(node.test) == "typing.TYPE_CHECKING":
            for statement in node.body:
                assert isinstance(statement, ast.ImportFrom) and statement.module
                found.update({alias.name: statement.module for alias in statement.names})
    return found


def test_the_names_type_checkers_see_are_the_names_loaded() -> None:
    typed = _typed_exports()
    assert set(typed) | {"__version__"} == set(harvester.__all__)
    for name, module in typed.items():
        assert getattr(harvester, name) is getattr(importlib.import_module(module), name), name


def test_an_unknown_name_is_an_attribute_error() -> None:
    try:
        harvester.no_such_name  # type: ignore[attr-defined]  # noqa: B018
    except AttributeError as error:
        assert "no_such_name" in str(error)
    else:
        raise AssertionError("harvester.no_such_name did not raise AttributeError")


def test_every_module_declares_all_and_its_names_exist() -> None:
    for info in pkgutil.walk_packages(harvester.__path__, "harvester."):
        module = importlib.import_module(info.name)
        if info.ispkg:
            continue
        assert hasattr(module, "__all__"), f"{info.name} has no __all__"
        for name in module.__all__:
            assert hasattr(module, name), f"{info.name}.__all__ names missing {name!r}"
