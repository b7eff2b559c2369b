"""Layering rules, checked on the source by AST (no imports executed).

units (pure physics) <- network (case model) <- solver (order, convergence, results, CLI).
Nothing imports upward; units touches no files and no graphs; runtime code never imports `ht`
or CoolProp (test-only outside references).
"""

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
LAYERS = {"units": 0, "network": 1, "solver": 2}
UNITS_MAY_NOT_USE = {"yaml", "pint", "networkx", "pandas", "pathlib", "open", "os", "io"}


def imported_modules(path: Path):
    """(module name, line) of every import; relative imports resolved within hxtrain (a
    subpackage's ``from ..x import y`` stays in its layer; one that climbs above the layer's
    folder is reported as ``hxtrain.<parent>``)."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = path.relative_to(ROOT).parts[:-1]  # e.g. ("solver", "simulation")
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                yield alias.name, node.lineno
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - node.level + 1]
                yield ("hxtrain." + ".".join(base) if base else "hxtrain.<parent>"), node.lineno
            else:
                yield node.module or "", node.lineno


def layer_of(module: str):
    parts = module.split(".")
    if parts[0] == "hxtrain" and len(parts) > 1:
        return parts[1]
    if parts[0] in LAYERS:  # a bare top-level name would clash with other packages: never allowed
        return "bare:" + parts[0]
    return None


SOURCES = sorted(p for layer in LAYERS for p in (ROOT / layer).rglob("*.py"))


@pytest.mark.parametrize("path", SOURCES, ids=lambda p: str(p.relative_to(ROOT)))
def test_no_upward_or_bare_imports(path):
    own = LAYERS[path.relative_to(ROOT).parts[0]]
    for module, line in imported_modules(path):
        target = layer_of(module)
        assert target != "<parent>", f"{path}:{line}: relative import above the layer"
        assert not (target or "").startswith("bare:"), f"{path}:{line}: bare import {module!r}; use hxtrain.{module}"
        if target in LAYERS:
            assert LAYERS[target] <= own, f"{path}:{line}: {path.parent.name} imports upward from {target}"
        assert module.split(".")[0] != "ht", f"{path}:{line}: runtime code imports the test-only reference `ht`"
        assert module.split(".")[0] != "CoolProp", f"{path}:{line}: runtime code imports the test-only reference CoolProp"


@pytest.mark.parametrize("path", sorted((ROOT / "units").rglob("*.py")), ids=lambda p: p.name)
def test_units_are_pure_physics(path):
    for module, line in imported_modules(path):
        assert module.split(".")[0] not in UNITS_MAY_NOT_USE, f"{path}:{line}: units may not use {module}"
    tree = ast.parse(path.read_text(encoding="utf-8"))
    calls = {n.func.id for n in ast.walk(tree) if isinstance(n, ast.Call) and isinstance(n.func, ast.Name)}
    assert "open" not in calls, f"{path}: units must not open files"


def test_the_check_sees_every_layer():
    """Guard against a vacuous pass: the rules above must have looked at real files."""
    assert {p.relative_to(ROOT).parts[0] for p in SOURCES} == set(LAYERS)
    assert len(SOURCES) >= 10


UNIT_KIND_EXPRESSIONS = (".kind", "['type']", '["type"]', ".type")


@pytest.mark.parametrize("path", sorted((ROOT / "solver").rglob("*.py")), ids=lambda p: str(p.relative_to(ROOT)))
def test_solver_never_compares_unit_kinds_to_names(path):
    """Units say what they are (their totals, metrics, group and parameters); the solver never
    asks ``unit.kind == "heater"`` or filters a table by ``type == "exchanger"``."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    for node in ast.walk(tree):
        if not isinstance(node, ast.Compare):
            continue
        sides = [node.left, *node.comparators]
        texts = [ast.unparse(side) for side in sides]
        literal = any(isinstance(side, ast.Constant) and isinstance(side.value, str) for side in sides) or any(
            isinstance(side, (ast.List, ast.Tuple, ast.Set)) and side.elts
            and all(isinstance(e, ast.Constant) and isinstance(e.value, str) for e in side.elts) for side in sides)
        about_kind = any(text.endswith(UNIT_KIND_EXPRESSIONS) for text in texts)
        assert not (literal and about_kind), f"{path}:{node.lineno}: compares a unit kind to a name: {ast.unparse(node)}"


def test_the_kind_check_would_catch_a_switch():
    """The rule above is not vacuous: it flags the forms it is meant to flag."""
    for source in ('if unit.kind == "heater": pass', 'x = table["type"] == "exchanger"', 'y = u.kind in ("a", "b")'):
        node = next(n for n in ast.walk(ast.parse(source)) if isinstance(n, ast.Compare))
        texts = [ast.unparse(side) for side in (node.left, *node.comparators)]
        assert any(text.endswith(UNIT_KIND_EXPRESSIONS) for text in texts)


def test_solver_reaches_units_only_through_the_protocol():
    """The solver never switches on unit type: it does not import the concrete unit classes."""
    concrete = {"Exchanger", "Heater", "Mixer", "Splitter", "Source", "Sink", "rate_exchanger"}
    for path in sorted((ROOT / "solver").rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom) and (node.module or "").startswith("hxtrain.units"):
                names = {a.name for a in node.names}
                assert not names & concrete, f"{path}: imports concrete unit models {names & concrete}"
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id == "isinstance":
                assert "units" not in ast.unparse(node), f"{path}: isinstance check on a unit type"


def test_pyproject_installs_every_subpackage():
    """Every folder with an __init__.py under the code folders is a package pyproject installs:
    a subpackage missing from the list would be absent from a (non-editable) install."""
    tomllib = pytest.importorskip("tomllib")  # Python 3.11+

    listed = set(tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"])
    found = {"hxtrain." + ".".join(p.parent.relative_to(ROOT).parts)
             for layer in LAYERS for p in (ROOT / layer).rglob("__init__.py")}
    assert found <= listed, f"pyproject.toml does not install {sorted(found - listed)}"
    assert len(found) >= 3
