"""Run the examples in the docstrings of the installed modules (each relation's doctest)."""

import doctest
import importlib
import pkgutil
from pathlib import Path

import pytest

import hxtrain.network
import hxtrain.solver
import hxtrain.units

MODULES = sorted(
    info.name
    for package in (hxtrain.units, hxtrain.network, hxtrain.solver)
    for info in pkgutil.walk_packages(package.__path__, prefix=package.__name__ + ".")
) + ["hxtrain.solver"]
SOURCE_FILES = [p for layer in ("units", "network", "solver")
                for p in (Path(__file__).resolve().parents[1] / layer).rglob("*.py") if p.name != "__init__.py"]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    failures, _ = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert failures == 0


def test_the_collector_sees_every_module():
    """Subpackages included: as many modules collected as there are source files."""
    assert len(MODULES) - 1 >= len(SOURCE_FILES) >= 30


def test_the_relations_have_examples():
    """Every public P-NTU relation carries at least one example (a doctest that runs)."""
    pntu = importlib.import_module("hxtrain.units.pntu")
    finder = doctest.DocTestFinder()
    for name in pntu.__all__:
        tests = finder.find(getattr(pntu, name), name)
        assert any(t.examples for t in tests), f"{name} has no docstring example"
