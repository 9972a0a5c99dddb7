"""The compiled reader of plain tables, built where a C compiler is found.

``optional=True``: where the extension does not build (no compiler, no Python headers), the
installation still succeeds and harvester reads every table through the DOM path
(``harvester --version`` says which path is in use).
"""

from pathlib import Path

from setuptools import Extension, setup

SOURCES = sorted(str(path) for path in Path("harvester/extract/_plaintable_c").glob("*.c"))

setup(
    ext_modules=[
        Extension(
            "harvester.extract._plaintable",
            SOURCES,
            depends=["harvester/extract/_plaintable_c/plaintable.h"],
            optional=True,
            extra_compile_args=["-O2", "-fvisibility=hidden"],
        )
    ]
)
