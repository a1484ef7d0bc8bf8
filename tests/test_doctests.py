"""The examples in the docstrings, run over every module of the installed package.

An example that writes files or needs TeX carries ``# doctest: +SKIP`` in its module.
"""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import derive

NAMES = ["derive"] + sorted(
    m.name for m in pkgutil.walk_packages(derive.__path__, "derive.") if not m.name.endswith("__main__")
)
FLAGS = doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE


def test_the_walk_finds_the_package_and_its_examples():
    # an empty walk (or a docstring-free build) would pass every test below
    assert {"derive.pipeline", "derive.render.printing", "derive.verify"} <= set(NAMES)
    found = sum(len(t.examples) for name in NAMES for t in doctest.DocTestFinder().find(importlib.import_module(name)))
    assert found >= 50


@pytest.mark.parametrize("name", NAMES)
def test_docstring_examples(name: str) -> None:
    module = importlib.import_module(name)
    report: list[str] = []
    runner = doctest.DocTestRunner(optionflags=FLAGS)
    for test in doctest.DocTestFinder().find(module, name):
        runner.run(test, out=report.append)
    result = runner.summarize(verbose=False)
    assert result.failed == 0, "".join(report)
