"""Docstring examples are executed: every module of the installed package, with doctest."""
import doctest
import importlib
import pkgutil

import pytest

import bhchem

#: every module but ``__main__`` (importing it runs the command line)
MODULES = sorted(m.name for m in pkgutil.walk_packages(bhchem.__path__, "bhchem.")
                 if not m.name.endswith("__main__"))


def test_the_walk_finds_the_layers():
    for layer in ("declare", "core", "analysis", "present", "workflows", "cli"):
        assert any(m.startswith(f"bhchem.{layer}.") for m in MODULES), layer


@pytest.mark.parametrize("name", ["bhchem", *MODULES])
def test_docstring_examples_run(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE,
                             verbose=False, report=True)
    assert result.failed == 0, f"{result.failed} of {result.attempted} examples failed in {name}"


def test_there_are_examples_to_run():
    """A guard against a vacuous pass: the public entry points carry runnable examples."""
    finder = doctest.DocTestFinder()
    n = sum(len(t.examples) for name in ["bhchem", *MODULES]
            for t in finder.find(importlib.import_module(name)))
    assert n >= 10
