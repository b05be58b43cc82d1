"""Run the docstring examples of every public name.

Public classes report `linestep` as their module (STYLE rule 7), which makes
pytest's --doctest-modules skip their docstrings; this test finds them
explicitly, methods included.
"""

from __future__ import annotations

import doctest

import pytest

import linestep

PUBLIC = [name for name in linestep.__all__ if name != "stopping"]


@pytest.mark.parametrize("name", PUBLIC)
def test_examples_in_docstrings_run(name):
    obj = getattr(linestep, name)
    finder = doctest.DocTestFinder(recurse=True)
    tests = finder.find(obj, name=f"linestep.{name}", module=False,
                        globs={"linestep": linestep})
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    for test in tests:
        runner.run(test)
    result = runner.summarize(verbose=False)
    assert result.failed == 0, f"{result.failed} docstring example(s) of {name} failed"
