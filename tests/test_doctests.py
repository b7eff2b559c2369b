"""Run the examples in the docstrings of the installed modules (each relation's doctest)."""

import doctest
import importlib
import pkgutil

import pytest

import hxtrain.network
import hxtrain.solver
import hxtrain.units

MODULES = sorted(
    f"{package.__name__}.{info.name}"
    for package in (hxtrain.units, hxtrain.network, hxtrain.solver)
    for info in pkgutil.iter_modules(package.__path__)
) + ["hxtrain.solver"]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    failures, _ = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert failures == 0


def test_the_relations_have_examples():
    """Every public P-NTU relation carries at least one example (a doctest that runs)."""
    pntu = importlib.import_module("hxtrain.units.pntu")
    finder = doctest.DocTestFinder()
    for name in pntu.__all__:
        tests = finder.find(getattr(pntu, name), name)
        assert any(t.examples for t in tests), f"{name} has no docstring example"
