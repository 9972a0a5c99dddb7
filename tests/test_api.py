"""The public surface: everything re-exported from ``harvester`` is listed, and nothing else."""

from __future__ import annotations
import __future__

import importlib
import pkgutil
import types

import harvester


def test_all_lists_exactly_the_public_names() -> None:
    public = {
        name
        for name, value in vars(harvester).items()
        if not name.startswith("_")
        and not isinstance(value, types.ModuleType | __future__._Feature)
    }
    assert public | {"__version__"} == set(harvester.__all__)


def test_every_module_declares_all_and_its_names_exist() -> None:
    for info in pkgutil.walk_packages(harvester.__path__, "harvester."):
        module = importlib.import_module(info.name)
        if info.ispkg:
            continue
        assert hasattr(module, "__all__"), f"{info.name} has no __all__"
        for name in module.__all__:
            assert hasattr(module, name), f"{info.name}.__all__ names missing {name!r}"
