"""The compiled reader of plain tables, built where a C compiler is found.

``optional=True``: where the extension does not build (no compiler, no Python headers), the
installation still succeeds and harvester reads every table through the DOM path
(``harvester --version`` says which path is in use).
"""

from setuptools import Extension, setup

setup(
    ext_modules=[
        Extension(
            "harvester.extract._plaintable",
            ["harvester/extract/_plaintable.c"],
            optional=True,
            extra_compile_args=["-O2"],
        )
    ]
)
